package web

import (
	"errors"
	"fmt"
	"html/template"
	"net/http"
	"strconv"
	"strings"

	"github.com/microcosm-cc/bluemonday"

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

type judgeData struct {
	Pair       *store.PairView
	Body       template.HTML
	Scale      []store.ScaleLevel
	Reasons    []string
	Guidelines string
	Saved      string
	Progress   store.Progress
}

func (s *Server) judgeData(r *http.Request, saved string) (judgeData, error) {
	p := currentProject(r)
	u, _ := currentUser(r)
	d := judgeData{Saved: saved, Reasons: store.CannotJudgeReasons}
	var err error
	if d.Scale, err = s.store.Scale(r.Context(), p.ID); err != nil {
		return d, err
	}
	g, err := s.store.CurrentGuidelines(r.Context(), p.ID)
	if err != nil {
		return d, err
	}
	d.Guidelines = g.Body
	if d.Progress, err = s.store.ProjectProgress(r.Context(), p.ID); err != nil {
		return d, err
	}
	pair, err := s.store.NextPair(r.Context(), p.ID, u.ID)
	if errors.Is(err, store.ErrNoWork) {
		return d, nil
	}
	if err != nil {
		return d, err
	}
	d.Pair = &pair
	d.Body = documentBody(pair.Document)
	return d, nil
}

func (s *Server) judgePage(w http.ResponseWriter, r *http.Request) {
	d, err := s.judgeData(r, "")
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, "judge", "", s.newView(r, "Judging: "+currentProject(r).Name, d))
}

// judgeSubmit stores one judgment. With htmx it answers with the next pair's fragment;
// without JavaScript it redirects to the judging page, which leases the next pair.
func (s *Server) judgeSubmit(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	pairID, err := strconv.ParseInt(r.PostFormValue("pair"), 10, 64)
	if err != nil {
		s.fail(w, r, http.StatusBadRequest, "The form did not say which pair it judges.")
		return
	}
	sub := store.Submission{PairID: pairID, UserID: u.ID, Note: strings.TrimSpace(r.PostFormValue("note"))}
	if g := r.PostFormValue("grade"); g != "" {
		n, err := strconv.Atoi(g)
		if err != nil {
			s.fail(w, r, http.StatusBadRequest, "The grade must be a whole number.")
			return
		}
		sub.Grade = &n
	} else {
		sub.CannotJudge = r.PostFormValue("cannot_judge")
	}
	// Time measured on the page is preferred; implausible values fall back to the lease clock.
	if ms, err := strconv.Atoi(r.PostFormValue("elapsed_ms")); err == nil && ms > 0 && ms < 24*3600*1000 {
		sub.TimeSpentMs = ms
	}
	if pv, err := s.store.PairProject(r.Context(), pairID); err != nil || pv != currentProject(r).ID {
		s.fail(w, r, http.StatusNotFound, "That pair is not part of this project.")
		return
	}
	j, err := s.store.Submit(r.Context(), sub)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	saved := "Saved: cannot judge (" + j.CannotJudge + ")."
	if j.Grade != nil {
		saved = fmt.Sprintf("Saved: grade %d.", *j.Grade)
	}
	if r.Header.Get("HX-Request") != "true" {
		http.Redirect(w, r, fmt.Sprintf("/projects/%d/judge?saved=%d", currentProject(r).ID, j.ID), http.StatusSeeOther)
		return
	}
	d, err := s.judgeData(r, saved)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, "judge", "pair", s.newView(r, "", d))
}
