package store

import (
	"context"
	"testing"

	"github.com/pertinent/pertinent/export"
)

// The adjudication page's majority and median (PairReview) equal what an export or an
// evaluation writes under the same consensus (FinalGrades), on grades whose two most
// frequent values sit either side of the two middle grades.
func TestAdjudicationConsensusEqualsFinalGrades(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, pairs, users := fixture(t, s, 1, 1, 6)
	var js []RecordedJudgment
	for i, g := range []int{0, 0, 1, 3, 3, 4} {
		js = append(js, RecordedJudgment{PairID: pairs[0], UserID: users[i], Grade: grade(g)})
	}
	record(t, s, p.ID, js...)
	rev, err := s.PairReview(ctx, pairs[0])
	if err != nil {
		t.Fatal(err)
	}
	if rev.Consensus == nil {
		t.Fatal("no consensus on the review")
	}
	for _, c := range []struct {
		method export.Consensus
		page   int
	}{{export.ConsensusMajority, rev.Consensus.Majority}, {export.ConsensusMedian, rev.Consensus.Median}} {
		q, _, err := s.FinalGrades(ctx, p.ID, export.LabelPolicy{Consensus: c.method})
		if err != nil {
			t.Fatal(err)
		}
		var got []int
		for _, docs := range q {
			for _, g := range docs {
				got = append(got, g)
			}
		}
		if len(got) != 1 || got[0] != c.page {
			t.Errorf("%s: final grades %v, adjudication page %d", c.method, got, c.page)
		}
	}
	// 0 and 3 tie (twice each); the median of 1 and 3 is 2, which 3 is closer to.
	if rev.Consensus.Majority != 3 || rev.Consensus.Median != 1 {
		t.Errorf("majority %d median %d, want 3 and 1", rev.Consensus.Majority, rev.Consensus.Median)
	}
}
