package estimate

import (
	"math"

	"gonum.org/v1/gonum/mathext"
	"gonum.org/v1/gonum/stat/distuv"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/rankeval"
)

// NoncentralTCDF is P(T <= x) for the noncentral t distribution with df
// degrees of freedom and noncentrality nc.
//
// For x >= 0 it sums the Poisson-weighted series of incomplete beta
// functions (Lenth, Applied Statistics 38, 1989, algorithm AS 243):
//
//	F(x) = Φ(-δ) + ½ Σ_j [ P_j I_y(j+½, ν/2) + δ/√2 · Q_j I_y(j+1, ν/2) ]
//
// with y = x²/(x²+ν), λ = δ²/2, P_j = e^{-λ} λ^j / j! and
// Q_j = e^{-λ} λ^j / Γ(j+3/2). The sum starts at the largest weight (j near
// λ) and walks both ways (Benton & Krishnamoorthy, CSDA 43, 2003), so a
// large noncentrality neither underflows e^{-λ} nor needs λ terms before the
// ones that matter. Each incomplete beta is computed directly (gonum's
// RegIncBeta) instead of by AS 243's running recurrences, so no error
// carries from term to term.
// For x < 0, F(x; ν, δ) = 1 - F(-x; ν, -δ).
func NoncentralTCDF(x, df, nc float64) float64 {
	switch {
	case math.IsNaN(x) || math.IsNaN(df) || math.IsNaN(nc) || df <= 0 || math.IsInf(nc, 0):
		return math.NaN()
	case math.IsInf(x, 1):
		return 1
	case math.IsInf(x, -1):
		return 0
	}
	if x < 0 {
		return clampPower(1 - nctUpperHalf(-x, df, -nc))
	}
	return clampPower(nctUpperHalf(x, df, nc))
}

// nctUpperHalf is the noncentral t CDF at x >= 0.
func nctUpperHalf(x, df, nc float64) float64 {
	phi := 0.5 * math.Erfc(nc/math.Sqrt2) // Φ(-δ)
	if x == 0 {
		return phi
	}
	y := x * x / (x*x + df)
	if y >= 1 { // x so large against df that y rounds to 1: all mass is below x
		return 1
	}
	b := df / 2
	lam := nc * nc / 2
	if lam == 0 {
		return phi + 0.5*mathext.RegIncBeta(0.5, b, y)
	}
	c := nc / math.Sqrt2
	logLam := math.Log(lam)
	term := func(j int) (float64, float64) {
		fj := float64(j)
		lp, _ := math.Lgamma(fj + 1)
		lq, _ := math.Lgamma(fj + 1.5)
		base := -lam + fj*logLam
		p := math.Exp(base - lp)
		q := math.Exp(base - lq)
		return p*mathext.RegIncBeta(fj+0.5, b, y) + c*q*mathext.RegIncBeta(fj+1, b, y), p + math.Abs(c)*q
	}
	// Stop once what is left is below this: the weights shrink at least
	// geometrically away from the mode, and each incomplete beta is at most 1.
	const tol = 1e-16
	const maxTerms = 1 << 20
	k := int(math.Floor(lam))
	sum := 0.0
	for j, n := k, 0; n < maxTerms; j, n = j+1, n+1 {
		t, w := term(j)
		sum += t
		// Past the mode the weights fall by λ/(j+1) (P) and λ/(j+3/2) (Q)
		// per step; the tail is at most w·r/(1-r).
		r := lam / (float64(j) + 1)
		if r < 1 && w*r/(1-r) < tol {
			break
		}
	}
	for j, n := k-1, 0; j >= 0 && n < maxTerms; j, n = j-1, n+1 {
		t, w := term(j)
		sum += t
		// Below the mode the weights fall by j/λ (P) and (j+½)/λ (Q) per
		// step down; the rest is at most w·r/(1-r).
		r := (float64(j) + 0.5) / lam
		if r < 1 && w*r/(1-r) < tol {
			break
		}
	}
	return phi + 0.5*sum
}

func clampPower(p float64) float64 {
	return math.Min(1, math.Max(0, p))
}

