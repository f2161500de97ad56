package web

import (
	"errors"
	"fmt"
	"html/template"
	"net/http"
	"slices"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/store"
)

// outcomeOption is one answer to a comparison as offered on the comparing screen.
type outcomeOption struct {
	Value, Label, Key string
}

// preferenceOptions label store.PreferenceOutcomes; the key gives the answer.
var preferenceOptions = []outcomeOption{
	{"left", "Left is better", "1"},
	{"right", "Right is better", "2"},
	{"same", "About the same", "3"},
	{"neither", "Neither is relevant", "4"},
}

func outcomeLabel(o string) string {
	for _, x := range preferenceOptions {
		if x.Value == o {
			return x.Label
		}
	}
	return o
}

type compareData struct {
	Comparison  *store.ComparisonView
	LeftBody    template.HTML
	RightBody   template.HTML
	Outcomes    []outcomeOption
	Reasons     []reasonOption
	Guidelines  template.HTML
	Saved       string
	Open        int // comparisons the schedule waits for
	NeededLeft  int // answers they still need
	AnswersDone int
}

// compareData gathers the comparing page; the comparison comes from NextComparison, which
// gives back the one on screen until it is answered.
func (s *Server) compareData(r *http.Request, saved string, withGuidelines bool) (compareData, error) {
	p := currentProject(r)
	u, _ := currentUser(r)
	d := compareData{Saved: saved, Outcomes: preferenceOptions, Reasons: cannotJudgeOptions}
	if withGuidelines {
		g, err := s.store.CurrentGuidelines(r.Context(), p.ID)
		if err != nil {
			return d, err
		}
		d.Guidelines = s.guidelinesHTML(g)
	}
	c, err := s.store.NextComparison(r.Context(), p.ID, u.ID)
	if err != nil && !errors.Is(err, store.ErrNoWork) {
		return d, err
	}
	if err == nil {
		d.Comparison = &c
		d.LeftBody, d.RightBody = documentBody(c.Left), documentBody(c.Right)
	}
	d.Open, d.AnswersDone, d.NeededLeft, err = s.store.PreferenceProgress(r.Context(), p.ID)
	return d, err
}

// comparedMessage turns the redirect's ?saved= code into the status line; only fixed codes
// are accepted, so the URL cannot put text on the page.
func comparedMessage(code string) string {
	switch {
	case code == "undo":
		return "Undone: your last answer was withdrawn and its comparison is back."
	case strings.HasPrefix(code, "x-"):
		if r := strings.TrimPrefix(code, "x-"); slices.Contains(store.CannotJudgeReasons, r) {
			return "Saved: cannot judge (" + r + ")."
		}
	case slices.Contains(store.PreferenceOutcomes, code):
		return "Saved: " + strings.ToLower(outcomeLabel(code)) + "."
	}
	return ""
}

func answerCode(a store.PreferenceAnswer) string {
	if a.Outcome != "" {
		return a.Outcome
	}
	return "x-" + a.CannotJudge
}

// comparePage is the preference judging screen. A project that asks for grades sends its
// assessors to the graded screen instead.
func (s *Server) comparePage(w http.ResponseWriter, r *http.Request) {
	p := currentProject(r)
	if p.TaskKind != store.TaskPreference {
		http.Redirect(w, r, fmt.Sprintf("/projects/%d/judge", p.ID), http.StatusSeeOther)
		return
	}
	d, err := s.compareData(r, comparedMessage(r.URL.Query().Get("saved")), true)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, "compare", "", s.newView(r, "Comparing: "+p.Name, d))
}

// compareSubmit stores one answer. With htmx it answers with the next comparison's
// fragment; without JavaScript it redirects to the comparing page.
func (s *Server) compareSubmit(w http.ResponseWriter, r *http.Request) {
	sub, ok := s.parsePreference(w, r)
	if !ok {
		return
	}
	a, err := s.store.AnswerComparison(r.Context(), sub)
	htmx := r.Header.Get("HX-Request") == "true"
	if pertinent.CodeOf(err) == pertinent.NotFound {
		s.fail(w, r, http.StatusNotFound, "That comparison is not part of this project.")
		return
	}
	var refused *pertinent.Error
	if htmx && pertinent.CodeOf(err) == pertinent.Conflict && errors.As(err, &refused) {
		// A comparison whose lease ran out may have filled up meanwhile: say so and move on.
		s.renderNextComparison(w, r, "Not saved: "+refused.Message+".")
		return
	}
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	if htmx {
		s.renderNextComparison(w, r, comparedMessage(answerCode(a)))
		return
	}
	http.Redirect(w, r, fmt.Sprintf("/projects/%d/compare?saved=%s", currentProject(r).ID, answerCode(a)), http.StatusSeeOther)
}

// compareUndo withdraws the assessor's latest answer; the comparison comes back as the next.
func (s *Server) compareUndo(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	if _, err := s.store.UndoPreference(r.Context(), currentProject(r).ID, u.ID); err != nil {
		s.storeError(w, r, err)
		return
	}
	if r.Header.Get("HX-Request") != "true" {
		http.Redirect(w, r, fmt.Sprintf("/projects/%d/compare?saved=undo", currentProject(r).ID), http.StatusSeeOther)
		return
	}
	s.renderNextComparison(w, r, comparedMessage("undo"))
}

func (s *Server) renderNextComparison(w http.ResponseWriter, r *http.Request, saved string) {
	d, err := s.compareData(r, saved, false)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, "compare", "swap", s.newView(r, "", d))
}

// parsePreference reads a comparing form: the comparison, the document shown on the left,
// an answer or a reason, the flag, a note and the time measured on the page. The store
// checks that the comparison is the project's, inside the write transaction.
func (s *Server) parsePreference(w http.ResponseWriter, r *http.Request) (store.PreferenceSubmission, bool) {
	u, _ := currentUser(r)
	id, err1 := strconv.ParseInt(r.PostFormValue("comparison"), 10, 64)
	left, err2 := strconv.ParseInt(r.PostFormValue("left"), 10, 64)
	if err1 != nil || err2 != nil {
		s.fail(w, r, http.StatusBadRequest, "The form did not say which comparison it answers.")
		return store.PreferenceSubmission{}, false
	}
	sub := store.PreferenceSubmission{ComparisonID: id, ProjectID: currentProject(r).ID, UserID: u.ID, LeftDoc: left,
		Outcome: r.PostFormValue("outcome"), CannotJudge: r.PostFormValue("cannot_judge"),
		Flagged: r.PostFormValue("flagged") != "", Note: strings.TrimSpace(r.PostFormValue("note"))}
	if sub.Outcome != "" && sub.CannotJudge != "" {
		sub.Outcome = "" // the reason's button was the one pressed; the outcome is a leftover
	}
	if ms, err := strconv.Atoi(r.PostFormValue("elapsed_ms")); err == nil && ms > 0 && ms < 24*3600*1000 {
		sub.TimeSpentMs = ms
	}
	return sub, true
}
