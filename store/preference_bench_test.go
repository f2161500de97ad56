package store

import (
	"context"
	"errors"
	"fmt"
	"testing"
)

// BenchmarkPreferenceNothingOpen times NextComparison when nothing is open for the
// assessor (every comparison answered), which is when the project's whole schedule is
// worked out again: 500 queries × 20 documents, all settled by adjudication, two of each
// query's at grade 4 and the rest below the threshold, and every comparison answered.
func BenchmarkPreferenceNothingOpen(b *testing.B) {
	ctx := context.Background()
	SetPasswordCost(4)
	s, err := Open(ctx, b.TempDir()+"/bench.db")
	if err != nil {
		b.Fatal(err)
	}
	defer s.Close()
	p, lead := leadProject(b, s, NewProject{Name: "bench", JudgmentsPerPair: 1})
	u, err := s.CreateUser(ctx, "asr", "", RoleAssessor, "long enough password")
	if err != nil {
		b.Fatal(err)
	}
	if err := s.SetMember(ctx, p.ID, u.ID, RoleAssessor, lead.ID); err != nil {
		b.Fatal(err)
	}
	var pairs []int64
	err = s.Load(ctx, p.ID, func(l *Loader) error {
		for q := range 500 {
			qid, err := l.Query(Query{ExternalID: fmt.Sprintf("q%d", q), Text: "query"})
			if err != nil {
				return err
			}
			for d := range 20 {
				did, err := l.Document(Document{ExternalID: fmt.Sprintf("q%d-d%d", q, d)})
				if err != nil {
					return err
				}
				pid, err := l.Pair(PairSpec{QueryID: qid, DocumentID: did})
				if err != nil {
					return err
				}
				pairs = append(pairs, pid)
			}
		}
		return nil
	})
	if err != nil {
		b.Fatal(err)
	}
	for i, pid := range pairs {
		g := 1
		if i%20 < 2 {
			g = 4
		}
		if _, err := s.Adjudicate(ctx, pid, lead.ID, g, ""); err != nil {
			b.Fatal(err)
		}
	}
	if err := s.SetTaskKind(ctx, p.ID, TaskPreference, nil, lead.ID); err != nil {
		b.Fatal(err)
	}
	for {
		v, err := s.NextComparison(ctx, p.ID, u.ID)
		if errors.Is(err, ErrNoWork) {
			break
		}
		if err != nil {
			b.Fatal(err)
		}
		if _, err := s.AnswerComparison(ctx, PreferenceSubmission{ComparisonID: v.ComparisonID, ProjectID: p.ID, UserID: u.ID,
			LeftDoc: v.Left.ID, Outcome: "left"}); err != nil {
			b.Fatal(err)
		}
	}
	if open, _, _, err := s.PreferenceProgress(ctx, p.ID); err != nil || open != 0 {
		b.Fatalf("%d comparisons still open (%v)", open, err)
	}
	b.ResetTimer()
	for range b.N {
		if _, err := s.NextComparison(ctx, p.ID, u.ID); err != nil && !errors.Is(err, ErrNoWork) {
			b.Fatal(err)
		}
	}
}
