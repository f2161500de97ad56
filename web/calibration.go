package web

import (
	"errors"
	"fmt"
	"html/template"
	"net/http"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent/store"
)

// The calibration round: a new assessor grades pairs whose grade is known, one at a time, and
// after each answer sees the known grade and why, before any ordinary work. Plain forms and
// redirects, so it works the same without JavaScript; the judging page's keys apply.

type calibrationData struct {
	Scale      []store.ScaleLevel
	Controls   template.HTML
	Guidelines template.HTML
	Pair       *store.CalibrationPair
	Body       template.HTML
	Feedback   *store.CalibrationFeedback
	GivenLabel string // the label of the assessor's grade, on the feedback
	KnownLabel string
	Reason     string // a cannot-judge answer, in words
}

// owesCalibration reports whether the assessor must take the project's calibration round
// before ordinary work.
func (s *Server) owesCalibration(r *http.Request) (bool, error) {
	u, _ := currentUser(r)
	_, err := s.store.NextCalibrationPair(r.Context(), currentProject(r).ID, u.ID)
	if errors.Is(err, store.ErrNoWork) {
		return false, nil
	}
	return err == nil, err
}

func (s *Server) calibrationPage(w http.ResponseWriter, r *http.Request) {
	p := currentProject(r)
	u, _ := currentUser(r)
	d := calibrationData{}
	var err error
	if d.Scale, err = s.store.Scale(r.Context(), p.ID); err != nil {
		s.storeError(w, r, err)
		return
	}
	if answered := r.URL.Query().Get("answered"); answered != "" {
		id, err := strconv.ParseInt(answered, 10, 64)
		if err != nil {
			s.fail(w, r, http.StatusBadRequest, "The address does not name a calibration pair.")
			return
		}
		fb, err := s.store.CalibrationFeedbackFor(r.Context(), p.ID, u.ID, id)
		if err != nil {
			s.storeError(w, r, err)
			return
		}
		d.Feedback = &fb
		d.Body = documentBody(fb.Pair.Document)
		d.KnownLabel = levelLabel(d.Scale, fb.Known)
		if fb.Grade != nil {
			d.GivenLabel = levelLabel(d.Scale, *fb.Grade)
		} else {
			d.Reason = reasonLabel(fb.CannotJudge)
		}
		s.render(w, r, http.StatusOK, "calibration", "", s.newView(r, "Calibration round: "+p.Name, d))
		return
	}
	cp, err := s.store.NextCalibrationPair(r.Context(), p.ID, u.ID)
	if err != nil && !errors.Is(err, store.ErrNoWork) {
		s.storeError(w, r, err)
		return
	}
	if err == nil {
		d.Pair = &cp
		d.Body = documentBody(cp.Document)
		if d.Controls, err = s.judgeControls(d.Scale); err != nil {
			s.storeError(w, r, err)
			return
		}
		g, err := s.store.CurrentGuidelines(r.Context(), p.ID)
		if err != nil {
			s.storeError(w, r, err)
			return
		}
		d.Guidelines = s.guidelinesHTML(g)
	}
	s.render(w, r, http.StatusOK, "calibration", "", s.newView(r, "Calibration round: "+p.Name, d))
}

// calibrationSubmit records one answer and shows its feedback (after a redirect, so a reload
// does not send the answer again).
func (s *Server) calibrationSubmit(w http.ResponseWriter, r *http.Request) {
	p := currentProject(r)
	u, _ := currentUser(r)
	id, err := strconv.ParseInt(r.PostFormValue("pair"), 10, 64)
	if err != nil {
		s.fail(w, r, http.StatusBadRequest, "The form did not say which pair it answers.")
		return
	}
	a := store.CalibrationAnswer{PairID: id, UserID: u.ID}
	if g := r.PostFormValue("grade"); g != "" {
		n, err := strconv.Atoi(g)
		if err != nil {
			s.fail(w, r, http.StatusBadRequest, "The grade must be a whole number.")
			return
		}
		a.Grade = &n
	} else {
		a.CannotJudge = strings.TrimSpace(r.PostFormValue("cannot_judge"))
	}
	if _, err := s.store.AnswerCalibration(r.Context(), p.ID, a); err != nil {
		s.storeError(w, r, err)
		return
	}
	http.Redirect(w, r, fmt.Sprintf("/projects/%d/calibration?answered=%d", p.ID, id), http.StatusSeeOther)
}

// levelLabel is "3 (Highly relevant)", or the bare grade when the scale lacks it.
func levelLabel(scale []store.ScaleLevel, g int) string {
	for _, l := range scale {
		if l.Grade == g && l.Label != "" {
			return fmt.Sprintf("%d (%s)", g, l.Label)
		}
	}
	return strconv.Itoa(g)
}
