package rankeval

import (
	"math"
	"slices"
)

// Verdicts maps a set of final grades to the p-value of a test of every pair of runs, keyed
// by the two names in order (the smaller first).
type Verdicts func(Qrels) (map[[2]string]float64, error)

// PairedTTests is the Verdicts of Student's paired two-sided t-test on metric m over the
// queries where both runs have a defined value, each run evaluated with o. A pair with fewer
// than two such queries gets p = 1 (no evidence either way).
func PairedTTests(runs map[string]Run, o Options, m Metric) Verdicts {
	names := make([]string, 0, len(runs))
	for n := range runs {
		names = append(names, n)
	}
	slices.Sort(names)
	return func(q Qrels) (map[[2]string]float64, error) {
		per := make(map[string]map[string]float64, len(runs))
		for _, n := range names {
			s, err := Evaluate(q, runs[n], o)
			if err != nil {
				return nil, err
			}
			qs, vs, err := s.Values(m)
			if err != nil {
				return nil, err
			}
			per[n] = make(map[string]float64, len(qs))
			for i, id := range qs {
				per[n][id] = vs[i]
			}
		}
		out := make(map[[2]string]float64)
		for i, a := range names {
			for _, b := range names[i+1:] {
				var d []float64
				for id, x := range per[a] {
					if y, ok := per[b][id]; ok {
						d = append(d, x-y)
					}
				}
				slices.Sort(d) // map order must not change the sums' rounding
				_, _, p := PairedTTest(d)
				if math.IsNaN(p) {
					p = 1
				}
				out[[2]string{a, b}] = p
			}
		}
		return out, nil
	}
}

// SignificanceChange is a pair of runs whose verdict differs between two sets of final
// grades: significant at the level before and not after, or the other way round.
type SignificanceChange struct {
	A       string  `json:"a"`
	B       string  `json:"b"`
	PBefore float64 `json:"p_before"`
	PAfter  float64 `json:"p_after"`
	Before  bool    `json:"significant_before"`
	After   bool    `json:"significant_after"`
}

// ChangedSignificance lists, sorted by name, the pairs of runs significant (p < level) under
// one set of verdicts and not under the other.
func ChangedSignificance(before, after map[[2]string]float64, level float64) []SignificanceChange {
	out := []SignificanceChange{}
	for k, pb := range before {
		pa, ok := after[k]
		if !ok {
			continue
		}
		if sb, sa := pb < level, pa < level; sb != sa {
			out = append(out, SignificanceChange{A: k[0], B: k[1], PBefore: pb, PAfter: pa, Before: sb, After: sa})
		}
	}
	slices.SortFunc(out, func(x, y SignificanceChange) int {
		if x.A != y.A {
			return compareStrings(x.A, y.A)
		}
		return compareStrings(x.B, y.B)
	})
	return out
}

func compareStrings(a, b string) int {
	switch {
	case a < b:
		return -1
	case a > b:
		return 1
	}
	return 0
}

// AddSignificance fills each effect's SignificanceChanged: the pairs of runs whose verdict
// under the actual final grades differs from that under the assessor's variant (the same
// variants WhatIf was given), at the level.
func AddSignificance(effects []AssessorEffect, actual Qrels, variants map[string]Qrels, v Verdicts, level float64) error {
	base, err := v(actual)
	if err != nil {
		return err
	}
	for i := range effects {
		q, ok := variants[effects[i].Assessor]
		if !ok {
			continue
		}
		after, err := v(q)
		if err != nil {
			return err
		}
		effects[i].SignificanceChanged = ChangedSignificance(base, after, level)
	}
	return nil
}
