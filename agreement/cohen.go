package agreement

import (
	"fmt"
	"math"
	"slices"
)

// Weighting selects Cohen's (1968) disagreement weights between grades i
// and j on a K-grade scale: none (0 on the diagonal, 1 elsewhere), linear
// |i-j|/(K-1), or quadratic ((i-j)/(K-1))^2.
type Weighting int

const (
	Unweighted Weighting = iota
	Linear
	Quadratic
)

// String names the weighting.
func (w Weighting) String() string {
	switch w {
	case Linear:
		return "linear"
	case Quadratic:
		return "quadratic"
	}
	return "unweighted"
}

// KappaEstimate is a kappa with its large-sample standard error and the
// normal-theory interval kappa ± z*SE.
type KappaEstimate struct {
	Kappa Value `json:"kappa"`
	SE    Value `json:"se"`
	CI    CI    `json:"ci"`
}

// PairKappa is Cohen's kappa between raters A and B over the N items both
// graded. Table[i][j] counts items A graded i and B graded j. SE is the
// Fleiss, Cohen & Everitt (1969) large-sample (non-null) standard error;
// for the weighted kappas it is the same formula with agreement weights
// 1 - w, which is what statsmodels cohens_kappa reports for wt='linear' and
// wt='quadratic'. Agreement is the share of shared items graded equally.
type PairKappa struct {
	A              string    `json:"a"`
	B              string    `json:"b"`
	N              int       `json:"n"`
	Kappa          Value     `json:"kappa"`
	KappaLinear    Value     `json:"kappa_linear"`
	KappaQuadratic Value     `json:"kappa_quadratic"`
	SE             Value     `json:"se"`
	SELinear       Value     `json:"se_linear"`
	SEQuadratic    Value     `json:"se_quadratic"`
	CI             CI        `json:"ci"`
	CILinear       CI        `json:"ci_linear"`
	CIQuadratic    CI        `json:"ci_quadratic"`
	Agreement      Value     `json:"agreement"`
	Table          [][]int64 `json:"table"`
	Why            string    `json:"why,omitempty"` // why the kappas are undefined, if they are
}

// CohenFromTable computes Cohen's kappa from a square table of counts (rows
// one rater's grades, columns the other's) with its FCE (1969) standard
// error and a two-sided interval at level (e.g. 0.95).
func CohenFromTable(table [][]int64, w Weighting, level float64) KappaEstimate {
	k := len(table)
	flat := make([]int64, 0, k*k)
	for _, row := range table {
		if len(row) != k {
			return KappaEstimate{Kappa: undefined("table is not square"), SE: undefined("table is not square"), CI: undefinedInterval("table is not square")}
		}
		flat = append(flat, row...)
	}
	return cohenFlat(k, flat, w, level, true)
}

// agreementWeight is 1 minus the disagreement weight.
func agreementWeight(k int, w Weighting, i, j int) float64 {
	if i == j {
		return 1
	}
	switch w {
	case Linear:
		d := float64(i - j)
		if d < 0 {
			d = -d
		}
		return 1 - d/float64(k-1)
	case Quadratic:
		d := float64(i-j) / float64(k-1)
		return 1 - d*d
	}
	return 0
}

// cohenFlat computes kappa (and, if withSE, its SE) from a flat K*K table.
func cohenFlat(k int, t []int64, w Weighting, level float64, withSE bool) KappaEstimate {
	var n int64
	for _, c := range t {
		n += c
	}
	if n == 0 {
		why := "no shared items"
		return KappaEstimate{Kappa: undefined(why), SE: undefined(why), CI: undefinedInterval(why)}
	}
	var rowBuf, colBuf [16]float64
	row, col := rowBuf[:0], colBuf[:0]
	if k > len(rowBuf) {
		row, col = make([]float64, k), make([]float64, k)
	} else {
		row, col = rowBuf[:k], colBuf[:k]
	}
	nf := float64(n)
	for i := 0; i < k; i++ {
		for j := 0; j < k; j++ {
			p := float64(t[i*k+j]) / nf
			row[i] += p
			col[j] += p
		}
	}
	// Chance agreement is total only when both raters used one and the
	// same grade; kappa is then 0/0.
	if g := soleGrade(row); g >= 0 && soleGrade(col) == g {
		why := fmt.Sprintf("both raters gave only grade %d on their %d shared items", g, n)
		return KappaEstimate{Kappa: undefined(why), SE: undefined(why), CI: undefinedInterval(why)}
	}
	var po, pe float64
	for i := 0; i < k; i++ {
		for j := 0; j < k; j++ {
			a := agreementWeight(k, w, i, j)
			po += a * float64(t[i*k+j]) / nf
			pe += a * row[i] * col[j]
		}
	}
	kappa := (po - pe) / (1 - pe)
	est := KappaEstimate{Kappa: defined(kappa)}
	if !withSE {
		return est
	}
	// Fleiss, Cohen & Everitt (1969): with agreement weights a_ij,
	// var = [sum p_ij (a_ij - (abar_i. + abar_.j)(1-kappa))^2
	//        - (kappa - pe(1-kappa))^2] / (n (1-pe)^2),
	// abar_i. = sum_j col_j a_ij, abar_.j = sum_i row_i a_ij.
	var term float64
	for i := 0; i < k; i++ {
		var ar float64
		for j := 0; j < k; j++ {
			ar += col[j] * agreementWeight(k, w, i, j)
		}
		for j := 0; j < k; j++ {
			c := t[i*k+j]
			if c == 0 {
				continue
			}
			var ac float64
			for h := 0; h < k; h++ {
				ac += row[h] * agreementWeight(k, w, h, j)
			}
			d := agreementWeight(k, w, i, j) - (ar+ac)*(1-kappa)
			term += float64(c) / nf * d * d
		}
	}
	c := kappa - pe*(1-kappa)
	scale := (1 - pe) * (1 - pe) * nf
	v := (term - c*c) / scale
	if offDiagonal(k, t) == 0 || (v < 0 && v > -1e-10*(term+c*c)/scale) {
		// Perfect agreement has variance exactly 0; the formula leaves
		// rounding noise of either sign there.
		v = 0
	}
	if v < 0 {
		est.SE = undefined("negative variance estimate")
	} else {
		est.SE = defined(math.Sqrt(v))
	}
	est.CI = normalInterval(est.Kappa, est.SE, level)
	return est
}

