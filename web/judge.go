package web

import (
	"bytes"
	"errors"
	"fmt"
	"html/template"
	"net/http"
	"slices"
	"strconv"
	"strings"
	"sync"

	"github.com/microcosm-cc/bluemonday"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/store"
)

// bodyPolicy keeps the readable structure of an HTML document body and drops everything
// that could run or load: scripts, event attributes, styles, frames, forms.
var bodyPolicy = func() *bluemonday.Policy {
	p := bluemonday.UGCPolicy()
	p.RequireNoReferrerOnLinks(true)
	p.AddTargetBlankToFullyQualifiedLinks(true)
	return p
}()

// documentBody renders a document's body safely: HTML through the sanitiser, text escaped
// with its paragraphs kept.
func documentBody(d store.Document) template.HTML {
	if d.BodyFormat == "html" {
		return template.HTML(bodyPolicy.Sanitize(d.Body))
	}
	var b strings.Builder
	for _, para := range strings.Split(strings.ReplaceAll(d.Body, "\r\n", "\n"), "\n\n") {
		if strings.TrimSpace(para) == "" {
			continue
		}
		b.WriteString("<p>")
		b.WriteString(strings.ReplaceAll(template.HTMLEscapeString(para), "\n", "<br>"))
		b.WriteString("</p>")
	}
	return template.HTML(b.String())
}

// reasonOption is one "cannot judge" reason as offered on the judging screen.
type reasonOption struct {
	Value, Label, Key string
}

// cannotJudgeOptions labels store.CannotJudgeReasons; the key picks the reason while the
// reasons are open.
var cannotJudgeOptions = func() []reasonOption {
	labels := map[string]reasonOption{
		"broken":     {Label: "Page broken or empty", Key: "b"},
		"language":   {Label: "Wrong language", Key: "l"},
		"disturbing": {Label: "Disturbing or unsafe content", Key: "d"},
		"other":      {Label: "Other reason", Key: "o"},
	}
	var out []reasonOption
	for _, r := range store.CannotJudgeReasons {
		o := labels[r]
		if o.Label == "" {
			o.Label = r
		}
		o.Value = r
		out = append(out, o)
	}
	return out
}()

func reasonLabel(r string) string {
	for _, o := range cannotJudgeOptions {
		if o.Value == r {
			return o.Label
		}
	}
	return r
}

type judgeData struct {
	Pair       *store.PairView
	Body       template.HTML
	Scale      []store.ScaleLevel
	Reasons    []reasonOption
	Controls   template.HTML // the grade and reason buttons, from Scale and Reasons
	Guidelines template.HTML
	Saved      string
	Judged     int
	Needed     int
}

// judgeData gathers the judging page: with guidelines for the whole page, without for the
// htmx fragment, which does not show them. The pair comes from turn when the request has
// already leased it (submit-and-next), else NextPair leases it here.
func (s *Server) judgeData(r *http.Request, saved string, withGuidelines bool, turn *store.Turn) (judgeData, error) {
	p := currentProject(r)
	u, _ := currentUser(r)
	d := judgeData{Saved: saved, Reasons: cannotJudgeOptions}
	var err error
	if d.Scale, err = s.store.Scale(r.Context(), p.ID); err != nil {
		return d, err
	}
	if d.Controls, err = s.judgeControls(d.Scale); err != nil {
		return d, err
	}
	if withGuidelines {
		g, err := s.store.CurrentGuidelines(r.Context(), p.ID)
		if err != nil {
			return d, err
		}
		d.Guidelines = s.guidelinesHTML(g)
	}
	if turn == nil {
		pair, err := s.store.NextPair(r.Context(), p.ID, u.ID)
		if err != nil && !errors.Is(err, store.ErrNoWork) {
			return d, err
		}
		turn = &store.Turn{Next: pair, NoWork: err != nil}
	}
	if turn.NoWork {
		// An adaptive judging design may have its next wave ready once the last grades are in.
		if n, err := s.store.AdvanceDesigns(r.Context(), p.ID); err != nil {
			return d, err
		} else if n > 0 {
			pair, err := s.store.NextPair(r.Context(), p.ID, u.ID)
			if err != nil && !errors.Is(err, store.ErrNoWork) {
				return d, err
			}
			turn = &store.Turn{Next: pair, NoWork: err != nil}
		}
	}
	if !turn.NoWork {
		d.Pair = &turn.Next
		d.Body = documentBody(turn.Next.Document)
	}
	if turn.Progress {
		d.Judged, d.Needed = turn.Judged, turn.Needed
		return d, nil
	}
	// Read after leasing, so the bar includes the judgment just made.
	if d.Judged, d.Needed, err = s.store.JudgingProgress(r.Context(), p.ID); err != nil {
		return d, err
	}
	return d, nil
}

