package main

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"path/filepath"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/store"
)

// `pertinent agreement --preferences --json` prints the store's report itself, the one the
// Preferences page and the API show: on the demo collection switched to preferences, after
// its assessors have answered every comparison they were given.
func TestAgreementPreferencesPrintsTheStoresFigures(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "demo.db")
	st := openTestStore(t, path)
	if _, err := seedDemo(ctx, st); err != nil {
		t.Fatal(err)
	}
	p := testProject(t, st, demoProjectName)
	members, err := st.Members(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	var lead int64
	var assessors []int64
	for _, m := range members {
		if m.ProjectRole == store.RoleLead {
			lead = m.ID
		} else {
			assessors = append(assessors, m.ID)
		}
	}
	if err := st.SetTaskKind(ctx, p.ID, store.TaskPreference, nil, lead); err != nil {
		t.Fatal(err)
	}
	answered := 0
	for idle := 0; idle < len(assessors) && answered < 200; {
		idle = 0
		for i, u := range assessors {
			v, err := st.NextComparison(ctx, p.ID, u)
			if errors.Is(err, store.ErrNoWork) {
				idle++
				continue
			}
			if err != nil {
				t.Fatal(err)
			}
			// Each assessor has a habit, so the answers disagree now and then.
			outcome := []string{"left", "right", "same"}[(i+answered)%3]
			if _, err := st.AnswerComparison(ctx, store.PreferenceSubmission{ComparisonID: v.ComparisonID, ProjectID: p.ID, UserID: u,
				LeftDoc: v.Left.ID, Outcome: outcome}); err != nil {
				t.Fatal(err)
			}
			answered++
		}
	}
	want, err := st.PreferenceFigures(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if answered == 0 || want.Answers != answered || len(want.Queries) == 0 || want.Agreement.Comparisons == 0 {
		t.Fatalf("the demo gives nothing to compare: %d answered, report %+v", answered, want)
	}
	var out, errOut bytes.Buffer
	if err := runAgreement(ctx, []string{"--db", path, "--project", demoProjectName, "--preferences", "--json"}, &out, &errOut); err != nil {
		t.Fatal(err, errOut.String())
	}
	wantJSON, _ := json.MarshalIndent(want, "", "  ")
	if strings.TrimSpace(out.String()) != string(wantJSON) {
		t.Errorf("--json differs from the store's figures:\n%s\nwant\n%s", out.String(), wantJSON)
	}
	out.Reset()
	if err := runAgreement(ctx, []string{"--db", path, "--project", demoProjectName, "--preferences"}, &out, &errOut); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(out.String(), want.Queries[0].Query+" (") || !strings.Contains(out.String(), "Krippendorff's alpha") {
		t.Errorf("text report:\n%s", out.String())
	}
	if err := runAgreement(ctx, []string{"--preferences"}, &out, &errOut); err == nil || !strings.Contains(err.Error(), "need --db") {
		t.Errorf("--preferences alone: %v", err)
	}
}