func offDiagonal(k int, t []int64) int64 {
	var n int64
	for i := 0; i < k; i++ {
		for j := 0; j < k; j++ {
			if i != j {
				n += t[i*k+j]
			}
		}
	}
	return n
}

// soleGrade returns the only category with positive share, or -1.
func soleGrade(p []float64) int {
	g := -1
	for i, x := range p {
		if x > 0 {
			if g >= 0 {
				return -1
			}
			g = i
		}
	}
	return g
}

// pairKappas turns the pair tables of a tally into sorted PairKappa rows.
func pairKappas(ix *index, t *tally, level float64) []PairKappa {
	k := t.k
	out := make([]PairKappa, 0, len(t.pairA))
	order := make([]int, len(t.pairA))
	for i := range order {
		order[i] = i
	}
	slices.SortFunc(order, func(x, y int) int {
		if t.pairA[x] != t.pairA[y] {
			return int(t.pairA[x] - t.pairA[y])
		}
		return int(t.pairB[x] - t.pairB[y])
	})
	for _, s := range order {
		tab := t.pairTable(s)
		out = append(out, pairKappaOf(ix.raterNames[t.pairA[s]], ix.raterNames[t.pairB[s]], k, tab, level))
	}
	return out
}

func pairKappaOf(a, b string, k int, tab []int64, level float64) PairKappa {
	pk := PairKappa{A: a, B: b, Table: make([][]int64, k)}
	var n, agree int64
	for i := 0; i < k; i++ {
		pk.Table[i] = slices.Clone(tab[i*k : i*k+k])
		for j := 0; j < k; j++ {
			n += tab[i*k+j]
		}
		agree += tab[i*k+i]
	}
	pk.N = int(n)
	u := cohenFlat(k, tab, Unweighted, level, true)
	l := cohenFlat(k, tab, Linear, level, true)
	q := cohenFlat(k, tab, Quadratic, level, true)
	pk.Kappa, pk.SE, pk.CI = u.Kappa, u.SE, u.CI
	pk.KappaLinear, pk.SELinear, pk.CILinear = l.Kappa, l.SE, l.CI
	pk.KappaQuadratic, pk.SEQuadratic, pk.CIQuadratic = q.Kappa, q.SE, q.CI
	if !u.Kappa.OK {
		pk.Why = u.Kappa.Why
	}
	if n > 0 {
		pk.Agreement = defined(float64(agree) / float64(n))
	} else {
		pk.Agreement = undefined("no shared items")
	}
	return pk
}

// CohenPairs returns Cohen's kappa for every pair of raters that shares at
// least one item, sorted by (A, B) in rater order (A before B), with
// intervals at level (e.g. 0.95).
func CohenPairs(d *Data, level float64) []PairKappa {
	ix := d.built()
	return pairKappas(ix, tallyOf(ix, true), level)
}

// CohenPair returns Cohen's kappa between two named raters; a rater that
// is unknown or shares no item with the other gives undefined kappas.
func CohenPair(d *Data, a, b string, level float64) PairKappa {
	ix := d.built()
	k := ix.k
	ra, rb := slices.Index(ix.raterNames, a), slices.Index(ix.raterNames, b)
	tab := make([]int64, k*k)
	if ra >= 0 && rb >= 0 && ra != rb {
		scanPair(ix, int32(ra), int32(rb), tab)
	}
	return pairKappaOf(a, b, k, tab, level)
}

// scanPair fills tab with (grade of ra, grade of rb) over shared items.
func scanPair(ix *index, ra, rb int32, tab []int64) {
	k := ix.k
	for i := 0; i < ix.nItems(); i++ {
		ga, gb := -1, -1
		for p := ix.start[i]; p < ix.start[i+1]; p++ {
			switch ix.rater[p] {
			case ra:
				ga = int(ix.grade[p])
			case rb:
				gb = int(ix.grade[p])
			}
		}
		if ga >= 0 && gb >= 0 {
			tab[ga*k+gb]++
		}
	}
}

// meanQuadraticKappa averages the quadratic-weighted kappa over pairs where
// it is defined, each pair counting once (unweighted by n).
func meanQuadraticKappa(pairs []PairKappa) (Value, int) {
	var sum float64
	n := 0
	for _, p := range pairs {
		if p.KappaQuadratic.OK {
			sum += p.KappaQuadratic.V
			n++
		}
	}
	if n == 0 {
		if len(pairs) == 0 {
			return undefined("no two raters share an item"), 0
		}
		return undefined("kappa is undefined for every rater pair"), 0
	}
	return defined(sum / float64(n)), n
}