// controlsCache keeps the judging form's buttons by the scale they show. Executing the two
// ranges through html/template's escapers was a tenth of the CPU time of a judging request;
// the key is the scale's full text, so an edited scale renders afresh.
type controlsCache struct {
	mu sync.Mutex
	m  map[string]template.HTML
}

func (s *Server) judgeControls(scale []store.ScaleLevel) (template.HTML, error) {
	var key strings.Builder
	for _, l := range scale {
		fmt.Fprintf(&key, "%d\x00%s\x00%s\x00", l.Grade, l.Label, l.Description)
	}
	c := &s.controls
	c.mu.Lock()
	h, ok := c.m[key.String()]
	c.mu.Unlock()
	if ok {
		return h, nil
	}
	var buf bytes.Buffer
	if err := s.pages.set["judge"].ExecuteTemplate(&buf, "controls", judgeData{Scale: scale, Reasons: cannotJudgeOptions}); err != nil {
		return "", err
	}
	h = template.HTML(buf.String())
	c.mu.Lock()
	defer c.mu.Unlock()
	if c.m == nil || len(c.m) >= 256 {
		c.m = map[string]template.HTML{} // scales in use are few; start over rather than grow
	}
	c.m[key.String()] = h
	return h, nil
}

// savedMessages turns the redirect's ?saved= code into the status line of the next page; only
// these fixed codes are accepted, so the URL cannot put text on the page.
func savedMessage(code string, levels int) string {
	switch {
	case code == "undo":
		return "Undone: your last judgment was withdrawn and its pair is back."
	case strings.HasPrefix(code, "x-"):
		if r := strings.TrimPrefix(code, "x-"); slices.Contains(store.CannotJudgeReasons, r) {
			return "Saved: cannot judge (" + r + ")."
		}
	default:
		if g, err := strconv.Atoi(code); err == nil && g >= 0 && g < levels {
			return fmt.Sprintf("Saved: grade %d.", g)
		}
	}
	return ""
}

func (s *Server) judgePage(w http.ResponseWriter, r *http.Request) {
	// A new assessor of a project with a calibration round takes it first.
	if owed, err := s.owesCalibration(r); err != nil {
		s.storeError(w, r, err)
		return
	} else if owed {
		http.Redirect(w, r, fmt.Sprintf("/projects/%d/calibration", currentProject(r).ID), http.StatusSeeOther)
		return
	}
	d, err := s.judgeData(r, "", true, nil)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	d.Saved = savedMessage(r.URL.Query().Get("saved"), len(d.Scale))
	s.render(w, r, http.StatusOK, "judge", "", s.newView(r, "Judging: "+currentProject(r).Name, d))
}

