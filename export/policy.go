package export

import (
	"fmt"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/agreement"
)

// Consensus is how a final grade is formed from several judgments.
type Consensus string

// Consensus methods.
const (
	ConsensusMedian     Consensus = "median"      // lower median: agreement.MedianGrade
	ConsensusMajority   Consensus = "majority"    // ties: agreement.MajorityGrade
	ConsensusMean       Consensus = "mean"        // rounded half up
	ConsensusDawidSkene Consensus = "dawid-skene" // precomputed per pair (Dawid & Skene 1979)
)

// LabelPolicy says how final grades are decided and which pairs are left
// out of an export.
type LabelPolicy struct {
	// AdjudicationFirst uses a lead's adjudicated grade whenever there is
	// one; the judgment filters below then do not apply to that pair.
	AdjudicationFirst bool      `json:"adjudication_first"`
	Consensus         Consensus `json:"consensus"`
	// MinJudgments is the least number of grades (cannot-judge answers do
	// not count) a pair needs for a consensus; values below 1 mean 1.
	MinJudgments int `json:"min_judgments"`
	// MaxDisagreement is the largest allowed spread (highest minus lowest
	// grade) for a consensus; nil means no limit.
	MaxDisagreement *int `json:"max_disagreement"`
	// ExcludeCannotJudge leaves out pairs with any cannot-judge answer;
	// otherwise such answers are just not counted.
	ExcludeCannotJudge bool `json:"exclude_cannot_judge"`
	ExcludeFlagged     bool `json:"exclude_flagged"`
	ExcludeGold        bool `json:"exclude_gold"`
	// FillFrom names an external source whose grade becomes the final grade of a pair no
	// person graded (and no lead adjudicated); empty, such pairs are left out. Never the
	// default: a source's grades are not people's, and the manifest counts every pair filled.
	FillFrom string `json:"fill_from,omitempty"`
}

// PairLabels is what the policy needs to know about one pair.
type PairLabels struct {
	Adjudicated *int  // the lead's adjudicated grade, if any
	Grades      []int // current grades of the pair's judgments
	CannotJudge int   // number of cannot-judge answers
	Flagged     bool
	Gold        bool
	DawidSkene  *int // most likely grade from a Dawid-Skene fit, if computed
	Source      *int // the grade of the policy's FillFrom source, if it graded the pair
}

// Decision is the outcome of a policy for one pair.
type Decision struct {
	Grade    int
	Decided  string // e.g. "adjudicated", "median of 3"
	Include  bool
	Excluded string // why the pair is left out, when !Include
	Source   string // the source the grade comes from, when no person graded the pair
}

// Validate reports an unknown consensus method or negative limits.
func (p LabelPolicy) Validate() error {
	switch p.Consensus {
	case ConsensusMedian, ConsensusMajority, ConsensusMean, ConsensusDawidSkene:
	default:
		return pertinent.Errorf(pertinent.Invalid, "export", "unknown consensus %q (want median, majority, mean or dawid-skene)", p.Consensus)
	}
	if p.MaxDisagreement != nil && *p.MaxDisagreement < 0 {
		return pertinent.Errorf(pertinent.Invalid, "export", "max disagreement %d is negative", *p.MaxDisagreement)
	}
	return nil
}

func (p LabelPolicy) minJudgments() int { return max(p.MinJudgments, 1) }

// Apply decides one pair. Checks run in this order: gold, flagged,
// adjudication, cannot judge, number of grades, disagreement, consensus.
func (p LabelPolicy) Apply(in PairLabels) Decision {
	out := func(why string) Decision { return Decision{Excluded: why} }
	if p.ExcludeGold && in.Gold {
		return out("gold pair")
	}
	if p.ExcludeFlagged && in.Flagged {
		return out("flagged")
	}
	if p.AdjudicationFirst && in.Adjudicated != nil {
		return Decision{Grade: *in.Adjudicated, Decided: "adjudicated", Include: true}
	}
	if p.ExcludeCannotJudge && in.CannotJudge > 0 {
		return out("cannot judge")
	}
	n := len(in.Grades)
	if n == 0 && p.FillFrom != "" && in.Source != nil && in.Adjudicated == nil {
		return Decision{Grade: *in.Source, Decided: "source " + p.FillFrom, Include: true, Source: p.FillFrom}
	}
	if n == 0 || n < p.minJudgments() {
		return out(fmt.Sprintf("too few judgments (%d of %d)", n, p.minJudgments()))
	}
	if p.MaxDisagreement != nil {
		lo, hi := in.Grades[0], in.Grades[0]
		for _, g := range in.Grades {
			lo, hi = min(lo, g), max(hi, g)
		}
		if hi-lo > *p.MaxDisagreement {
			return out(fmt.Sprintf("disagreement (spread %d above %d)", hi-lo, *p.MaxDisagreement))
		}
	}
	of := " of " + strconv.Itoa(n)
	switch p.Consensus {
	case ConsensusMedian:
		return Decision{Grade: agreement.MedianGrade(in.Grades), Decided: "median" + of, Include: true}
	case ConsensusMajority:
		return Decision{Grade: agreement.MajorityGrade(in.Grades), Decided: "majority" + of, Include: true}
	case ConsensusMean:
		return Decision{Grade: meanGrade(in.Grades), Decided: "mean" + of, Include: true}
	case ConsensusDawidSkene:
		if in.DawidSkene == nil {
			return out("no Dawid-Skene estimate")
		}
		return Decision{Grade: *in.DawidSkene, Decided: "dawid-skene" + of, Include: true}
	}
	return out(fmt.Sprintf("unknown consensus %q", p.Consensus))
}

// Describe says the policy in one readable sentence.
func (p LabelPolicy) Describe() string {
	var method string
	switch p.Consensus {
	case ConsensusMedian:
		method = "the median grade (lower median on even counts)"
	case ConsensusMajority:
		method = "the majority grade (ties go to the grade closest to the median, the midpoint of the two middle grades on even counts, then the lower)"
	case ConsensusMean:
		method = "the mean grade rounded half up"
	case ConsensusDawidSkene:
		method = "the most likely grade of a Dawid-Skene model"
	default:
		method = fmt.Sprintf("an unknown consensus %q", p.Consensus)
	}
	var b strings.Builder
	b.WriteString("Final grade: ")
	if p.AdjudicationFirst {
		b.WriteString("the adjudicated grade where there is one, otherwise ")
	}
	b.WriteString(method)
	b.WriteString(" of at least ")
	b.WriteString(strconv.Itoa(p.minJudgments()))
	if p.minJudgments() == 1 {
		b.WriteString(" judgment")
	} else {
		b.WriteString(" judgments")
	}
	var out []string
	if p.MaxDisagreement != nil {
		out = append(out, fmt.Sprintf("pairs whose grades spread more than %d", *p.MaxDisagreement))
	}
	if p.ExcludeCannotJudge {
		out = append(out, "pairs with a cannot-judge answer")
	}
	if p.ExcludeFlagged {
		out = append(out, "flagged pairs")
	}
	if p.ExcludeGold {
		out = append(out, "gold pairs")
	}
	if p.FillFrom != "" {
		b.WriteString("; where no person graded a pair, the grade of source " + p.FillFrom)
	}
	switch len(out) {
	case 0:
		b.WriteString("; no further exclusions.")
	default:
		b.WriteString("; excluded: ")
		b.WriteString(strings.Join(out, ", "))
		b.WriteString(".")
	}
	return b.String()
}
