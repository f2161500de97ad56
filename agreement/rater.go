package agreement

import (
	"slices"
	"strconv"
)

// RaterStats describes one rater.
//
// MeanKappaQuadratic averages the quadratic-weighted Cohen kappa over the
// KappaPairs other raters with whom it is defined.
//
// Consensus figures compare each of the rater's grades with the lower
// median of the other raters' grades on the same item (the rater itself is
// left out of that consensus); items nobody else graded are skipped.
// ConsensusAgreement is the share equal to it, ConsensusMAE the mean
// absolute difference in grade steps.
//
// Gold figures compare with the gold grade on gold items the rater graded.
type RaterStats struct {
	Rater              string `json:"rater"`
	Judgments          int    `json:"judgments"`
	Grades             []int  `json:"grades"`
	MeanKappaQuadratic Value  `json:"mean_kappa_quadratic"`
	KappaPairs         int    `json:"kappa_pairs"`
	ConsensusItems     int    `json:"consensus_items"`
	ConsensusAgreement Value  `json:"consensus_agreement"`
	ConsensusMAE       Value  `json:"consensus_mae"`
	GoldItems          int    `json:"gold_items"`
	GoldAccuracy       Value  `json:"gold_accuracy"`
	GoldMAE            Value  `json:"gold_mae"`
}

// RaterFigures returns RaterStats for every rater in RaterNames order. gold
// maps item names (decimal ids for AddID data) to gold grades; entries for
// unknown items are ignored, and skipped counts entries whose grade is off
// the scale.
func RaterFigures(d *Data, gold map[string]int) (stats []RaterStats, skipped int) {
	ix := d.built()
	pairs := pairKappas(ix, tallyOf(ix, true), 0.95)
	return raterStatsOf(d, ix, pairs, gold)
}

func raterStatsOf(d *Data, ix *index, pairs []PairKappa, gold map[string]int) ([]RaterStats, int) {
	k, nR := ix.k, ix.nRaters()
	out := make([]RaterStats, nR)
	byName := make(map[string]int, nR)
	for r, name := range ix.raterNames {
		byName[name] = r
		out[r] = RaterStats{Rater: name, Grades: make([]int, k)}
	}

	kSum := make([]float64, nR)
	for _, p := range pairs {
		if !p.KappaQuadratic.OK {
			continue
		}
		for _, r := range []int{byName[p.A], byName[p.B]} {
			kSum[r] += p.KappaQuadratic.V
			out[r].KappaPairs++
		}
	}

	goldOf, skipped := goldIndex(d, ix, gold)
	consAgree := make([]int, nR)
	consAbs := make([]int, nR)
	goldHit := make([]int, nR)
	goldAbs := make([]int, nR)
	sorted := make([]uint8, 0, ix.maxM)
	for i := 0; i < ix.nItems(); i++ {
		rs := ix.rater[ix.start[i]:ix.start[i+1]]
		gs := ix.grade[ix.start[i]:ix.start[i+1]]
		m := len(rs)
		sorted = append(sorted[:0], gs...)
		slices.Sort(sorted)
		for p, r := range rs {
			g := int(gs[p])
			out[r].Judgments++
			out[r].Grades[g]++
			if gd := goldOf[i]; gd >= 0 {
				out[r].GoldItems++
				if g == gd {
					goldHit[r]++
				}
				goldAbs[r] += absInt(g - gd)
			}
			if m < 2 {
				continue
			}
			c := int(LeaveOneOutMedian(sorted, gs[p]))
			out[r].ConsensusItems++
			if c == g {
				consAgree[r]++
			}
			consAbs[r] += absInt(g - c)
		}
	}
	for r := range out {
		s := &out[r]
		if s.KappaPairs > 0 {
			s.MeanKappaQuadratic = defined(kSum[r] / float64(s.KappaPairs))
		} else {
			s.MeanKappaQuadratic = undefined("kappa with no other rater is defined")
		}
		s.ConsensusAgreement, s.ConsensusMAE = hitsAndMAE(consAgree[r], consAbs[r], s.ConsensusItems,
			"no item graded by this rater was graded by another")
		s.GoldAccuracy, s.GoldMAE = hitsAndMAE(goldHit[r], goldAbs[r], s.GoldItems, "no gold item graded")
	}
	return out, skipped
}

// hitsAndMAE is the share of n items graded the same and the mean absolute difference over
// them, both undefined for why when there are none.
func hitsAndMAE(hits, abs, n int, why string) (Value, Value) {
	if n == 0 {
		return undefined(why), undefined(why)
	}
	return defined(float64(hits) / float64(n)), defined(float64(abs) / float64(n))
}

// goldIndex maps item index -> gold grade (-1 when none).
func goldIndex(d *Data, ix *index, gold map[string]int) ([]int, int) {
	g := make([]int, ix.nItems())
	for i := range g {
		g[i] = -1
	}
	skipped := 0
	for name, grade := range gold {
		if grade < 0 || grade >= ix.k {
			skipped++
			continue
		}
		var it int32
		var ok bool
		if d.keyed == keyID {
			id, err := strconv.ParseInt(name, 10, 64)
			if err == nil {
				it, ok = d.findItem(id)
			}
		} else {
			it, ok = d.itemStr[name]
		}
		if ok {
			g[it] = grade
		}
	}
	return g, skipped
}

func absInt(x int) int {
	if x < 0 {
		return -x
	}
	return x
}
