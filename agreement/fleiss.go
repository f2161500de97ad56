package agreement

import (
	"fmt"
	"math"
)

// FleissResult is Fleiss' (1971) kappa over the items that have exactly
// RatersPerItem ratings. That count is the most common number of ratings
// per item among items with at least two (ties go to the larger count);
// ItemsUsed items have it and ItemsSkipped other items with two or more
// ratings are left out.
//
// SE is the Fleiss, Nee & Landis (1979) standard error under the null
// hypothesis kappa = 0; it is the right scale for testing kappa > 0
// (Z = Kappa/SE). CI is Kappa ± z*SE with that null SE, so it is an
// approximation that tends to be too narrow or wide away from 0; prefer the
// bootstrap intervals when they matter.
type FleissResult struct {
	Kappa         Value        `json:"kappa"`
	SE            Value        `json:"se"`
	CI            CI           `json:"ci"`
	Z             Value        `json:"z"`
	RatersPerItem int          `json:"raters_per_item"`
	ItemsUsed     int          `json:"items_used"`
	ItemsSkipped  int          `json:"items_skipped"`
	PBar          Value        `json:"p_bar"`
	PE            Value        `json:"p_e"`
	PerGrade      []GradeKappa `json:"per_grade"`
}

// GradeKappa is Fleiss' kappa for one grade against all others, with the
// FNL (1979) null SE sqrt(2 / (N m (m-1))). Proportion is the grade's share
// of all ratings used.
type GradeKappa struct {
	Grade      int     `json:"grade"`
	Proportion float64 `json:"proportion"`
	Kappa      Value   `json:"kappa"`
	SE         Value   `json:"se"`
}

// Fleiss computes Fleiss' kappa on d (see FleissResult for which items are
// used), with intervals at level (e.g. 0.95).
func Fleiss(d *Data, level float64) FleissResult {
	ix := d.built()
	return fleissOf(tallyOf(ix, false), level)
}

// FleissFromCounts computes Fleiss' kappa from a subjects x categories table
// of counts, every row summing to the same number of raters m >= 2.
func FleissFromCounts(counts [][]int, level float64) FleissResult {
	if len(counts) == 0 {
		return fleissUndefined("no subjects", 0, 0)
	}
	k := len(counts[0])
	m := 0
	for _, c := range counts[0] {
		m += c
	}
	if m < 2 || k < 1 {
		return fleissUndefined("fewer than two ratings per subject", m, 0)
	}
	co := make([]int64, k*k)
	for _, row := range counts {
		s := 0
		for _, c := range row {
			s += c
		}
		if len(row) != k || s != m {
			return fleissUndefined("rows differ in categories or raters", m, 0)
		}
		for a := 0; a < k; a++ {
			for b := 0; b < k; b++ {
				n := int64(row[a]) * int64(row[b])
				if a == b {
					n -= int64(row[a])
				}
				co[a*k+b] += n
			}
		}
	}
	t := &tally{k: k, units: make([]int64, m+1), coinc: make([][]int64, m+1)}
	t.units[m] = int64(len(counts))
	t.coinc[m] = co
	return fleissOf(t, level)
}

func fleissUndefined(why string, m, items int) FleissResult {
	return FleissResult{
		Kappa: undefined(why), SE: undefined(why), CI: undefinedInterval(why), Z: undefined(why),
		PBar: undefined(why), PE: undefined(why), RatersPerItem: m, ItemsUsed: items,
	}
}

// modalRaters picks the most common ratings-per-item count >= 2, ties to
// the larger count; 0 if no item has two ratings.
func modalRaters(units []int64) int {
	best := 0
	for m := 2; m < len(units); m++ {
		if units[m] > 0 && units[m] >= units[best] {
			best = m
		}
	}
	return best
}

func fleissOf(t *tally, level float64) FleissResult {
	k := t.k
	m := modalRaters(t.units)
	if m == 0 {
		return fleissUndefined("no item has two or more ratings", 0, 0)
	}
	var skipped int64
	for j := 2; j < len(t.units); j++ {
		if j != m {
			skipped += t.units[j]
		}
	}
	n := t.units[m]
	co := t.coinc[m]
	mf, nf := float64(m), float64(n)
	denom := nf * mf * (mf - 1) // ordered rating pairs in use

	// From ordered pair counts: T_j = sum_i n_ij = row_j/(m-1) and
	// sum_i n_ij^2 = co_jj + T_j.
	tot := make([]float64, k)
	var diag float64
	for j := 0; j < k; j++ {
		var r int64
		for h := 0; h < k; h++ {
			r += co[j*k+h]
		}
		tot[j] = float64(r) / (mf - 1)
		diag += float64(co[j*k+j])
	}
	res := FleissResult{RatersPerItem: m, ItemsUsed: int(n), ItemsSkipped: int(skipped)}
	pBar := diag / denom
	var pe, sumPQ, sumPQQP float64
	res.PerGrade = make([]GradeKappa, k)
	seGrade := math.Sqrt(2 / denom)
	for j := 0; j < k; j++ {
		p := tot[j] / (nf * mf)
		q := 1 - p
		pe += p * p
		sumPQ += p * q
		sumPQQP += p * q * (q - p)
		gk := GradeKappa{Grade: j, Proportion: p}
		if p == 0 || q == 0 {
			why := fmt.Sprintf("grade %d was used by all or none of the ratings", j)
			gk.Kappa, gk.SE = undefined(why), undefined(why)
		} else {
			// 1 - sum_i n_ij (m - n_ij) / (N m (m-1) p q)
			dis := mf*tot[j] - (float64(co[j*k+j]) + tot[j])
			gk.Kappa = defined(1 - dis/(denom*p*q))
			gk.SE = defined(seGrade)
		}
		res.PerGrade[j] = gk
	}
	res.PBar, res.PE = defined(pBar), defined(pe)
	if sumPQ == 0 {
		g := 0
		for j := range tot {
			if tot[j] > 0 {
				g = j
			}
		}
		why := fmt.Sprintf("every rating used grade %d; chance agreement is 1", g)
		res.Kappa, res.SE, res.CI, res.Z = undefined(why), undefined(why), undefinedInterval(why), undefined(why)
		return res
	}
	res.Kappa = defined((pBar - pe) / (1 - pe))
	v := sumPQ*sumPQ - sumPQQP
	res.SE = defined(math.Sqrt(2/denom) * math.Sqrt(math.Max(v, 0)) / sumPQ)
	res.CI = normalInterval(res.Kappa, res.SE, level)
	if res.SE.V > 0 {
		res.Z = defined(res.Kappa.V / res.SE.V)
	} else {
		res.Z = undefined("zero standard error")
	}
	return res
}
