package estimate

import (
	"fmt"
	"math"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent"
)

// ScoreTable holds one metric's per-query scores: Scores[r][q] is run r's
// score on query q. Every run has a score on every query, and none is NaN.
type ScoreTable struct {
	Runs    []string    `json:"runs"`
	Queries []string    `json:"queries"`
	Scores  [][]float64 `json:"scores"`
}

func (t ScoreTable) check() error {
	if len(t.Runs) < 2 {
		return errTooFewRuns
	}
	if len(t.Queries) < 2 {
		return errTooFewQueries
	}
	if len(t.Scores) != len(t.Runs) {
		return pertinent.Errorf(pertinent.Invalid, "estimate", "%d rows of scores for %d runs", len(t.Scores), len(t.Runs))
	}
	for r, row := range t.Scores {
		if len(row) != len(t.Queries) {
			return pertinent.Errorf(pertinent.Invalid, "estimate", "run %q has %d scores for %d queries", t.Runs[r], len(row), len(t.Queries))
		}
		for q, v := range row {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return pertinent.Errorf(pertinent.Invalid, "estimate", "run %q has no finite score on query %q", t.Runs[r], t.Queries[q])
			}
		}
	}
	return nil
}

// QueryPlanRequest says what a comparison of two runs must be able to show.
type QueryPlanRequest struct {
	// MinDiff is the smallest difference in the mean worth detecting, e.g. 0.05.
	MinDiff float64 `json:"min_diff"`
	// Alpha is the two-sided significance level (0 means 0.05).
	Alpha float64 `json:"alpha"`
	// Beta is 1 - power (0 means 0.2, power 0.8).
	Beta float64 `json:"beta"`
	// HalfWidth, when above 0, asks also for the queries that bring the
	// half-width of a 95% interval of a difference down to it.
	HalfWidth float64 `json:"half_width,omitempty"`
}

// QueryPlan says how many queries a comparison of two runs needs.
type QueryPlan struct {
	// Variance is the estimated variance of the per-query score difference
	// between two runs; VarianceFrom says in plain words how.
	Variance     float64 `json:"variance"`
	VarianceFrom string  `json:"variance_from"`
	// Needed is the number of queries at which the paired t-test detects
	// MinDiff at Alpha with power 1-Beta.
	Needed int `json:"needed"`
	// NeededForWidth is the number of queries at which the 95% interval of
	// a difference is no wider than ±HalfWidth (0 when not asked).
	NeededForWidth int `json:"needed_for_width,omitempty"`
	// Have is the number of queries in the table.
	Have int `json:"have"`
	// HalfWidthNow is the half-width of the 95% interval of a difference
	// with Have queries.
	HalfWidthNow float64 `json:"half_width_now"`
	// PowerNow is the power of the test to detect MinDiff with Have queries.
	PowerNow float64 `json:"power_now"`
	// Text says it all in plain words.
	Text string `json:"text"`
}

// maxPlannedQueries bounds the search: a plan beyond it means the
// difference asked for is far too small against the table's variation.
const maxPlannedQueries = 10_000_000

