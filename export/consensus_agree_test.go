package export

import (
	"fmt"
	"testing"

	"github.com/pertinent/pertinent/agreement"
)

// The export's majority and median are the agreement package's: on grades where the
// two middle grades differ and the two most frequent grades sit on either side, both
// give the same answer (the adjudication page shows agreement's, exports write ours).
func TestPolicyConsensusEqualsAgreementConsensus(t *testing.T) {
	grades := []int{1, 1, 2, 4, 4, 5}
	d := agreement.NewData(6)
	for r, g := range grades {
		if err := d.Add("pair", fmt.Sprint("r", r), g); err != nil {
			t.Fatal(err)
		}
	}
	c := agreement.Consensus(d)[0]
	maj := LabelPolicy{Consensus: ConsensusMajority}.Apply(PairLabels{Grades: grades})
	med := LabelPolicy{Consensus: ConsensusMedian}.Apply(PairLabels{Grades: grades})
	if maj.Grade != c.Majority || med.Grade != c.Median {
		t.Errorf("policy majority %d median %d; agreement majority %d median %d", maj.Grade, med.Grade, c.Majority, c.Median)
	}
	// Tied 1 and 4 (twice each); the median is the midpoint 3 of the middle grades 2 and 4,
	// so 4 is closer.
	if maj.Grade != 4 || med.Grade != 2 {
		t.Errorf("majority %d median %d, want 4 and 2", maj.Grade, med.Grade)
	}
}

// Random grade lists: the policy's median and majority equal agreement's on every one.
func TestPolicyConsensusEqualsAgreementOnRandomGrades(t *testing.T) {
	seed := uint64(1)
	next := func(n int) int {
		seed = seed*6364136223846793005 + 1442695040888963407
		return int(seed>>33) % n
	}
	for i := 0; i < 2000; i++ {
		k := 2 + next(6)
		gs := make([]int, 1+next(8))
		d := agreement.NewData(k)
		for r := range gs {
			gs[r] = next(k)
			d.Add("pair", fmt.Sprint("r", r), gs[r])
		}
		c := agreement.Consensus(d)[0]
		maj := LabelPolicy{Consensus: ConsensusMajority}.Apply(PairLabels{Grades: gs}).Grade
		med := LabelPolicy{Consensus: ConsensusMedian}.Apply(PairLabels{Grades: gs}).Grade
		if maj != c.Majority || med != c.Median {
			t.Fatalf("%v: policy majority %d median %d; agreement %d %d", gs, maj, med, c.Majority, c.Median)
		}
	}
}
