package rankeval

import (
	"cmp"
	"math"
	"slices"

	"github.com/pertinent/pertinent"
)

// How far a change of judgments moves a leaderboard follows Voorhees (2000), "Variations in
// relevance judgments and the measurement of retrieval effectiveness", Information Processing
// & Management 36(5), 697-716: order the runs by their mean score under each set of
// judgments, then report Kendall's tau between the two orders and the swaps, the pairs of runs
// whose order flips.

// KendallTau is Kendall's tau-b between x and y (the same items in the same order):
// (concordant - discordant) / sqrt((n0 - tx)(n0 - ty)), n0 = n(n-1)/2, tx and ty the pairs
// tied in x and in y. A pair tied in both counts in tx and ty and in neither sum. It is
// undefined (an error) for fewer than two items or when x or y is constant. The counts are
// exact integers, so the only rounding is in the square root and the division.
func KendallTau(x, y []float64) (float64, error) {
	n := len(x)
	if len(y) != n {
		return 0, pertinent.Errorf(pertinent.Invalid, "rankeval", "%d and %d values to correlate", len(x), len(y))
	}
	if n < 2 {
		return 0, pertinent.Errorf(pertinent.Invalid, "rankeval", "%d values: Kendall's tau needs at least 2", n)
	}
	// O(n^2) is fine for the tens to hundreds of runs a leaderboard holds.
	var s, tx, ty int64
	for i := 0; i < n; i++ {
		for j := i + 1; j < n; j++ {
			a, b := cmp.Compare(x[i], x[j]), cmp.Compare(y[i], y[j])
			if a == 0 {
				tx++
			}
			if b == 0 {
				ty++
			}
			s += int64(a * b)
		}
	}
	n0 := int64(n) * int64(n-1) / 2
	if tx == n0 || ty == n0 {
		return 0, pertinent.Errorf(pertinent.Invalid, "rankeval", "every value is the same on one side: Kendall's tau is undefined")
	}
	// One square root of the product (exact below 2^53, some 9,000 runs a side) keeps tau at
	// exactly 1 when the orders are the same.
	tau := float64(s) / math.Sqrt(float64(n0-tx)*float64(n0-ty))
	return max(-1, min(1, tau)), nil
}

// RunPair is two runs whose order differs between two leaderboards. Before and After are
// the sign of score(A) - score(B) in each (-1, 0 for a tie, 1); A sorts before B by name.
type RunPair struct {
	A      string `json:"a"`
	B      string `json:"b"`
	Before int    `json:"before"`
	After  int    `json:"after"`
}

// OrderComparison compares two leaderboards of the same runs: Before and After map each run to
// its score (higher is better). Position is the run's place, 1 for the best, tied runs sharing
// the mean of their places. Tau is Kendall's tau-b between the scores (TauDefined false, with
// Why, when one side gives every run the same score). Changed lists the run pairs whose order
// differs, a tie that forms or breaks included, sorted by name. Moved is the run whose
// position changes most (ties to the first by name) and Move by how many places (After minus
// Before position: positive means it fell).
type OrderComparison struct {
	Runs           []string           `json:"runs"`
	PositionBefore map[string]float64 `json:"position_before"`
	PositionAfter  map[string]float64 `json:"position_after"`
	Tau            float64            `json:"tau"`
	TauDefined     bool               `json:"tau_defined"`
	Why            string             `json:"why,omitempty"`
	Changed        []RunPair          `json:"changed"`
	Moved          string             `json:"moved"`
	Move           float64            `json:"move"`
}