// PlanQueries is topic set size design (Sakai, "Topic set size design",
// Information Retrieval Journal 19, 2016) over a table of existing scores.
//
// The variance of a per-query difference between two runs is estimated from
// the whole table as 2·V_E, V_E being the residual mean square of a two-way
// analysis of variance without replication (runs × queries): Sakai's pooled
// estimate, which uses every run instead of one chosen pair. With exactly
// two runs this is the same number as the plain sample variance of the
// per-query differences, and VarianceFrom says so.
//
// t-test design: Needed is the smallest n >= 2 with
// P(|T| > t_{1-α/2, n-1}) >= 1-β, T noncentral t with n-1 degrees of freedom
// and noncentrality √n·MinDiff/σ_d (PairedTPower).
//
// Interval design: NeededForWidth is the smallest n >= 2 with
// t_{0.975, n-1}·σ_d/√n <= HalfWidth, treating σ_d as known. Sakai's
// interval design asks instead that the expected half-width, with the
// sample standard deviation's bias (the chi distribution's mean) taken into
// account, be within the bound; that version is not the one computed here.
func PlanQueries(t ScoreTable, req QueryPlanRequest) (QueryPlan, error) {
	if req.Alpha == 0 {
		req.Alpha = 0.05
	}
	if req.Beta == 0 {
		req.Beta = 0.2
	}
	switch {
	case !(req.MinDiff > 0) || math.IsInf(req.MinDiff, 0):
		return QueryPlan{}, pertinent.Errorf(pertinent.Invalid, "estimate", "the smallest difference worth detecting must be above 0, not %v", req.MinDiff)
	case !(req.Alpha > 0 && req.Alpha < 1):
		return QueryPlan{}, pertinent.Errorf(pertinent.Invalid, "estimate", "significance level %v is not between 0 and 1", req.Alpha)
	case !(req.Beta > 0 && req.Beta < 1):
		return QueryPlan{}, pertinent.Errorf(pertinent.Invalid, "estimate", "1 - power %v is not between 0 and 1", req.Beta)
	case req.HalfWidth < 0 || math.IsNaN(req.HalfWidth) || math.IsInf(req.HalfWidth, 0):
		return QueryPlan{}, pertinent.Errorf(pertinent.Invalid, "estimate", "the interval half-width asked for must be above 0 (or 0 for none), not %v", req.HalfWidth)
	}
	if err := t.check(); err != nil {
		return QueryPlan{}, err
	}
	p := QueryPlan{Have: len(t.Queries)}
	if len(t.Runs) == 2 {
		p.Variance = pairDiffVariance(t.Scores[0], t.Scores[1])
		p.VarianceFrom = fmt.Sprintf("the variance of the %d per-query differences between the two runs (for two runs the same as twice the residual variance of a two-way analysis of variance)", len(t.Queries))
	} else {
		ve := anovaResidualVariance(t.Scores)
		p.Variance = 2 * ve
		p.VarianceFrom = fmt.Sprintf("twice the residual variance of a two-way analysis of variance without replication over %d runs × %d queries (V_E = %s), pooling every run as Sakai's topic set size design does", len(t.Runs), len(t.Queries), planNumber(ve, 3))
	}
	if !(p.Variance > zeroVarianceShare*scoreSpread(t.Scores)) {
		return QueryPlan{}, pertinent.Errorf(pertinent.Invalid, "estimate", "the runs' differences are the same on every query, so the table says nothing about how a difference varies from query to query; no number of queries can be planned from it")
	}
	sd := math.Sqrt(p.Variance)
	n, ok := queriesForPower(sd, req.MinDiff, req.Alpha, req.Beta)
	if !ok {
		return QueryPlan{}, pertinent.Errorf(pertinent.Invalid, "estimate", "detecting a difference of %s would take more than %d queries with this table's variation; ask for a larger difference", planNumber(req.MinDiff, 3), maxPlannedQueries)
	}
	p.Needed = n
	if req.HalfWidth > 0 {
		n, ok := queriesForWidth(sd, req.HalfWidth)
		if !ok {
			return QueryPlan{}, pertinent.Errorf(pertinent.Invalid, "estimate", "a 95%% interval of ±%s would take more than %d queries with this table's variation; ask for a wider one", planNumber(req.HalfWidth, 3), maxPlannedQueries)
		}
		p.NeededForWidth = n
	}
	p.HalfWidthNow = halfWidth95(p.Have, sd)
	p.PowerNow = PairedTPower(p.Have, req.MinDiff, sd, req.Alpha)
	p.Text = planText(p, req)
	return p, nil
}

// zeroVarianceShare: a difference variance this small against the table's
// own spread is rounding, not variation (exactly constant differences leave
// residuals of about 1e-17).
const zeroVarianceShare = 1e-20

// scoreSpread is the mean square of every score about the grand mean, or
// the smallest positive float when the table is constant.
func scoreSpread(s [][]float64) float64 {
	sum, n := 0.0, 0
	for _, row := range s {
		for _, v := range row {
			sum += v
			n++
		}
	}
	m := sum / float64(n)
	ss := 0.0
	for _, row := range s {
		for _, v := range row {
			ss += (v - m) * (v - m)
		}
	}
	return math.Max(ss/float64(n), math.SmallestNonzeroFloat64)
}

