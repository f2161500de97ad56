package agreement

import (
	"fmt"
	"slices"
)

// AssessorLeniency is how far one rater grades above or below the others.
//
// Against the consensus: on every item the rater graded together with someone else, the
// difference between the rater's grade and the lower median of the other raters' grades
// (LeaveOneOutMedian, as in RaterStats). MeanDiff is its mean, CI the Student t interval over
// those items (n-1 degrees of freedom; items are taken as independent), Above, Below and Equal
// the shares of items where the rater's grade is higher, lower or the same.
//
// The lower median of an even number of others sits at or below their midpoint, so with an
// odd number of raters per item a fair rater shows a small positive difference (about +0.15
// grades with five raters in the tests' simulation); compare raters with each other, or count
// raters so that the others are odd in number.
//
// Against Dawid-Skene's true grade: Over is the probability that one of the rater's grades is
// above the item's true grade, sum over t of prior(t) * sum over g > t of confusion(t, g), and
// Under the same below the diagonal; 1 - Over - Under is the chance of the true grade itself.
// Even a fair rater has Over above Under when most items are 0s, which cannot be under-graded,
// so Balance compares them only where both are possible: the prior-weighted mean of
// P(above) - P(below) over true grades 1..K-2 (over all grades on a two-grade scale).
//
// Summary says both in words: "lenient" when the interval lies above 0, "strict" when below,
// "in line with the others" otherwise; "over-grading" when Balance is DSLeanMargin or more,
// "under-grading" when it is -DSLeanMargin or less.
type AssessorLeniency struct {
	Rater    string `json:"rater"`
	Items    int    `json:"items"`
	MeanDiff Value  `json:"mean_diff"`
	CI       CI     `json:"ci"`
	Above    Value  `json:"above"`
	Below    Value  `json:"below"`
	Equal    Value  `json:"equal"`
	Over     Value  `json:"over"`
	Under    Value  `json:"under"`
	Balance  Value  `json:"balance"`
	Summary  string `json:"summary"`
}

// DSLeanMargin is how far Balance must be from 0 before Summary names a lean: a rater one
// grade off on one item in twenty.
const DSLeanMargin = 0.05

// Leniency returns AssessorLeniency for every rater in RaterNames order, with intervals at
// level (e.g. 0.95) and Dawid-Skene fitted with ds.
func Leniency(d *Data, level float64, ds DSOptions) []AssessorLeniency {
	if level <= 0 || level >= 1 {
		level = 0.95
	}
	ix := d.built()
	nR := ix.nRaters()
	sum := make([]float64, nR)
	sq := make([]float64, nR)
	n := make([]int64, nR)
	above := make([]int64, nR)
	below := make([]int64, nR)
	sorted := make([]uint8, 0, ix.maxM)
	for i := 0; i < ix.nItems(); i++ {
		rs := ix.rater[ix.start[i]:ix.start[i+1]]
		gs := ix.grade[ix.start[i]:ix.start[i+1]]
		if len(rs) < 2 {
			continue
		}
		sorted = append(sorted[:0], gs...)
		slices.Sort(sorted)
		for p, r := range rs {
			diff := int(gs[p]) - int(LeaveOneOutMedian(sorted, gs[p]))
			n[r]++
			sum[r] += float64(diff)
			sq[r] += float64(diff * diff)
			switch {
			case diff > 0:
				above[r]++
			case diff < 0:
				below[r]++
			}
		}
	}
	fit := DawidSkene(d, ds)
	out := make([]AssessorLeniency, nR)
	for r, name := range ix.raterNames {
		a := AssessorLeniency{Rater: name, Items: int(n[r])}
		if n[r] == 0 {
			why := "no item graded by this rater was graded by another"
			a.MeanDiff, a.CI = undefined(why), undefinedInterval(why)
			a.Above, a.Below, a.Equal = undefined(why), undefined(why), undefined(why)
		} else {
			a.MeanDiff, a.CI = meanWithTInterval(sum[r], sq[r], n[r], level)
			a.Above, a.Below, a.Equal = share(above[r], n[r]), share(below[r], n[r]), share(n[r]-above[r]-below[r], n[r])
		}
		var over, under, bal, balW float64
		k := len(fit.Priors)
		for t, row := range fit.Confusion[r] {
			var o, u float64
			for g, p := range row {
				switch {
				case g > t:
					o += p
				case g < t:
					u += p
				}
			}
			over += fit.Priors[t] * o
			under += fit.Priors[t] * u
			if k == 2 || (t > 0 && t < k-1) {
				bal += fit.Priors[t] * (o - u)
				balW += fit.Priors[t]
			}
		}
		a.Over, a.Under = defined(over), defined(under)
		if balW > 0 {
			a.Balance = defined(bal / balW)
		} else {
			a.Balance = undefined("no true grade with both directions possible has any weight")
		}
		a.Summary = leniencySummary(a, level)
		out[r] = a
	}
	return out
}

