package main

import (
	"bytes"
	"context"
	"encoding/json"
	"fmt"
	"math"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/store"
)

// planDB makes project "Floats" with queries f1..f4 of ten documents each and no pairs, and two
// run files over them.
func planDB(t *testing.T) (db string, runs []string) {
	t.Helper()
	_, db = newTestDB(t, "p.db", func(ctx context.Context, st *store.Store) {
		p, err := st.CreateProject(ctx, store.NewProject{Name: "Floats"}, 0)
		if err != nil {
			t.Fatal(err)
		}
		err = st.Load(ctx, p.ID, func(l *store.Loader) error {
			for q := 1; q <= 4; q++ {
				if _, err := l.Query(store.Query{ExternalID: fmt.Sprintf("f%d", q), Text: "mooring float"}); err != nil {
					return err
				}
				for d := 1; d <= 10; d++ {
					if _, err := l.Document(store.Document{ExternalID: fmt.Sprintf("f%d-%d", q, d)}); err != nil {
						return err
					}
				}
			}
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
	})
	for r, name := range []string{"near.run", "far.run"} {
		var b strings.Builder
		for q := 1; q <= 4; q++ {
			for i := 1; i <= 10; i++ {
				d := i
				if r == 1 {
					d = 11 - i
				}
				fmt.Fprintf(&b, "f%d Q0 f%d-%d %d %d %s\n", q, q, d, i, 20-i, strings.TrimSuffix(name, ".run"))
			}
		}
		runs = append(runs, writeFile(t, name, b.String()))
	}
	return db, runs
}

// gradePlanPairs grades every pair of "Floats": documents 1-3 of each query are relevant.
func gradePlanPairs(t *testing.T, db string) {
	t.Helper()
	ctx := context.Background()
	st := openTestStore(t, db)
	p := testProject(t, st, "Floats")
	u, err := st.CreateUser(ctx, "gus", "", store.RoleAssessor, "a long enough password")
	if err != nil {
		t.Fatal(err)
	}
	var pairs []*store.ExportPair
	if err := st.ExportPairs(ctx, p.ID, store.ExportScan{}, func(ep *store.ExportPair) error {
		c := *ep
		pairs = append(pairs, &c)
		return nil
	}); err != nil {
		t.Fatal(err)
	}
	err = st.Load(ctx, p.ID, func(l *store.Loader) error {
		for _, ep := range pairs {
			var d int
			fmt.Sscanf(ep.DocID[strings.Index(ep.DocID, "-")+1:], "%d", &d)
			g := 0
			if d <= 3 {
				g = 4 - d
			}
			if err := l.Judgment(store.RecordedJudgment{PairID: ep.PairID, UserID: u.ID, Grade: &g}); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
}

// pertinent plan sends a design's pairs to judging; evaluate --design and plan --queries then
// print the numbers the store computes (the page and the API show the same value).
func TestPlanThenEvaluateDesignOnTheCommandLine(t *testing.T) {
	db, runs := planDB(t)
	ctx := context.Background()
	var out, errOut bytes.Buffer
	args := append([]string{"--db", db, "--project", "Floats", "--design", "depth", "--depth", "5", "--k", "5", "--json"}, runs...)
	if err := runPlan(ctx, args, &out, &errOut); err != nil {
		t.Fatalf("plan: %v\n%s", err, errOut.String())
	}
	var planned store.PlanOutcome
	if err := json.Unmarshal(out.Bytes(), &planned); err != nil {
		t.Fatal(err)
	}
	// Near ranks documents 1..5 first, far ranks 10..6: every document of every query, 40 pairs.
	if planned.DesignID == 0 || planned.Added != 40 {
		t.Fatalf("plan: design %d added %d, want 40 (the union of both top 5s over 4 queries)", planned.DesignID, planned.Added)
	}
	gradePlanPairs(t, db)

	out.Reset()
	if err := runEvaluate(ctx, []string{"--db", db, "--project", "Floats", "--design", fmt.Sprint(planned.DesignID), "--json"}, &out, &errOut); err != nil {
		t.Fatalf("evaluate --design: %v\n%s", err, errOut.String())
	}
	var cli store.DesignReport
	if err := json.Unmarshal(out.Bytes(), &cli); err != nil {
		t.Fatal(err)
	}
	st, p, err := openProject(ctx, db, "Floats")
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	want, err := st.DesignEstimate(ctx, p.ID, planned.DesignID)
	if err != nil {
		t.Fatal(err)
	}
	if len(cli.Estimates.Runs) != 2 || cli.Estimates.Runs[0].NDCG != want.Estimates.Runs[0].NDCG || cli.Estimates.Runs[1].AP != want.Estimates.Runs[1].AP {
		t.Errorf("evaluate --design printed %+v\nstore says %+v", cli.Estimates.Runs, want.Estimates.Runs)
	}
	// Near puts the three relevant documents first: NDCG@5 = 1 on every query (exact, all judged).
	if math.Abs(cli.Estimates.Runs[0].NDCG.Est-1) > 1e-12 || cli.Estimates.Runs[0].NDCG.SE != 0 {
		t.Errorf("near.run NDCG@5 %+v, want exactly 1 with no uncertainty", cli.Estimates.Runs[0].NDCG)
	}
	// Far retrieves none of them in its top 5.
	if cli.Estimates.Runs[1].NDCG.Est != 0 {
		t.Errorf("far.run NDCG@5 %+v, want 0", cli.Estimates.Runs[1].NDCG)
	}
	out.Reset()
	if err := runEvaluate(ctx, []string{"--db", db, "--project", "Floats", "--design", fmt.Sprint(planned.DesignID)}, &out, &errOut); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(out.String(), "near.run") || !strings.Contains(out.String(), want.Signal.Text) {
		t.Errorf("evaluate --design text lacks the runs or the signal %q:\n%s", want.Signal.Text, out.String())
	}

	// The same runs again under the same names are kept once; a dry run stores nothing.
	out.Reset()
	args = append([]string{"--db", db, "--project", "Floats", "--design", "stratified", "--depth", "2", "--max-depth", "10", "--budget", "30", "--dry-run", "--json"}, runs...)
	if err := runPlan(ctx, args, &out, &errOut); err != nil {
		t.Fatalf("plan --dry-run: %v", err)
	}
	kept, err := st.KeptRuns(ctx, p.ID)
	if err != nil || len(kept) != 2 {
		t.Errorf("kept runs after planning twice: %v, %v", kept, err)
	}
	ds, err := st.Designs(ctx, p.ID)
	if err != nil || len(ds) != 1 {
		t.Errorf("designs after a dry run: %d, %v; want the one design", len(ds), err)
	}

	// A run naming a query the project lacks is refused with what to change; no design is stored
	// (the run itself stays kept, to be planned from once the query is imported).
	stray := writeFile(t, "stray.run", "f9 Q0 f1-1 1 3.5 stray\n")
	err = runPlan(ctx, []string{"--db", db, "--project", "Floats", "--design", "depth", stray}, &out, &errOut)
	if err == nil || !strings.Contains(err.Error(), `"f9"`) {
		t.Errorf("unknown query: %v, want a problem naming f9", err)
	}
	if ds, _ := st.Designs(ctx, p.ID); len(ds) != 1 {
		t.Errorf("a refused design was stored: %d designs", len(ds))
	}
}