// anovaResidualVariance is V_E of a two-way analysis of variance without
// replication over runs (rows) × queries (columns): the sum of squares of
// x_rq - x̄_r. - x̄_.q + x̄.. divided by (runs-1)(queries-1).
func anovaResidualVariance(s [][]float64) float64 {
	m, n := len(s), len(s[0])
	rowMean := make([]float64, m)
	colMean := make([]float64, n)
	grand := 0.0
	for r, row := range s {
		for q, v := range row {
			rowMean[r] += v
			colMean[q] += v
			grand += v
		}
	}
	for r := range rowMean {
		rowMean[r] /= float64(n)
	}
	for q := range colMean {
		colMean[q] /= float64(m)
	}
	grand /= float64(m * n)
	ss := 0.0
	for r, row := range s {
		for q, v := range row {
			e := v - rowMean[r] - colMean[q] + grand
			ss += e * e
		}
	}
	return ss / float64((m-1)*(n-1))
}

// pairDiffVariance is the sample variance (n-1 denominator) of b - a.
func pairDiffVariance(a, b []float64) float64 {
	n := float64(len(a))
	mean := 0.0
	for i := range a {
		mean += b[i] - a[i]
	}
	mean /= n
	ss := 0.0
	for i := range a {
		d := b[i] - a[i] - mean
		ss += d * d
	}
	return ss / (n - 1)
}

// queriesForPower is the t-test design's n: the smallest n >= 2 at which
// the paired t-test has power 1-beta to detect minDiff.
func queriesForPower(sd, minDiff, alpha, beta float64) (int, bool) {
	power := 1 - beta
	return smallestQueries(func(n int) bool { return PairedTPower(n, minDiff, sd, alpha) >= power })
}

// queriesForWidth is the interval design's n: the smallest n >= 2 whose 95%
// interval half-width is at most hw.
func queriesForWidth(sd, hw float64) (int, bool) {
	return smallestQueries(func(n int) bool { return halfWidth95(n, sd) <= hw })
}

// halfWidth95 is t_{0.975, n-1}·sd/√n.
func halfWidth95(n int, sd float64) float64 {
	return planTQuantile(0.975, float64(n-1)) * sd / math.Sqrt(float64(n))
}

// smallestQueries is the smallest n in [2, maxPlannedQueries] with enough(n),
// for a condition that, once met, stays met as n grows (power rises and the
// interval narrows with n): doubling, then bisection.
func smallestQueries(enough func(int) bool) (int, bool) {
	lo, hi := 1, 2 // enough(lo) is taken as false: one query allows no test
	for !enough(hi) {
		if hi >= maxPlannedQueries {
			return 0, false
		}
		lo, hi = hi, min(2*hi, maxPlannedQueries)
	}
	for hi-lo > 1 {
		mid := lo + (hi-lo)/2
		if enough(mid) {
			hi = mid
		} else {
			lo = mid
		}
	}
	return hi, true
}

func planText(p QueryPlan, req QueryPlanRequest) string {
	var b strings.Builder
	fmt.Fprintf(&b, "About %d queries are needed to detect a difference of %s (α %s, power %s); %d are judged",
		p.Needed, planNumber(req.MinDiff, 3), planNumber(req.Alpha, 3), planNumber(1-req.Beta, 3), p.Have)
	if p.Have >= p.Needed {
		b.WriteString(", enough")
	}
	fmt.Fprintf(&b, ": the 95%% interval of a difference is ±%s now, and the test's power to detect %s is %s.",
		planNumber(p.HalfWidthNow, 2), planNumber(req.MinDiff, 3), planNumber(p.PowerNow, 2))
	if p.NeededForWidth > 0 {
		fmt.Fprintf(&b, " About %d queries bring the 95%% interval of a difference down to ±%s.",
			p.NeededForWidth, planNumber(req.HalfWidth, 3))
	}
	return b.String()
}

// planNumber writes x with at most sig significant digits, dropping trailing
// zeros (0.0641 with 2 digits is "0.064"; 0.8 stays "0.8").
func planNumber(x float64, sig int) string {
	if x == 0 || math.IsNaN(x) || math.IsInf(x, 0) {
		return strconv.FormatFloat(x, 'g', -1, 64)
	}
	dec := sig - 1 - int(math.Floor(math.Log10(math.Abs(x))))
	if dec < 0 {
		return strconv.FormatFloat(x, 'f', 0, 64)
	}
	s := strconv.FormatFloat(x, 'f', dec, 64)
	if strings.Contains(s, ".") {
		s = strings.TrimRight(strings.TrimRight(s, "0"), ".")
	}
	return s
}