// CompareOrders compares two leaderboards of the same runs (see OrderComparison).
func CompareOrders(before, after map[string]float64) (OrderComparison, error) {
	if len(before) != len(after) {
		return OrderComparison{}, pertinent.Errorf(pertinent.Invalid, "rankeval", "%d runs before and %d after", len(before), len(after))
	}
	runs := make([]string, 0, len(before))
	for r := range before {
		if _, ok := after[r]; !ok {
			return OrderComparison{}, pertinent.Errorf(pertinent.Invalid, "rankeval", "run %q has no score after", r)
		}
		runs = append(runs, r)
	}
	slices.Sort(runs)
	xs, ys := make([]float64, len(runs)), make([]float64, len(runs))
	for i, r := range runs {
		xs[i], ys[i] = before[r], after[r]
		if math.IsNaN(xs[i]) || math.IsNaN(ys[i]) {
			return OrderComparison{}, pertinent.Errorf(pertinent.Invalid, "rankeval", "run %q has no number for a score", r)
		}
	}
	c := OrderComparison{Runs: runs, PositionBefore: positions(runs, xs), PositionAfter: positions(runs, ys)}
	if tau, err := KendallTau(xs, ys); err != nil {
		c.Why = err.(*pertinent.Error).Message
	} else {
		c.Tau, c.TauDefined = tau, true
	}
	for i := range runs {
		for j := i + 1; j < len(runs); j++ {
			a, b := cmp.Compare(xs[i], xs[j]), cmp.Compare(ys[i], ys[j])
			if a != b {
				c.Changed = append(c.Changed, RunPair{A: runs[i], B: runs[j], Before: a, After: b})
			}
		}
		if m := c.PositionAfter[runs[i]] - c.PositionBefore[runs[i]]; math.Abs(m) > math.Abs(c.Move) {
			c.Moved, c.Move = runs[i], m
		}
	}
	return c, nil
}

// positions gives each run its place by score, highest first, ties sharing the mean place.
func positions(runs []string, score []float64) map[string]float64 {
	idx := make([]int, len(runs))
	for i := range idx {
		idx[i] = i
	}
	slices.SortFunc(idx, func(a, b int) int { return cmp.Compare(score[b], score[a]) })
	out := make(map[string]float64, len(runs))
	for i := 0; i < len(idx); {
		j := i + 1
		for j < len(idx) && score[idx[j]] == score[idx[i]] {
			j++
		}
		// Places i+1..j, mean (i+1+j)/2.
		p := float64(i+1+j) / 2
		for _, k := range idx[i:j] {
			out[runs[k]] = p
		}
		i = j
	}
	return out
}

// Leaderboard maps a set of final grades to each run's score, e.g. MeanScores.
type Leaderboard func(Qrels) (map[string]float64, error)

// MeanScores is the Leaderboard of the mean of metric m over queries, each run evaluated with
// o against the qrels given.
func MeanScores(runs map[string]Run, o Options, m Metric) Leaderboard {
	return func(q Qrels) (map[string]float64, error) {
		out := make(map[string]float64, len(runs))
		for name, run := range runs {
			s, err := Evaluate(q, run, o)
			if err != nil {
				return nil, err
			}
			_, vs, err := s.Values(m)
			if err != nil {
				return nil, err
			}
			if len(vs) == 0 {
				return nil, pertinent.Errorf(pertinent.Invalid, "rankeval", "run %q: no query with %s defined", name, m)
			}
			out[name] = mean(vs)
		}
		return out, nil
	}
}

// AssessorEffect is what one assessor does to the leaderboard: the order under the actual
// final grades compared with the order under final grades made without that assessor.
// Note says why an order could not be made (the runs have no query with a defined score
// under that assessor's grades); Order is then empty, its tau undefined.
type AssessorEffect struct {
	Assessor string          `json:"assessor"`
	Order    OrderComparison `json:"order"`
	Note     string          `json:"note,omitempty"`
	// SignificanceChanged, where AddSignificance filled it, lists the pairs of runs whose
	// significance verdict differs between the two sets of final grades.
	SignificanceChanged []SignificanceChange `json:"significance_changed,omitempty"`
}

// WhatIf scores the runs under the actual final grades and under each assessor's variant
// (the final grades with that assessor's grades replaced or left out, made by the caller,
// e.g. with agreement.WithoutAssessor) and compares the orders. Effects come sorted with the
// assessor who moves the order most first: lowest tau (an undefined tau last), then most
// changed pairs, then name.
func WhatIf(actual Qrels, without map[string]Qrels, board Leaderboard) ([]AssessorEffect, error) {
	base, err := board(actual)
	if err != nil {
		return nil, err
	}
	out := make([]AssessorEffect, 0, len(without))
	for a, q := range without {
		s, err := board(q)
		if err != nil {
			return nil, err
		}
		c, err := CompareOrders(base, s)
		if err != nil {
			return nil, err
		}
		out = append(out, AssessorEffect{Assessor: a, Order: c})
	}
	sortEffects(out)
	return out, nil
}

