package estimate

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"strconv"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/internal/reference"
)

// The residual variance of the two-way analysis of variance without
// replication against statsmodels (ols with C(run) + C(query), anova_lm,
// the residual mean square), and the whole plan against the same variance
// with scipy's t distribution: the queries needed by a plain loop, the
// interval's half-width and the power with the queries in the table.
func TestPlanQueriesAgainstStatsmodels(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 5))
	type job struct {
		Scores  [][]float64
		MinDiff float64
		HW      float64
	}
	var jobs []job
	var tabs []ScoreTable
	for _, size := range [][2]int{{3, 12}, {6, 40}, {10, 25}, {4, 70}} {
		tab := randomScoreTable(rng, size[0], size[1])
		tabs = append(tabs, tab)
		jobs = append(jobs, job{Scores: tab.Scores, MinDiff: 0.03 + 0.02*rng.Float64(), HW: 0.02 + 0.02*rng.Float64()})
	}
	in, _ := json.Marshal(jobs)
	out := reference.RunPython(t, "scipy, statsmodels, pandas", `
import json, sys, math, warnings
import pandas as pd
import statsmodels.formula.api as smf
from statsmodels.stats.anova import anova_lm
from scipy.stats import nct, t
warnings.simplefilter("ignore")
def power(n, d, sd, a):
    c = t.ppf(1 - a/2, n-1); nc = math.sqrt(n)*d/sd
    return nct.sf(c, n-1, nc) + nct.cdf(-c, n-1, nc)
res = []
for j in json.load(sys.stdin):
    s = j["Scores"]
    rows = [{"run": r, "query": q, "y": v} for r, row in enumerate(s) for q, v in enumerate(row)]
    fit = smf.ols("y ~ C(run) + C(query)", data=pd.DataFrame(rows)).fit()
    ve = float(anova_lm(fit).loc["Residual", "mean_sq"])
    sd = math.sqrt(2*ve); have = len(s[0])
    n = 2
    while power(n, j["MinDiff"], sd, 0.05) < 0.8:
        n += 1
    m = 2
    while t.ppf(0.975, m-1)*sd/math.sqrt(m) > j["HW"]:
        m += 1
    res.append({"ve": ve, "n": n, "m": m, "hw": float(t.ppf(0.975, have-1)*sd/math.sqrt(have)),
                "power": float(power(have, j["MinDiff"], sd, 0.05))})
print(json.dumps(res))
`, in)
	var want []struct {
		VE, HW, Power float64
		N, M          int
	}
	if err := json.Unmarshal(out, &want); err != nil {
		t.Fatal(err)
	}
	for i, tab := range tabs {
		ve := anovaResidualVariance(tab.Scores)
		if math.Abs(ve-want[i].VE) > 1e-12*math.Max(1, want[i].VE) {
			t.Errorf("table %d: V_E %v, statsmodels %v", i, ve, want[i].VE)
		}
		p, err := PlanQueries(tab, QueryPlanRequest{MinDiff: jobs[i].MinDiff, HalfWidth: jobs[i].HW})
		if err != nil {
			t.Fatal(err)
		}
		if math.Abs(p.Variance-2*want[i].VE) > 1e-12 || p.Needed != want[i].N || p.NeededForWidth != want[i].M ||
			p.Have != len(tab.Queries) || math.Abs(p.HalfWidthNow-want[i].HW) > 1e-9 || math.Abs(p.PowerNow-want[i].Power) > 1e-7 {
			t.Errorf("table %d: %+v\nscipy/statsmodels: variance %v needed %d for width %d half-width %v power %v",
				i, p, 2*want[i].VE, want[i].N, want[i].M, want[i].HW, want[i].Power)
		}
		t.Logf("table %d: %s", i, p.Text)
		if !strings.Contains(p.VarianceFrom, "two-way analysis of variance without replication") {
			t.Errorf("table %d: variance from %q", i, p.VarianceFrom)
		}
	}
}

// With two runs the residuals of the two-way analysis are ±(d - d̄)/2, so
// 2·V_E is the plain variance of the differences d (algebra); the plan says
// it used the latter.
func TestPlanQueriesTwoRuns(t *testing.T) {
	tab := randomScoreTable(rand.New(rand.NewPCG(3, 9)), 2, 30)
	d := make([]float64, 30)
	for q := range d {
		d[q] = tab.Scores[1][q] - tab.Scores[0][q]
	}
	p, err := PlanQueries(tab, QueryPlanRequest{MinDiff: 0.05})
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(p.Variance-2*anovaResidualVariance(tab.Scores)) > 1e-15 || math.Abs(p.Variance-pairDiffVariance(tab.Scores[0], tab.Scores[1])) > 0 {
		t.Errorf("variance %v, 2·V_E %v", p.Variance, 2*anovaResidualVariance(tab.Scores))
	}
	if !strings.HasPrefix(p.VarianceFrom, "the variance of the 30 per-query differences") {
		t.Errorf("variance from %q", p.VarianceFrom)
	}
	// The plan is the smallest n with enough power.
	sd := math.Sqrt(p.Variance)
	if PairedTPower(p.Needed, 0.05, sd, 0.05) < 0.8 || (p.Needed > 2 && PairedTPower(p.Needed-1, 0.05, sd, 0.05) >= 0.8) {
		t.Errorf("needed %d is not the smallest n with power 0.8", p.Needed)
	}
	if p.NeededForWidth != 0 {
		t.Errorf("width not asked, got %d", p.NeededForWidth)
	}
}