func leniencySummary(a AssessorLeniency, level float64) string {
	var s string
	switch {
	case !a.MeanDiff.OK:
		s = "not compared with the others: " + a.MeanDiff.Why
	case !a.CI.Lo.OK:
		s = fmt.Sprintf("%+.2f grades from the others' consensus on its only shared item", a.MeanDiff.V)
	default:
		word := "in line with the others"
		switch {
		case a.CI.Lo.V > 0:
			word = "lenient"
		case a.CI.Hi.V < 0:
			word = "strict"
		}
		s = fmt.Sprintf("%s: %+.2f grades from the others' consensus on average (%.0f%% interval %+.2f to %+.2f, %d items); above it on %.0f%%, below on %.0f%%",
			word, a.MeanDiff.V, 100*level, a.CI.Lo.V, a.CI.Hi.V, a.Items, 100*a.Above.V, 100*a.Below.V)
	}
	lean := "neither over- nor under-grading"
	switch {
	case !a.Balance.OK:
		lean = a.Balance.Why
	case a.Balance.V >= DSLeanMargin:
		lean = "over-grading"
	case a.Balance.V <= -DSLeanMargin:
		lean = "under-grading"
	}
	return s + fmt.Sprintf("; Dawid-Skene: above the true grade with probability %.2f, below with %.2f (%s)", a.Over.V, a.Under.V, lean)
}

// PairGrade is one assessor's grade of one pair, the pair named by any comparable key.
type PairGrade[K comparable] struct {
	Pair     K
	Assessor string
	Grade    int
}

// Without says what becomes of an assessor's grades in WithoutAssessor.
type Without int

const (
	// ReplaceByOthers puts the others' consensus in place of the assessor's grade; a pair
	// nobody else graded keeps the assessor's grade, there being nothing to replace it with.
	ReplaceByOthers Without = iota
	// LeaveOut drops the assessor's grades; a pair nobody else graded has no final grade.
	LeaveOut
)

// WithoutAssessor makes final grades with and without each assessor. A pair's final grade is
// fixed[pair] when there is one (an adjudication, which no assessor changes), else
// consensus(its grades); consensus nil means MedianGrade, the label policy's median. actual
// holds the final grades from every judgment; without[a] the final grades with a's grades
// replaced or left out as w says (the others' consensus is consensus of their grades, so for
// MedianGrade it is LeaveOneOutMedian).
func WithoutAssessor[K comparable](js []PairGrade[K], fixed map[K]int, consensus func([]int) int, w Without) (actual map[K]int, without map[string]map[K]int) {
	if consensus == nil {
		consensus = MedianGrade
	}
	type entry struct {
		assessors []string
		grades    []int
	}
	byPair := make(map[K]*entry)
	var pairs []K
	assessors := map[string]bool{}
	for _, j := range js {
		e := byPair[j.Pair]
		if e == nil {
			e = &entry{}
			byPair[j.Pair] = e
			pairs = append(pairs, j.Pair)
		}
		e.assessors = append(e.assessors, j.Assessor)
		e.grades = append(e.grades, j.Grade)
		assessors[j.Assessor] = true
	}
	actual = make(map[K]int, len(pairs)+len(fixed))
	for p, g := range fixed {
		actual[p] = g
	}
	for _, p := range pairs {
		if _, ok := fixed[p]; !ok {
			actual[p] = consensus(byPair[p].grades)
		}
	}
	without = make(map[string]map[K]int, len(assessors))
	others := make([]int, 0, 8)
	for a := range assessors {
		m := make(map[K]int, len(actual))
		for p, g := range fixed {
			m[p] = g
		}
		for _, p := range pairs {
			if _, ok := fixed[p]; ok {
				continue
			}
			e := byPair[p]
			if !slices.Contains(e.assessors, a) {
				m[p] = actual[p]
				continue
			}
			others = others[:0]
			for i, x := range e.assessors {
				if x != a {
					others = append(others, e.grades[i])
				}
			}
			switch {
			case len(others) == 0 && w == ReplaceByOthers:
				m[p] = actual[p]
			case len(others) == 0:
				// left out: no final grade
			case w == ReplaceByOthers:
				c := consensus(others)
				repl := slices.Clone(e.grades)
				for i, x := range e.assessors {
					if x == a {
						repl[i] = c
					}
				}
				m[p] = consensus(repl)
			default:
				m[p] = consensus(others)
			}
		}
		without[a] = m
	}
	return actual, without
}

// AloneAndOthers pairs each assessor's own grades with the others' consensus on the same
// pairs: alone[a] holds a's grade of every pair a graded that someone else graded too, and
// others[a] the consensus of the other grades of those pairs (consensus nil means
// MedianGrade). Scoring runs under both, as Voorhees (IPM 36, 2000) scored runs under each
// assessor's judgments, shows what one assessor's habits alone do to the order; replacing one
// of three grades (WithoutAssessor) hides most of it behind the median.
func AloneAndOthers[K comparable](js []PairGrade[K], consensus func([]int) int) (alone, others map[string]map[K]int) {
	if consensus == nil {
		consensus = MedianGrade
	}
	byPair := make(map[K][]PairGrade[K])
	for _, j := range js {
		byPair[j.Pair] = append(byPair[j.Pair], j)
	}
	alone, others = map[string]map[K]int{}, map[string]map[K]int{}
	rest := make([]int, 0, 8)
	for p, gs := range byPair {
		for _, mine := range gs {
			rest = rest[:0]
			for _, o := range gs {
				if o.Assessor != mine.Assessor {
					rest = append(rest, o.Grade)
				}
			}
			if len(rest) == 0 {
				continue
			}
			if alone[mine.Assessor] == nil {
				alone[mine.Assessor], others[mine.Assessor] = map[K]int{}, map[K]int{}
			}
			alone[mine.Assessor][p] = mine.Grade
			others[mine.Assessor][p] = consensus(rest)
		}
	}
	return alone, others
}
