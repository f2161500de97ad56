package export

import (
	"testing"

	"github.com/pertinent/pertinent/agreement"
)

func intp(i int) *int { return &i }

func TestConsensusHelpers(t *testing.T) {
	cases := []struct {
		gs                  []int
		median, major, mean int
	}{
		{[]int{2}, 2, 2, 2},
		{[]int{1, 3}, 1, 1, 2},          // lower median 1; majority tie 1,3 both 1 from the midpoint 2 -> lower 1; mean 2.0
		{[]int{3, 0, 4}, 3, 3, 2},       // all once: 3 is the median; mean 7/3 = 2.33 -> 2
		{[]int{0, 1}, 0, 0, 1},          // mean 0.5 rounds half up to 1
		{[]int{2, 2, 4, 4, 0}, 2, 2, 2}, // tie 2 vs 4 around median 2 -> 2; mean 12/5 = 2.4 -> 2
		{[]int{4, 4, 1, 1, 2, 3}, 2, 1, 3},
		// majority tie 4 and 1 (twice each), median the midpoint 2.5 of 2 and 3: both 1.5 away -> lower 1; mean 15/6 = 2.5 -> 3
		{[]int{0, 0, 0, 4}, 0, 0, 1}, // mean 1.0
		{[]int{3, 4, 4}, 4, 4, 4},    // mean 11/3 = 3.67 -> 4
		{[]int{1, 2, 2, 3}, 2, 2, 2}, // mean 2.0
		{[]int{2, 3}, 2, 2, 3},       // majority tie 2 vs 3, both 0.5 from the midpoint 2.5 -> lower 2; mean 2.5 -> 3
		{[]int{1, 3, 3, 1}, 1, 1, 2}, // tie 1 vs 3 around the midpoint 2 -> lower 1
	}
	for _, c := range cases {
		if got := agreement.MedianGrade(c.gs); got != c.median {
			t.Errorf("median %v = %d, want %d", c.gs, got, c.median)
		}
		if got := agreement.MajorityGrade(c.gs); got != c.major {
			t.Errorf("majority %v = %d, want %d", c.gs, got, c.major)
		}
		if got := meanGrade(c.gs); got != c.mean {
			t.Errorf("mean %v = %d, want %d", c.gs, got, c.mean)
		}
	}
}

func TestMajorityTieEquidistantTakesLower(t *testing.T) {
	// 1 and 3 twice each, 2 once: median 2; 1 and 3 are both one away -> 1
	if got := agreement.MajorityGrade([]int{1, 1, 3, 3, 2}); got != 1 {
		t.Errorf("got %d", got)
	}
}

func TestPolicyApply(t *testing.T) {
	full := LabelPolicy{AdjudicationFirst: true, Consensus: ConsensusMedian, MinJudgments: 2, MaxDisagreement: intp(1),
		ExcludeCannotJudge: true, ExcludeFlagged: true, ExcludeGold: true}
	loose := LabelPolicy{Consensus: ConsensusMajority}
	cases := []struct {
		name string
		p    LabelPolicy
		in   PairLabels
		want Decision
	}{
		{"gold first", full, PairLabels{Gold: true, Adjudicated: intp(3)}, Decision{Excluded: "gold pair"}},
		{"flagged", full, PairLabels{Flagged: true, Grades: []int{2, 2}}, Decision{Excluded: "flagged"}},
		{"adjudicated wins over filters", full, PairLabels{Adjudicated: intp(0), Grades: []int{4}, CannotJudge: 2}, Decision{Grade: 0, Decided: "adjudicated", Include: true}},
		{"cannot judge", full, PairLabels{Grades: []int{2, 2}, CannotJudge: 1}, Decision{Excluded: "cannot judge"}},
		{"too few", full, PairLabels{Grades: []int{2}}, Decision{Excluded: "too few judgments (1 of 2)"}},
		{"spread", full, PairLabels{Grades: []int{0, 2, 1}}, Decision{Excluded: "disagreement (spread 2 above 1)"}},
		{"median", full, PairLabels{Grades: []int{2, 1, 1, 2}}, Decision{Grade: 1, Decided: "median of 4", Include: true}},
		{"adjudication ignored when not first", loose, PairLabels{Adjudicated: intp(4), Grades: []int{0, 0, 3}}, Decision{Grade: 0, Decided: "majority of 3", Include: true}},
		{"no grades at all", loose, PairLabels{CannotJudge: 3}, Decision{Excluded: "too few judgments (0 of 1)"}},
		{"cannot judge not counted", loose, PairLabels{Grades: []int{3}, CannotJudge: 2, Gold: true, Flagged: true}, Decision{Grade: 3, Decided: "majority of 1", Include: true}},
		{"mean", LabelPolicy{Consensus: ConsensusMean}, PairLabels{Grades: []int{1, 2}}, Decision{Grade: 2, Decided: "mean of 2", Include: true}},
		{"dawid-skene", LabelPolicy{Consensus: ConsensusDawidSkene}, PairLabels{Grades: []int{1, 2}, DawidSkene: intp(1)}, Decision{Grade: 1, Decided: "dawid-skene of 2", Include: true}},
		{"dawid-skene missing", LabelPolicy{Consensus: ConsensusDawidSkene}, PairLabels{Grades: []int{1, 2}}, Decision{Excluded: "no Dawid-Skene estimate"}},
		{"spread zero limit", LabelPolicy{Consensus: ConsensusMedian, MaxDisagreement: intp(0)}, PairLabels{Grades: []int{2, 3}}, Decision{Excluded: "disagreement (spread 1 above 0)"}},
	}
	for _, c := range cases {
		if got := c.p.Apply(c.in); got != c.want {
			t.Errorf("%s: got %+v, want %+v", c.name, got, c.want)
		}
	}
}

func TestPolicyValidate(t *testing.T) {
	if err := (LabelPolicy{Consensus: "mode"}).Validate(); err == nil {
		t.Error("unknown consensus accepted")
	}
	if err := (LabelPolicy{Consensus: ConsensusMean, MaxDisagreement: intp(-1)}).Validate(); err == nil {
		t.Error("negative max disagreement accepted")
	}
	if err := (LabelPolicy{Consensus: ConsensusDawidSkene}).Validate(); err != nil {
		t.Error(err)
	}
}

func TestPolicyDescribe(t *testing.T) {
	full := LabelPolicy{AdjudicationFirst: true, Consensus: ConsensusMedian, MinJudgments: 2, MaxDisagreement: intp(1),
		ExcludeCannotJudge: true, ExcludeFlagged: true, ExcludeGold: true}
	want := "Final grade: the adjudicated grade where there is one, otherwise the median grade (lower median on even counts) of at least 2 judgments; " +
		"excluded: pairs whose grades spread more than 1, pairs with a cannot-judge answer, flagged pairs, gold pairs."
	if got := full.Describe(); got != want {
		t.Errorf("got  %s\nwant %s", got, want)
	}
	want = "Final grade: the mean grade rounded half up of at least 1 judgment; no further exclusions."
	if got := (LabelPolicy{Consensus: ConsensusMean}).Describe(); got != want {
		t.Errorf("got  %s\nwant %s", got, want)
	}
}