// sortEffects puts the assessor who moves the order most first: lowest tau (an undefined tau
// last), then most changed pairs, then name.
func sortEffects(out []AssessorEffect) {
	slices.SortFunc(out, func(x, y AssessorEffect) int {
		if x.Order.TauDefined != y.Order.TauDefined {
			if x.Order.TauDefined {
				return -1
			}
			return 1
		}
		if c := cmp.Compare(x.Order.Tau, y.Order.Tau); c != 0 {
			return c
		}
		if c := cmp.Compare(len(y.Order.Changed), len(x.Order.Changed)); c != 0 {
			return c
		}
		return cmp.Compare(x.Assessor, y.Assessor)
	})
}

// WhatIfAlone compares, for each assessor, the order of the runs under the others' consensus
// on the pairs the assessor graded (others[a]) with the order under the assessor's own grades
// of the same pairs (alone[a]), as agreement.AloneAndOthers makes them. Both orders rest on
// the same pairs, so only the grades differ. An assessor under whose grades (or the others')
// no run has a defined score gets a Note instead of an order. Sorted as WhatIf sorts.
func WhatIfAlone(alone, others map[string]Qrels, board Leaderboard) ([]AssessorEffect, error) {
	out := make([]AssessorEffect, 0, len(alone))
	for a, own := range alone {
		base, err := board(others[a])
		var s map[string]float64
		if err == nil {
			s, err = board(own)
		}
		if e, ok := pertinent.AsError(err); ok && e.Code == pertinent.Invalid {
			out = append(out, AssessorEffect{Assessor: a, Note: e.Message})
			continue
		}
		if err != nil {
			return nil, err
		}
		c, err := CompareOrders(base, s)
		if err != nil {
			return nil, err
		}
		out = append(out, AssessorEffect{Assessor: a, Order: c})
	}
	sortEffects(out)
	return out, nil
}

// StandoutFloor is the least drop in tau below the other assessors' median that Standout
// names, so that a difference within the spread of ordinary assessors rarely names anyone:
// among five assessors who slip one grade on a fifth of their pairs, one falls up to about
// 0.15 below the others by chance (0.27 once in the 40 simulated projects of
// TestWhatIfAloneIdenticalAndOrdinaryAssessors), while an assessor grading at random falls
// 0.3 to 0.9 below.
const StandoutFloor = 0.2

// StandoutMADs is how many scaled median absolute deviations below the others' median an
// assessor's tau must fall to be named: 2.5, the threshold Leys, Ley, Klein, Bernard & Licata
// (J. Exp. Soc. Psychol. 49, 2013) recommend for outliers by the median absolute deviation.
const StandoutMADs = 2.5

// Standout names the assessor whose tau departs clearly from the others': the lowest tau,
// when it lies below the median of the other assessors' taus by more than StandoutMADs times
// their scaled median absolute deviation (1.4826 MAD, which estimates a normal spread) and
// by more than StandoutFloor. Effects with an undefined tau are ignored; with fewer than
// three defined there is no "rest" to stand out from, and nobody is named.
func Standout(effects []AssessorEffect) (string, bool) {
	var defined []AssessorEffect
	for _, e := range effects {
		if e.Order.TauDefined {
			defined = append(defined, e)
		}
	}
	if len(defined) < 3 {
		return "", false
	}
	low := 0
	for i, e := range defined {
		if e.Order.Tau < defined[low].Order.Tau || (e.Order.Tau == defined[low].Order.Tau && e.Assessor < defined[low].Assessor) {
			low = i
		}
	}
	var rest []float64
	for i, e := range defined {
		if i != low {
			rest = append(rest, e.Order.Tau)
		}
	}
	med := median(rest)
	dev := make([]float64, len(rest))
	for i, x := range rest {
		dev[i] = math.Abs(x - med)
	}
	spread := 1.4826 * median(dev)
	drop := med - defined[low].Order.Tau
	if drop > StandoutFloor && drop > StandoutMADs*spread {
		return defined[low].Assessor, true
	}
	return "", false
}

func median(xs []float64) float64 {
	s := slices.Clone(xs)
	slices.Sort(s)
	n := len(s)
	if n%2 == 1 {
		return s[n/2]
	}
	return (s[n/2-1] + s[n/2]) / 2
}
