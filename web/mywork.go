package web

import (
	"fmt"
	"net/http"
	"strconv"
	"time"

	"github.com/pertinent/pertinent/store"
)

// myWorkData is an assessor's own recent judgments: nothing of anyone else's.
type myWorkData struct {
	Judgments    []store.MyJudgment
	Comparisons  []store.MyComparison
	Preference   bool // the project asks for preferences: the screen to go back to is comparing
	Scale        []store.ScaleLevel
	Reasons      []reasonOption
	Today        int
	Overall      int
	Judged       int
	Needed       int
	AllowChanges bool
	Status       string
}

func (s *Server) myWorkData(r *http.Request, status string) (myWorkData, error) {
	p := currentProject(r)
	u, _ := currentUser(r)
	d := myWorkData{Reasons: cannotJudgeOptions, AllowChanges: p.AllowChanges, Status: status, Preference: p.TaskKind == store.TaskPreference}
	var err error
	if d.Comparisons, err = s.store.ComparisonsByAssessor(r.Context(), p.ID, u.ID, 100); err != nil {
		return d, err
	}
	if d.Judgments, err = s.store.JudgmentsByAssessor(r.Context(), p.ID, u.ID, 100); err != nil {
		return d, err
	}
	if d.Scale, err = s.store.Scale(r.Context(), p.ID); err != nil {
		return d, err
	}
	y, m, day := time.Now().Date()
	if d.Today, d.Overall, err = s.store.JudgmentCountsByAssessor(r.Context(), p.ID, u.ID, time.Date(y, m, day, 0, 0, 0, 0, time.Local)); err != nil {
		return d, err
	}
	d.Judged, d.Needed, err = s.store.JudgingProgress(r.Context(), p.ID)
	return d, err
}

func (s *Server) myWorkPage(w http.ResponseWriter, r *http.Request) {
	status := ""
	if r.URL.Query().Get("changed") == "1" {
		status = "Your judgment was changed; the earlier answer stays in its history."
	}
	d, err := s.myWorkData(r, status)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, "mine", "", s.newView(r, "My work: "+currentProject(r).Name, d))
}

// myWorkChange replaces one of the assessor's judgments with a new answer (a revision).
func (s *Server) myWorkChange(w http.ResponseWriter, r *http.Request) {
	sub, ok := s.parseSubmission(w, r, true)
	if !ok {
		return
	}
	sub.TimeSpentMs = 0 // a change is not timed: no lease clock runs for it
	if _, err := s.store.Revise(r.Context(), sub); err != nil {
		s.storeError(w, r, err)
		return
	}
	if r.Header.Get("HX-Request") != "true" {
		http.Redirect(w, r, fmt.Sprintf("/projects/%d/mine?changed=1", currentProject(r).ID), http.StatusSeeOther)
		return
	}
	d, err := s.myWorkData(r, "Your judgment was changed; the earlier answer stays in its history.")
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	s.render(w, r, http.StatusOK, "mine", "mywork", s.newView(r, "", d))
}

type feedbackData struct {
	Table table
}

// feedbackPage shows an assessor where their grade differed from the final grade, with the
// lead's rationale; nothing about the other assessors.
func (s *Server) feedbackPage(w http.ResponseWriter, r *http.Request) {
	u, _ := currentUser(r)
	items, err := s.store.Feedback(r.Context(), currentProject(r).ID, u.ID)
	if err != nil {
		s.storeError(w, r, err)
		return
	}
	tab := table{Name: "feedback", File: "feedback", Class: "feedback", Empty: "No differences so far.",
		Columns: []column{{Key: "query"}, {Key: "query_text", Label: "Query"}, {Key: "document"}, {Key: "title", Label: "Document"},
			{Key: "your_grade", Label: "Your grade", Class: "num"}, {Key: "final_grade", Label: "Final grade", Class: "num"},
			{Key: "rationale", Label: "Why"}, {Key: "adjudicated_at"}}}
	for _, f := range items {
		row := plain(f.Query.ExternalID, f.Query.Text, f.Document.ExternalID, f.Document.Title,
			strconv.Itoa(f.Grade), strconv.Itoa(f.FinalGrade), f.Rationale, f.At.Format(time.RFC3339))
		row.Pair = f.PairID
		tab.Rows = append(tab.Rows, row)
	}
	if s.offerTables(w, r, &tab) {
		return
	}
	s.render(w, r, http.StatusOK, "feedback", "", s.newView(r, "Feedback: "+currentProject(r).Name, feedbackData{Table: tab}))
}
