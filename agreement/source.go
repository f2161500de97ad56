package agreement

import (
	"fmt"
	"math"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"
)

// SourceReport compares another source of grades (a model, an earlier campaign, a
// heuristic) with the human final grades on the same pairs.
//
// Confusion[h][s] counts pairs with human final grade h and source grade s. The kappas are
// Cohen's with Fleiss-Cohen-Everitt intervals, as for two assessors (CohenFromTable).
// Above, Below and Equal are the shares of pairs where the source grades above, below or the
// same as the humans; ByHuman splits them by human grade, with the mean signed difference
// (source minus human). Summary says in words on which human grades the source leans, by the
// rule of LeanThreshold.
type SourceReport struct {
	N              int           `json:"n"`
	Kappa          KappaEstimate `json:"kappa"`
	KappaLinear    KappaEstimate `json:"kappa_linear"`
	KappaQuadratic KappaEstimate `json:"kappa_quadratic"`
	Confusion      [][]int64     `json:"confusion"`
	Grades         []GradeRates  `json:"grades"`
	Above          Value         `json:"above"`
	Below          Value         `json:"below"`
	Equal          Value         `json:"equal"`
	MeanDiff       Value         `json:"mean_diff"`
	ByHuman        []GradeLean   `json:"by_human"`
	Leans          []Lean        `json:"leans"`
	Summary        string        `json:"summary"`
	Level          float64       `json:"level"`
}

// GradeRates describes one grade: how often humans and the source gave it, the share of pairs
// the humans graded g that the source also graded g (Recall), and the share of pairs the source
// graded g that the humans also graded g (Precision).
type GradeRates struct {
	Grade       int   `json:"grade"`
	HumanShare  Value `json:"human_share"`
	SourceShare Value `json:"source_share"`
	Recall      Value `json:"recall"`
	Precision   Value `json:"precision"`
}

// GradeLean is the direction of the source's grades on the pairs with one human grade. CI is
// the Student t interval of MeanDiff over those pairs (n-1 degrees of freedom): the pairs are
// taken as independent draws, which is what a per-grade mean can claim.
type GradeLean struct {
	Grade    int   `json:"grade"`
	N        int   `json:"n"`
	Above    Value `json:"above"`
	Below    Value `json:"below"`
	Equal    Value `json:"equal"`
	MeanDiff Value `json:"mean_diff"`
	CI       CI    `json:"ci"`
}

// Lean is a run of consecutive human grades on which the source leans the same way by about
// the same amount: Steps is |mean difference| rounded to the nearest half grade, Lenient true
// when the source grades above the humans.
type Lean struct {
	Grades  []int   `json:"grades"`
	Lenient bool    `json:"lenient"`
	Steps   float64 `json:"steps"`
}

// LeanThreshold is the rule behind Lean and SourceReport.Summary: a human grade is named when
// the mean signed difference there is at least LeanThreshold grades in size and its interval
// excludes 0. Half a grade is the smallest lean worth a sentence: less is within the rounding
// of one grade step.
const LeanThreshold = 0.5

// CompareSource compares source grades with human final grades, pair by pair (source[i] and
// human[i] belong to the same pair), on a k-grade scale, with intervals at level (e.g. 0.95).
func CompareSource(k int, source, human []int, level float64) (SourceReport, error) {
	if k < 2 || k > MaxScale {
		return SourceReport{}, fmt.Errorf("agreement: scale %d out of range 2..%d", k, MaxScale)
	}
	if len(source) != len(human) {
		return SourceReport{}, fmt.Errorf("agreement: %d source grades for %d human grades", len(source), len(human))
	}
	if level <= 0 || level >= 1 {
		level = 0.95
	}
	table := make([][]int64, k)
	for h := range table {
		table[h] = make([]int64, k)
	}
	for i := range source {
		s, h := source[i], human[i]
		if s < 0 || s >= k || h < 0 || h >= k {
			return SourceReport{}, fmt.Errorf("agreement: pair %d: grades %d (source) and %d (human) must lie in 0..%d", i, s, h, k-1)
		}
		table[h][s]++
	}
	n := len(source)
	r := SourceReport{N: n, Confusion: table, Level: level}
	r.Kappa = CohenFromTable(table, Unweighted, level)
	r.KappaLinear = CohenFromTable(table, Linear, level)
	r.KappaQuadratic = CohenFromTable(table, Quadratic, level)

	var above, below, equal, sum int64
	colSum := make([]int64, k)
	for h := 0; h < k; h++ {
		var rowN, ra, rb, rsum int64
		var sq float64
		for s := 0; s < k; s++ {
			c := table[h][s]
			colSum[s] += c
			rowN += c
			d := int64(s - h)
			rsum += c * d
			sq += float64(c) * float64(d) * float64(d)
			switch {
			case d > 0:
				ra += c
			case d < 0:
				rb += c
			}
		}
		above += ra
		below += rb
		equal += table[h][h]
		sum += rsum
		gl := GradeLean{Grade: h, N: int(rowN)}
		gl.Above, gl.Below, gl.Equal = share(ra, rowN), share(rb, rowN), share(table[h][h], rowN)
		gl.MeanDiff, gl.CI = meanWithTInterval(float64(rsum), sq, rowN, level)
		r.ByHuman = append(r.ByHuman, gl)
	}
	for g := 0; g < k; g++ {
		var rowN int64
		for s := 0; s < k; s++ {
			rowN += table[g][s]
		}
		r.Grades = append(r.Grades, GradeRates{
			Grade:       g,
			HumanShare:  share(rowN, int64(n)),
			SourceShare: share(colSum[g], int64(n)),
			Recall:      share(table[g][g], rowN),
			Precision:   share(table[g][g], colSum[g]),
		})
	}
	r.Above, r.Below, r.Equal = share(above, int64(n)), share(below, int64(n)), share(equal, int64(n))
	if n > 0 {
		r.MeanDiff = defined(float64(sum) / float64(n))
	} else {
		r.MeanDiff = undefined("no pairs")
	}
	r.Leans = leansOf(r.ByHuman)
	r.Summary = sourceSummary(r)
	return r, nil
}

