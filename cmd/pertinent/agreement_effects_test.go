package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/store"
)

// `pertinent agreement --effects --json` prints the store's computation itself, the one the
// page and the API show: on the demo collection, with its kept runs, the two are equal.
func TestAgreementEffectsPrintsTheStoresFigures(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "demo.db")
	st := openTestStore(t, path)
	if _, err := seedDemo(ctx, st); err != nil {
		t.Fatal(err)
	}
	p := testProject(t, st, demoProjectName)
	want, err := st.AssessorEffects(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if len(want.Runs) < 2 || len(want.Alone) == 0 || len(want.Leniency) == 0 {
		t.Fatalf("the demo gives nothing to compare: %+v", want)
	}
	var out, errOut bytes.Buffer
	if err := runAgreement(ctx, []string{"--db", path, "--project", demoProjectName, "--effects", "--json"}, &out, &errOut); err != nil {
		t.Fatal(err, errOut.String())
	}
	wantJSON, _ := json.MarshalIndent(want, "", "  ")
	if strings.TrimSpace(out.String()) != string(wantJSON) {
		t.Errorf("--json differs from the store's figures:\n%s\nwant\n%s", out.String(), wantJSON)
	}
	out.Reset()
	if err := runAgreement(ctx, []string{"--db", path, "--project", demoProjectName, "--effects"}, &out, &errOut); err != nil {
		t.Fatal(err)
	}
	for _, l := range want.Leniency {
		if !strings.Contains(out.String(), l.Rater+": "+l.Summary) {
			t.Errorf("text lacks %s's leniency:\n%s", l.Rater, out.String())
		}
	}
	if err := runAgreement(ctx, []string{"--effects"}, &out, &errOut); err == nil || !strings.Contains(err.Error(), "--effects, --sources, --calibration and --preferences need --db") {
		t.Errorf("--effects alone: %v", err)
	}
}

// `pertinent import qrels --source-kind --source-about` records the provenance, and
// `pertinent agreement --sources --json` prints the store's comparison itself.
func TestAgreementSourcesPrintsTheStoresFigures(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "demo.db")
	st := openTestStore(t, path)
	if _, err := seedDemo(ctx, st); err != nil {
		t.Fatal(err)
	}
	p := testProject(t, st, demoProjectName)
	var qrels strings.Builder
	err := st.ExportPairs(ctx, p.ID, store.ExportScan{}, func(x *store.ExportPair) error {
		fmt.Fprintf(&qrels, "%s 0 %s %d\n", x.QueryID, x.DocID, len(x.DocID)%5)
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	file := writeFile(t, "model.qrels", qrels.String())
	var out, errOut bytes.Buffer
	args := []string{"qrels", "--db", path, "--project", demoProjectName, "--source", "model-b", "--source-kind", "model",
		"--source-about", "model=ridge-9", "--source-about", "date=2026-11-30", file}
	if err := runImport(ctx, args, &out, &errOut); err != nil {
		t.Fatal(err, errOut.String())
	}
	want, err := st.CompareSources(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	// The demo's own grader and model-b, by name.
	if len(want.Sources) != 2 || want.Sources[0].Name != demoSourceName || want.Sources[1].Name != "model-b" {
		t.Fatalf("sources %+v", want.Sources)
	}
	if b := want.Sources[1]; b.About["date"] != "2026-11-30" || b.Kind != store.SourceModel || b.Report.N == 0 {
		t.Fatalf("provenance not recorded: %+v", b)
	}
	out.Reset()
	if err := runAgreement(ctx, []string{"--db", path, "--project", demoProjectName, "--sources", "--json"}, &out, &errOut); err != nil {
		t.Fatal(err)
	}
	wantJSON, _ := json.MarshalIndent(want, "", "  ")
	if strings.TrimSpace(out.String()) != string(wantJSON) {
		t.Errorf("--json differs from the store's figures:\n%s\nwant\n%s", out.String(), wantJSON)
	}
	if err := runImport(ctx, []string{"qrels", "--db", path, "--project", demoProjectName, "--source", "m", "--source-about", "novalue", file}, &out, &errOut); err == nil {
		t.Error("--source-about without = accepted")
	}
}

// A calibration round imported from the command line, answered, and printed: --json is the
// store's (and so the API's) figures.
func TestAgreementCalibrationPrintsTheStoresFigures(t *testing.T) {
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "demo.db")
	st := openTestStore(t, path)
	if _, err := seedDemo(ctx, st); err != nil {
		t.Fatal(err)
	}
	p := testProject(t, st, demoProjectName)
	var q string
	err := st.ExportPairs(ctx, p.ID, store.ExportScan{}, func(x *store.ExportPair) error {
		q = x.QueryID
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	var docs, cal strings.Builder
	docs.WriteString("doc_id,title,body\n")
	cal.WriteString("query_id,doc_id,grade,reason\n")
	for g := range 5 {
		fmt.Fprintf(&docs, "key-%d,Key page %d,Written to be graded %d.\n", g, g, g)
		fmt.Fprintf(&cal, "%s,key-%d,%d,Graded %d by the project's key.\n", q, g, g, g)
	}
	var out, errOut bytes.Buffer
	for _, args := range [][]string{
		{"documents", "--db", path, "--project", demoProjectName, writeFile(t, "key-docs.csv", docs.String())},
		{"calibration", "--db", path, "--project", demoProjectName, writeFile(t, "key.csv", cal.String())},
	} {
		if err := runImport(ctx, args, &out, &errOut); err != nil {
			t.Fatal(err, errOut.String())
		}
	}
	assessor, err := st.CreateUser(ctx, "newcomer", "", store.RoleAssessor, "long enough password")
	if err != nil {
		t.Fatal(err)
	}
	if err := st.SetMember(ctx, p.ID, assessor.ID, store.RoleAssessor, assessor.ID); err != nil {
		t.Fatal(err)
	}
	for {
		cp, err := st.NextCalibrationPair(ctx, p.ID, assessor.ID)
		if err != nil {
			break
		}
		g := min(4, cp.Number)
		if _, err := st.AnswerCalibration(ctx, p.ID, store.CalibrationAnswer{PairID: cp.ID, UserID: assessor.ID, Grade: &g}); err != nil {
			t.Fatal(err)
		}
	}
	want, err := st.CalibrationRound(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	// The demo's five anchors and the five imported here.
	if want.Pairs != 10 || len(want.Scores) != 1 || want.Scores[0].Answered != 10 {
		t.Fatalf("round %+v", want)
	}
	out.Reset()
	if err := runAgreement(ctx, []string{"--db", path, "--project", demoProjectName, "--calibration", "--json"}, &out, &errOut); err != nil {
		t.Fatal(err)
	}
	wantJSON, _ := json.MarshalIndent(want, "", "  ")
	if strings.TrimSpace(out.String()) != string(wantJSON) {
		t.Errorf("--json differs from the store's figures:\n%s\nwant\n%s", out.String(), wantJSON)
	}
	out.Reset()
	if err := runAgreement(ctx, []string{"--db", path, "--project", demoProjectName, "--calibration"}, &out, &errOut); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(out.String(), "newcomer: 10 of 10 answered") {
		t.Errorf("text output:\n%s", out.String())
	}
}
