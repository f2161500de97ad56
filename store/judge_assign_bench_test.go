package store

import (
	"context"
	"errors"
	"fmt"
	"testing"
)

// BenchmarkNextPairLargeProject times lease-and-judge cycles of assessors on a project of
// 100,000 pairs (5,000 queries of 20 documents), the size the engine has to stay fast at.
func BenchmarkNextPairLargeProject(b *testing.B) {
	s, err := Open(context.Background(), b.TempDir()+"/large.db")
	if err != nil {
		b.Fatal(err)
	}
	defer s.Close()
	ctx := context.Background()
	p, err := s.CreateProject(ctx, NewProject{Name: "large", JudgmentsPerPair: 3}, 0)
	if err != nil {
		b.Fatal(err)
	}
	SetPasswordCost(4)
	var users []int64
	for i := range 8 {
		u, err := s.CreateUser(ctx, fmt.Sprintf("bench%d", i), "", RoleAssessor, "long enough password")
		if err != nil {
			b.Fatal(err)
		}
		if err := s.SetMember(ctx, p.ID, u.ID, RoleAssessor, 0); err != nil {
			b.Fatal(err)
		}
		users = append(users, u.ID)
	}
	err = s.Load(ctx, p.ID, func(l *Loader) error {
		for q := range 5000 {
			qid, err := l.Query(Query{ExternalID: fmt.Sprint(q), Text: "query"})
			if err != nil {
				return err
			}
			for d := range 20 {
				did, err := l.Document(Document{ExternalID: fmt.Sprintf("%d-%d", q, d), Title: "doc"})
				if err != nil {
					return err
				}
				if _, err := l.Pair(PairSpec{QueryID: qid, DocumentID: did}); err != nil {
					return err
				}
			}
		}
		return nil
	})
	if err != nil {
		b.Fatal(err)
	}
	g := 2
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		u := users[i%len(users)]
		v, err := s.NextPair(ctx, p.ID, u)
		if errors.Is(err, ErrNoWork) {
			b.Fatal("ran out of work")
		}
		if err != nil {
			b.Fatal(err)
		}
		if _, err := s.Submit(ctx, Submission{PairID: v.PairID, UserID: u, Grade: &g}); err != nil {
			b.Fatal(err)
		}
	}
}