func share(a, n int64) Value {
	if n == 0 {
		return undefined("no pairs")
	}
	return defined(float64(a) / float64(n))
}

// meanWithTInterval is the mean of n values with the given sum and sum of squares, and its
// two-sided Student t interval (n-1 degrees of freedom) at level. With one value, or values
// all equal, the interval is undefined and zero-width respectively.
func meanWithTInterval(sum, sumSq float64, n int64, level float64) (Value, CI) {
	if n == 0 {
		return undefined("no pairs"), undefinedInterval("no pairs")
	}
	nf := float64(n)
	m := sum / nf
	if n < 2 {
		return defined(m), undefinedInterval("one pair gives no interval")
	}
	v := (sumSq - nf*m*m) / (nf - 1)
	if v < 0 {
		v = 0 // rounding below an exact zero
	}
	se := math.Sqrt(v / nf)
	t := tQuantile((1+level)/2, nf-1)
	return defined(m), CI{Lo: defined(m - t*se), Hi: defined(m + t*se)}
}

// leansOf names the human grades where the source leans by LeanThreshold or more with an
// interval excluding 0, joining neighbouring grades that lean the same way by the same
// rounded amount.
func leansOf(by []GradeLean) []Lean {
	var out []Lean
	last := -2
	for _, g := range by {
		if !g.MeanDiff.OK || !g.CI.Lo.OK || math.Abs(g.MeanDiff.V) < LeanThreshold ||
			(g.CI.Lo.V <= 0 && g.CI.Hi.V >= 0) {
			continue
		}
		l := Lean{Grades: []int{g.Grade}, Lenient: g.MeanDiff.V > 0, Steps: roundHalf(math.Abs(g.MeanDiff.V))}
		if n := len(out); n > 0 && last == g.Grade-1 && out[n-1].Lenient == l.Lenient && out[n-1].Steps == l.Steps {
			out[n-1].Grades = append(out[n-1].Grades, g.Grade)
		} else {
			out = append(out, l)
		}
		last = g.Grade
	}
	return out
}

func roundHalf(x float64) float64 { return math.Round(2*x) / 2 }

// gradeSteps says a number of grades in words: "half a grade", "one grade", "1.5 grades".
func gradeSteps(s float64) string {
	switch s {
	case 0.5:
		return "half a grade"
	case 1:
		return "one grade"
	case 2:
		return "two grades"
	case 3:
		return "three grades"
	}
	return fmt.Sprintf("%g grades", s)
}

// gradeList says "2s", "1s and 2s", "0s, 1s and 2s".
func gradeList(gs []int) string {
	parts := make([]string, len(gs))
	for i, g := range gs {
		parts[i] = fmt.Sprintf("%ds", g)
	}
	if len(parts) == 1 {
		return parts[0]
	}
	return strings.Join(parts[:len(parts)-1], ", ") + " and " + parts[len(parts)-1]
}

// leanWords joins leans as "lenient by about one grade on 1s and 2s; strict by about half a
// grade on 4s", or "" when there are none.
func leanWords(ls []Lean) string {
	parts := make([]string, len(ls))
	for i, l := range ls {
		dir := "strict"
		if l.Lenient {
			dir = "lenient"
		}
		parts[i] = dir + " by about " + gradeSteps(l.Steps) + " on " + gradeList(l.Grades)
	}
	return strings.Join(parts, "; ")
}

func sourceSummary(r SourceReport) string {
	if r.N == 0 {
		return "no pairs graded by both the source and people"
	}
	head := fmt.Sprintf("on %d pairs the source grades the same as people on %.0f%%, above on %.0f%%, below on %.0f%%",
		r.N, 100*r.Equal.V, 100*r.Above.V, 100*r.Below.V)
	if w := leanWords(r.Leans); w != "" {
		return head + "; " + w
	}
	return head + fmt.Sprintf("; on no human grade does it differ by %s or more with an interval excluding 0", gradeSteps(LeanThreshold))
}

// tQuantile is the p quantile of Student's t with df degrees of freedom (gonum inverts the
// regularised incomplete beta function; checked against quadrature of the density in
// source_test.go).
func tQuantile(p, df float64) float64 {
	return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Quantile(p)
}
