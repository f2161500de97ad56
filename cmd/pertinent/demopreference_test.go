package main

import (
	"context"
	"errors"
	"path/filepath"
	"testing"

	"github.com/pertinent/pertinent/store"
)

// The demo's preference project comes with a history: every query has compared products,
// answers and a fit, not every sort is finished, and assessors have comparisons to answer. Seeding again adds nothing.
func TestDemoPreferenceProjectHasAHistoryAndOpenWork(t *testing.T) {
	ctx := context.Background()
	st := openTestStore(t, filepath.Join(t.TempDir(), "demo.db"))
	if _, err := seedDemo(ctx, st); err != nil {
		t.Fatal(err)
	}
	p := testProject(t, st, demoPrefProjectName)
	if p.TaskKind != store.TaskPreference {
		t.Fatalf("task %q, want preferences", p.TaskKind)
	}
	rep, err := st.PreferenceFigures(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if rep.Answers != demoPrefAnswers || len(rep.Queries) != len(demoPrefQueries) || !rep.Agreement.Pairwise.OK {
		t.Fatalf("report: %d answers, %d queries, agreement %+v", rep.Answers, len(rep.Queries), rep.Agreement)
	}
	if len(rep.Runs) != 2 || rep.Runs[0].Agree+rep.Runs[0].Disagree == 0 {
		t.Errorf("the demo runs against the answers: %+v", rep.Runs)
	}
	open, done := 0, 0
	for _, q := range rep.Queries {
		judged := 0
		for _, sc := range q.Fit.Scores {
			judged += sc.Wins + sc.Losses + sc.Ties
		}
		if len(q.Documents) < 3 || judged == 0 {
			t.Errorf("query %s: %d documents, %d results in the fit", q.Query, len(q.Documents), judged)
		}
		open += q.Open
		if q.Done {
			done++
		}
	}
	if open == 0 || done == 0 {
		t.Errorf("%d sorts finished, %d comparisons open: want some of each", done, open)
	}
	// Each comparison takes two answers, so the first two assessors to ask get one each (the
	// third would wait for their leases).
	for _, name := range []string{"dominic", "tobin"} {
		u, err := st.UserByUsername(ctx, name)
		if err != nil {
			t.Fatal(err)
		}
		if _, err := st.NextComparison(ctx, p.ID, u.ID); err != nil {
			t.Errorf("%s gets no comparison: %v", name, err)
		}
	}
	pairs, err := st.PreferencePairs(ctx, p.ID)
	if err != nil || len(pairs) == 0 {
		t.Errorf("training pairs: %d, %v", len(pairs), err)
	}
	if _, err := seedDemo(ctx, st); err != nil {
		t.Fatal(err)
	}
	again, err := st.PreferenceFigures(ctx, p.ID)
	if err != nil || again.Answers != rep.Answers {
		t.Errorf("seeding again: %d answers (%v), want %d", again.Answers, err, rep.Answers)
	}
	if _, err := st.ProjectByName(ctx, demoProjectName); errors.Is(err, store.ErrNotFound) {
		t.Error("the graded demo project is gone")
	}
}
