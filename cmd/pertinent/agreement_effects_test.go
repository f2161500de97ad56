package main

import (
	"bytes"
	"context"
	"encoding/json"
	"path/filepath"
	"strings"
	"testing"
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
	if err := runAgreement(ctx, []string{"--effects"}, &out, &errOut); err == nil || !strings.Contains(err.Error(), "--effects needs --db") {
		t.Errorf("--effects alone: %v", err)
	}
}
