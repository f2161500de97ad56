package main

import (
	"bytes"
	"context"
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/export"
	"github.com/pertinent/pertinent/store"
)

// exportDB makes a database with project "Buoys": query b1 with documents x (graded 2 2)
// and y (graded 0 0), query b2 with document z (graded 3 4).
func exportDB(t *testing.T) string {
	t.Helper()
	_, path := newTestDB(t, "e.db", func(ctx context.Context, st *store.Store) {
		var users []int64
		for _, n := range []string{"ann", "bob"} {
			u, err := st.CreateUser(ctx, n, "", store.RoleAssessor, "a long enough password")
			if err != nil {
				t.Fatal(err)
			}
			users = append(users, u.ID)
		}
		p, err := st.CreateProject(ctx, store.NewProject{Name: "Buoys"}, 0)
		if err != nil {
			t.Fatal(err)
		}
		err = st.Load(ctx, p.ID, func(l *store.Loader) error {
			for _, r := range []struct {
				q, d   string
				grades [2]int
			}{{"b1", "x", [2]int{2, 2}}, {"b1", "y", [2]int{0, 0}}, {"b2", "z", [2]int{3, 4}}} {
				qid, err := l.Query(store.Query{ExternalID: r.q, Text: r.q})
				if err != nil {
					return err
				}
				did, err := l.Document(store.Document{ExternalID: r.d})
				if err != nil {
					return err
				}
				pid, err := l.Pair(store.PairSpec{QueryID: qid, DocumentID: did})
				if err != nil {
					return err
				}
				for i, g := range r.grades {
					g := g
					if err := l.Judgment(store.RecordedJudgment{PairID: pid, UserID: users[i], Grade: &g}); err != nil {
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
	return path
}

func TestExportCommandWritesFilesAndManifest(t *testing.T) {
	db := exportDB(t)
	out := filepath.Join(t.TempDir(), "set")
	var stdout, stderr bytes.Buffer
	err := runExport(context.Background(), []string{"--db", db, "--project", "Buoys", "--format", "qrels", "--out", out, "--consensus", "mean"}, &stdout, &stderr)
	if err != nil {
		t.Fatalf("%v\n%s", err, stderr.String())
	}
	b, err := os.ReadFile(filepath.Join(out, "all.qrels"))
	if err != nil {
		t.Fatal(err)
	}
	// mean of 3 and 4 is 3.5, rounded half up to 4.
	if want := "b1 0 x 2\nb1 0 y 0\nb2 0 z 4\n"; string(b) != want {
		t.Errorf("all.qrels =\n%s\nwant\n%s", b, want)
	}
	var m export.Manifest
	mb, _ := os.ReadFile(filepath.Join(out, "manifest.json"))
	if err := json.Unmarshal(mb, &m); err != nil || m.Rows != 3 || m.Queries != 2 || m.LabelPolicy.Consensus != export.ConsensusMean {
		t.Errorf("manifest %s (err %v)", mb, err)
	}
	if stderr.Len() != 0 {
		t.Errorf("progress written to a non-terminal: %q", stderr.String())
	}
	err = runExport(context.Background(), []string{"--db", db, "--project", "Buoys", "--format", "qrels", "--out", out, "--split", "0.5,0.5"}, &stdout, &stderr)
	if err == nil || !strings.Contains(err.Error(), "three ratios") {
		t.Errorf("two ratios: err %v", err)
	}
}

func TestEvaluateCommand(t *testing.T) {
	db := exportDB(t)
	run := writeFile(t, "r.run", "b1 Q0 y 1 2.0 t\nb1 Q0 x 2 1.0 t\nb2 Q0 z 1 1.0 t\n")
	var stdout, stderr bytes.Buffer
	if err := runEvaluate(context.Background(), []string{"--db", db, "--project", "Buoys", "--json", run}, &stdout, &stderr); err != nil {
		t.Fatalf("%v\n%s", err, stderr.String())
	}
	var ev store.Evaluation
	if err := json.Unmarshal(stdout.Bytes(), &ev); err != nil {
		t.Fatal(err)
	}
	// b1: the grade-2 document at rank 2: DCG = 3/log2(3), ideal 3/log2(2) = 3, so
	// NDCG = 1/log2(3) = 0.6309 (exponential gain, Burges et al. 2005; worked by hand).
	// b2: the only document first, NDCG 1.
	q := ev.Summaries[0].PerQuery
	if len(q) != 2 || math.Abs(q[0].NDCG-1/math.Log2(3)) > 1e-12 || q[1].NDCG != 1 {
		t.Fatalf("per query %+v", q)
	}
	stdout.Reset()
	run2 := writeFile(t, "s.run", "b1 Q0 x 1 2.0 u\nb1 Q0 y 2 1.0 u\nb2 Q0 z 1 1.0 u\n")
	if err := runEvaluate(context.Background(), []string{"--db", db, "--project", "Buoys", run, run2}, &stdout, &stderr); err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"s.run minus r.run", "randomisation p", "ndcg", "0.6309"} {
		if !strings.Contains(stdout.String(), want) {
			t.Errorf("comparison text lacks %q:\n%s", want, stdout.String())
		}
	}
}