// judgeSubmit stores one judgment. With htmx it answers with the next pair's fragment (one
// request and one write transaction: submit and next); without JavaScript it redirects to
// the judging page, which leases the next pair.
func (s *Server) judgeSubmit(w http.ResponseWriter, r *http.Request) {
	htmx := r.Header.Get("HX-Request") == "true"
	// With htmx the store checks that the pair is the project's inside the transaction.
	sub, ok := s.parseSubmission(w, r, !htmx)
	if !ok {
		return
	}
	if htmx {
		turn, err := s.store.SubmitAndNext(r.Context(), currentProject(r).ID, sub)
		if pertinent.CodeOf(err) == pertinent.NotFound {
			s.fail(w, r, http.StatusNotFound, "That pair is not part of this project.")
			return
		}
		if err != nil {
			s.storeError(w, r, err)
			return
		}
		saved := savedText(turn.Judgment)
		if turn.Refused != nil {
			// A pair whose lease ran out may have filled up meanwhile: say so and move on.
			saved = "Not saved: " + turn.Refused.Error() + "."
		}
		d, err := s.judgeData(r, saved, false, &turn)
		if err != nil {
			s.storeError(w, r, err)
			return
		}
		s.render(w, r, http.StatusOK, "judge", "swap", s.newView(r, "", d))
		return
	}
	j, err := s.store.Submit(r.Context(), sub)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	code := "x-" + j.CannotJudge
	if j.Grade != nil {
		code = strconv.Itoa(*j.Grade)
	}
	http.Redirect(w, r, fmt.Sprintf("/projects/%d/judge?saved=%s", currentProject(r).ID, code), http.StatusSeeOther)
}

// savedText is the status line after a stored judgment.
func savedText(j store.Judgment) string {
	if j.Grade != nil {
		return fmt.Sprintf("Saved: grade %d.", *j.Grade)
	}
	return "Saved: cannot judge (" + j.CannotJudge + ")."
}

// judgeUndo withdraws the assessor's latest judgment; the pair comes back as the next one.
func (s *Server) judgeUndo(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	if _, err := s.store.Undo(r.Context(), currentProject(r).ID, u.ID); err != nil {
		s.storeError(w, r, err)
		return
	}
	if r.Header.Get("HX-Request") != "true" {
		http.Redirect(w, r, fmt.Sprintf("/projects/%d/judge?saved=undo", currentProject(r).ID), http.StatusSeeOther)
		return
	}
	s.renderNext(w, r, savedMessage("undo", 0))
}

// renderNext answers an htmx request with the status line and the next pair.
func (s *Server) renderNext(w http.ResponseWriter, r *http.Request, saved string) {
	d, err := s.judgeData(r, saved, false, nil)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, "judge", "swap", s.newView(r, "", d))
}

// parseSubmission reads a judging form: the pair (which must belong to the project in the
// path), a grade or a reason, a note, and the time measured on the page.
func (s *Server) parseSubmission(w http.ResponseWriter, r *http.Request, checkProject bool) (store.Submission, bool) {
	u, _ := currentUser(r)
	pairID, err := strconv.ParseInt(r.PostFormValue("pair"), 10, 64)
	if err != nil {
		s.fail(w, r, http.StatusBadRequest, "The form did not say which pair it judges.")
		return store.Submission{}, false
	}
	sub := store.Submission{PairID: pairID, UserID: u.ID, Note: strings.TrimSpace(r.PostFormValue("note"))}
	answer := r.PostFormValue("grade")
	if answer == "" && r.PostFormValue("cannot_judge") != "" {
		answer = "x-" + r.PostFormValue("cannot_judge")
	}
	if reason, ok := strings.CutPrefix(answer, "x-"); ok {
		sub.CannotJudge = reason
	} else if answer != "" {
		n, err := strconv.Atoi(answer)
		if err != nil {
			s.fail(w, r, http.StatusBadRequest, "The grade must be a whole number.")
			return store.Submission{}, false
		}
		sub.Grade = &n
	}
	// Time measured on the page is preferred; implausible values fall back to the lease clock.
	if ms, err := strconv.Atoi(r.PostFormValue("elapsed_ms")); err == nil && ms > 0 && ms < 24*3600*1000 {
		sub.TimeSpentMs = ms
	}
	if !checkProject {
		return sub, true
	}
	if pv, err := s.store.ProjectIDByPair(r.Context(), pairID); err != nil || pv != currentProject(r).ID {
		s.fail(w, r, http.StatusNotFound, "That pair is not part of this project.")
		return store.Submission{}, false
	}
	return sub, true
}