// The plan's words carry its numbers; a table that already has enough
// queries says so.
func TestPlanQueriesText(t *testing.T) {
	// The text is checked against the plan's own fields, which the other
	// tests check against scipy.
	tab := ScoreTable{Runs: []string{"a", "b"}, Queries: make([]string, 40), Scores: [][]float64{make([]float64, 40), make([]float64, 40)}}
	for q := range 40 {
		tab.Queries[q] = string(rune('A' + q))
		tab.Scores[0][q] = 0.5
		tab.Scores[1][q] = 0.5 + 0.25*float64(q%2)
	}
	p, err := PlanQueries(tab, QueryPlanRequest{MinDiff: 0.05, HalfWidth: 0.04})
	if err != nil {
		t.Fatal(err)
	}
	want := "About " + strconv.Itoa(p.Needed) + " queries are needed to detect a difference of 0.05 (α 0.05, power 0.8); 40 are judged: the 95% interval of a difference is ±" +
		planNumber(p.HalfWidthNow, 2) + " now, and the test's power to detect 0.05 is " + planNumber(p.PowerNow, 2) +
		". About " + strconv.Itoa(p.NeededForWidth) + " queries bring the 95% interval of a difference down to ±0.04."
	if p.Text != want {
		t.Errorf("text\n%q\nwant\n%q", p.Text, want)
	}
	big, err := PlanQueries(tab, QueryPlanRequest{MinDiff: 0.3, Alpha: 0.01, Beta: 0.1})
	if err != nil {
		t.Fatal(err)
	}
	if big.Needed > 40 || !strings.Contains(big.Text, "(α 0.01, power 0.9); 40 are judged, enough:") {
		t.Errorf("large difference: %+v", big)
	}
}

func TestPlanNumber(t *testing.T) {
	for _, c := range []struct {
		x    float64
		sig  int
		want string
	}{{0.0641, 2, "0.064"}, {0.05, 3, "0.05"}, {1 - 0.2, 3, "0.8"}, {0.123456, 3, "0.123"}, {1234.5, 2, "1234"}, {0.95, 2, "0.95"}, {0.996, 2, "1"}} {
		if got := planNumber(c.x, c.sig); got != c.want {
			t.Errorf("planNumber(%v, %d) = %q, want %q", c.x, c.sig, got, c.want)
		}
	}
}

func TestPlanQueriesValidation(t *testing.T) {
	good := randomScoreTable(rand.New(rand.NewPCG(1, 2)), 3, 10)
	constant := ScoreTable{Runs: []string{"a", "b", "c"}, Queries: []string{"x", "y", "z"},
		Scores: [][]float64{{0.25, 0.5, 0.75}, {0.375, 0.625, 0.875}, {0.25, 0.5, 0.75}}}
	// Constant differences that are not exact in binary leave rounding
	// residuals of about 1e-17; they still mean no variation.
	shifted := ScoreTable{Runs: []string{"a", "b"}, Queries: []string{"x", "y", "z"},
		Scores: [][]float64{{0.3, 0.7, 0.2}, {0.4, 0.8, 0.3}}}
	nanTab := randomScoreTable(rand.New(rand.NewPCG(1, 2)), 2, 3)
	nanTab.Scores[1][2] = math.NaN()
	short := randomScoreTable(rand.New(rand.NewPCG(1, 2)), 2, 3)
	short.Scores[0] = short.Scores[0][:2]
	ok := QueryPlanRequest{MinDiff: 0.05}
	for _, c := range []struct {
		name string
		tab  ScoreTable
		req  QueryPlanRequest
		want string
	}{
		{"one run", ScoreTable{Runs: []string{"a"}, Queries: []string{"x", "y"}, Scores: [][]float64{{1, 2}}}, ok, "at least 2 runs"},
		{"one query", ScoreTable{Runs: []string{"a", "b"}, Queries: []string{"x"}, Scores: [][]float64{{1}, {2}}}, ok, "at least 2 queries"},
		{"rows", ScoreTable{Runs: []string{"a", "b"}, Queries: []string{"x", "y"}, Scores: [][]float64{{1, 2}}}, ok, "1 rows of scores for 2 runs"},
		{"short row", short, ok, `run "runA" has 2 scores for 3 queries`},
		{"nan", nanTab, ok, `run "runB" has no finite score on query "qca"`},
		{"min diff 0", good, QueryPlanRequest{}, "must be above 0, not 0"},
		{"min diff negative", good, QueryPlanRequest{MinDiff: -0.1}, "must be above 0, not -0.1"},
		{"min diff NaN", good, QueryPlanRequest{MinDiff: math.NaN()}, "must be above 0, not NaN"},
		{"alpha", good, QueryPlanRequest{MinDiff: 0.05, Alpha: 1.5}, "significance level 1.5 is not between 0 and 1"},
		{"beta", good, QueryPlanRequest{MinDiff: 0.05, Beta: -0.2}, "1 - power -0.2 is not between 0 and 1"},
		{"half-width", good, QueryPlanRequest{MinDiff: 0.05, HalfWidth: -1}, "half-width asked for must be above 0"},
		{"constant differences", constant, ok, "the same on every query"},
		{"constant differences, rounded", shifted, ok, "the same on every query"},
		{"too small a difference", good, QueryPlanRequest{MinDiff: 1e-6}, "more than 10000000 queries"},
	} {
		_, err := PlanQueries(c.tab, c.req)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: error %v, want one containing %q", c.name, err, c.want)
		}
	}
	// DiscriminativePower checks the same table and its level.
	if _, err := DiscriminativePower("ndcg", ScoreTable{Runs: []string{"a"}}, 0.05); err == nil || !strings.Contains(err.Error(), "at least 2 runs") {
		t.Errorf("one run: %v", err)
	}
	if _, err := DiscriminativePower("ndcg", good, 1); err == nil || !strings.Contains(err.Error(), "not between 0 and 1") {
		t.Errorf("alpha 1: %v", err)
	}
}