// PairedTPower is the power of the two-sided paired t-test at level alpha
// over n queries to detect a true mean difference minDiff when the per-query
// difference has standard deviation sd: P(|T| > t_{1-α/2, n-1}) where T is
// noncentral t with n-1 degrees of freedom and noncentrality √n·minDiff/sd.
// It is computed exactly from the noncentral t distribution; Sakai's
// topic set size design (Information Retrieval Journal 19, 2016) states
// the same power, approximated there with a normal distribution (from
// memory). NaN for n < 2, sd <= 0 or alpha outside (0, 1).
func PairedTPower(n int, minDiff, sd, alpha float64) float64 {
	if n < 2 || !(sd > 0) || !(alpha > 0 && alpha < 1) || math.IsNaN(minDiff) || math.IsInf(sd, 0) {
		return math.NaN()
	}
	df := float64(n - 1)
	crit := planTQuantile(1-alpha/2, df)
	nc := math.Sqrt(float64(n)) * minDiff / sd
	// P(T > c) + P(T < -c), with P(T < -c; δ) = 1 - P(T <= c; -δ).
	upper := 1 - NoncentralTCDF(crit, df, nc)
	lower := 1 - NoncentralTCDF(crit, df, -nc)
	return clampPower(upper + lower)
}

// planTQuantile is the p-quantile of Student's t with df degrees of freedom.
func planTQuantile(p, df float64) float64 {
	return distuv.StudentsT{Mu: 0, Sigma: 1, Nu: df}.Quantile(p)
}

// Power is the discriminative power of a metric over a set of runs: the
// share of run pairs whose difference is significant.
type Power struct {
	Metric      string  `json:"metric"`
	Pairs       int     `json:"pairs"`
	Significant int     `json:"significant"`
	Share       float64 `json:"share"`
	Alpha       float64 `json:"alpha"`
}

// DiscriminativePower counts, over every pair of runs in t, those whose
// per-query difference is significant at alpha (p < alpha) by the paired
// two-sided t-test (rankeval.PairedTTest), and the share of all pairs they
// make. alpha 0 means 0.05. There is no correction for multiple
// comparisons: the figure compares metrics on the same runs, not claims
// about single pairs.
//
// Sakai (SIGIR 2006) proposed discriminative power with the paired
// bootstrap test. The t-test is used here because it needs no resampling
// (100 runs make 4,950 pairs), gives the same answer every time on the
// page, the command line and the API, and is the test whose power the
// query plan (PlanQueries) computes. Shares from here are therefore not
// directly comparable with Sakai's bootstrap figures.
func DiscriminativePower(metric string, t ScoreTable, alpha float64) (Power, error) {
	if alpha == 0 {
		alpha = 0.05
	}
	if !(alpha > 0 && alpha < 1) {
		return Power{}, pertinent.Errorf(pertinent.Invalid, "estimate", "significance level %v is not between 0 and 1", alpha)
	}
	if err := t.check(); err != nil {
		return Power{}, err
	}
	p := Power{Metric: metric, Alpha: alpha}
	for _, pv := range pairPValues(t) {
		p.Pairs++
		if pv < alpha {
			p.Significant++
		}
	}
	p.Share = float64(p.Significant) / float64(p.Pairs)
	return p, nil
}

// pairPValues is the paired two-sided t-test's p-value for every pair of
// runs a < b, in the order (0,1), (0,2), ..., (1,2), ...
func pairPValues(t ScoreTable) []float64 {
	var ps []float64
	d := make([]float64, len(t.Queries))
	for a := range t.Runs {
		for b := a + 1; b < len(t.Runs); b++ {
			for q := range d {
				d[q] = t.Scores[b][q] - t.Scores[a][q]
			}
			_, _, pv := rankeval.PairedTTest(d)
			ps = append(ps, pv)
		}
	}
	return ps
}

// errTooFewRuns and errTooFewQueries are the table's size errors.
var (
	errTooFewRuns    = pertinent.Errorf(pertinent.Invalid, "estimate", "a score table needs at least 2 runs to compare")
	errTooFewQueries = pertinent.Errorf(pertinent.Invalid, "estimate", "a score table needs at least 2 queries: a single query says nothing about how differences vary across queries")
)
