package store

import (
	"context"
	"errors"
	"testing"
)

// PairJudgments shows every row of a pair, the undone one too; JudgedCount agrees with the
// current rows; ExpireLeases hands a leased pair to the next assessor who asks.
func TestJudgeInspection(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, pairs, users := fixture(t, s, 1, 1, 3)
	for _, u := range users[:2] {
		if v, err := s.NextPair(ctx, p.ID, u); err != nil || v.PairID != pairs[0] {
			t.Fatalf("user %d offered %+v, %v; want pair %d", u, v, err, pairs[0])
		}
	}
	if _, err := s.NextPair(ctx, p.ID, users[2]); !errors.Is(err, ErrNoWork) {
		t.Fatalf("third assessor of a pair needing two: %v, want no work while both hold leases", err)
	}
	if n, err := s.ExpireLeases(ctx, users[0]); err != nil || n != 1 {
		t.Fatalf("ExpireLeases = %d, %v; want the one lease", n, err)
	}
	if v, err := s.NextPair(ctx, p.ID, users[2]); err != nil || v.PairID != pairs[0] {
		t.Fatalf("after the lease ended the third assessor got %+v, %v", v, err)
	}

	for _, u := range users[1:] {
		if _, err := s.Submit(ctx, Submission{PairID: pairs[0], UserID: u, Grade: grade(3)}); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := s.Undo(ctx, p.ID, users[2]); err != nil {
		t.Fatal(err)
	}
	js, err := s.PairJudgments(ctx, pairs[0])
	if err != nil {
		t.Fatal(err)
	}
	if len(js) != 2 || js[0].UserID != users[1] || !js[0].Current || js[1].UserID != users[2] || js[1].Current || !js[1].Withdrawn ||
		js[0].ID > js[1].ID || *js[1].Grade != 3 {
		t.Fatalf("PairJudgments = %+v; want users[1]'s current grade, then users[2]'s withdrawn one", js)
	}
	if n, err := s.JudgedCount(ctx, pairs[0]); err != nil || n != 1 {
		t.Errorf("JudgedCount = %d, %v; want 1 current judgment", n, err)
	}
	if _, err := s.JudgedCount(ctx, -1); !errors.Is(err, ErrNotFound) {
		t.Errorf("JudgedCount of no pair: %v, want not found", err)
	}
}
