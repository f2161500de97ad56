package estimate

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/pertinent/pertinent/internal/reference"
)

// The noncentral t CDF over a grid of x, df and nc against
// scipy.stats.nct.cdf (SciPy 1.10 computes it with Boost's non_central_t).
func TestNoncentralTCDFAgainstScipy(t *testing.T) {
	xs := []float64{-40, -10, -3, -1.5, -0.5, 0, 0.3, 1, 1.96, 2.5, 4, 8, 25}
	dfs := []float64{1, 2, 3, 4.5, 9, 29, 99, 1000, 100000}
	ncs := []float64{-12, -4, -1.2, -0.3, 0, 0.4, 1, 2.8, 6, 15, 38}
	type point struct{ X, DF, NC float64 }
	var pts []point
	for _, x := range xs {
		for _, df := range dfs {
			for _, nc := range ncs {
				pts = append(pts, point{x, df, nc})
			}
		}
	}
	in, _ := json.Marshal(pts)
	out := reference.RunPython(t, "scipy", `
import json, sys, warnings
import numpy as np
from scipy.stats import nct
warnings.simplefilter("ignore")
pts = json.load(sys.stdin)
print(json.dumps([float(nct.cdf(p["X"], p["DF"], p["NC"])) for p in pts]))
`, in)
	var want []float64
	if err := json.Unmarshal(out, &want); err != nil {
		t.Fatal(err)
	}
	bad, worst := 0, 0.0
	for i, p := range pts {
		got := NoncentralTCDF(p.X, p.DF, p.NC)
		worst = math.Max(worst, math.Abs(got-want[i]))
		if math.Abs(got-want[i]) > 1e-7 {
			bad++
			if bad <= 10 {
				t.Errorf("F(%v; df %v, nc %v) = %.12g, scipy %.12g", p.X, p.DF, p.NC, got, want[i])
			}
		}
	}
	if bad > 0 {
		t.Errorf("%d of %d points differ from scipy by more than 1e-7", bad, len(pts))
	}
	t.Logf("%d points, largest difference from scipy %.2g", len(pts), worst)
}

// With nc = 0 the noncentral t is Student's t: df 1 is the Cauchy
// distribution, F(1) = 3/4; df 2 has F(x) = 1/2 + x / (2 sqrt(2 + x²))
// (textbook closed forms). And one published power figure.
func TestNoncentralTCDFCentralClosedForms(t *testing.T) {
	if got := NoncentralTCDF(1, 1, 0); math.Abs(got-0.75) > 1e-14 {
		t.Errorf("Cauchy F(1) = %v, want 0.75", got)
	}
	for _, x := range []float64{-3, -0.7, 0.2, 2} {
		want := 0.5 + x/(2*math.Sqrt(2+x*x))
		if got := NoncentralTCDF(x, 2, 0); math.Abs(got-want) > 1e-14 {
			t.Errorf("df 2 F(%v) = %v, want %v", x, got, want)
		}
	}
	// R's stats::power.t.test(n = 20, delta = 1) (two samples of 20, sd 1,
	// α 0.05; by default only the upper rejection region) prints power =
	// 0.8689528 (value from memory of R's documented example): df 38,
	// noncentrality √(20/2).
	crit := planTQuantile(0.975, 38)
	if got := 1 - NoncentralTCDF(crit, 38, math.Sqrt(10)); math.Abs(got-0.8689528) > 5e-8 {
		t.Errorf("power.t.test(n = 20, delta = 1): %.9f, R 0.8689528", got)
	}
	if !math.IsNaN(NoncentralTCDF(1, 0, 1)) || NoncentralTCDF(math.Inf(1), 3, 1) != 1 || NoncentralTCDF(math.Inf(-1), 3, 1) != 0 {
		t.Error("edge cases")
	}
}

// The power of the paired t-test against the same rule written with
// scipy's t and nct: P(T > c) + P(T < -c), c = t.ppf(1 - α/2, n-1).
func TestPairedTPowerAgainstScipy(t *testing.T) {
	type point struct {
		N                   int
		Diff, SD, Alpha, Pw float64
	}
	var pts []point
	for _, n := range []int{2, 3, 5, 10, 24, 50, 117, 400, 3000} {
		for _, diff := range []float64{0.01, 0.05, 0.12} {
			for _, sd := range []float64{0.04, 0.15, 0.4} {
				for _, alpha := range []float64{0.01, 0.05, 0.1} {
					pts = append(pts, point{N: n, Diff: diff, SD: sd, Alpha: alpha})
				}
			}
		}
	}
	in, _ := json.Marshal(pts)
	out := reference.RunPython(t, "scipy", `
import json, sys, math, warnings
from scipy.stats import nct, t
warnings.simplefilter("ignore")
res = []
for p in json.load(sys.stdin):
    n = p["N"]; c = t.ppf(1 - p["Alpha"]/2, n-1); nc = math.sqrt(n)*p["Diff"]/p["SD"]
    res.append(float(nct.sf(c, n-1, nc) + nct.cdf(-c, n-1, nc)))
print(json.dumps(res))
`, in)
	var want []float64
	if err := json.Unmarshal(out, &want); err != nil {
		t.Fatal(err)
	}
	for i, p := range pts {
		got := PairedTPower(p.N, p.Diff, p.SD, p.Alpha)
		if math.Abs(got-want[i]) > 1e-7 {
			t.Errorf("power(n %d, diff %v, sd %v, α %v) = %.10g, scipy %.10g", p.N, p.Diff, p.SD, p.Alpha, got, want[i])
		}
	}
	// With no true difference the test rejects at its level exactly.
	if got := PairedTPower(20, 0, 0.1, 0.05); math.Abs(got-0.05) > 1e-12 {
		t.Errorf("power at no difference = %v, want α 0.05", got)
	}
	if !math.IsNaN(PairedTPower(1, 0.1, 0.1, 0.05)) || !math.IsNaN(PairedTPower(10, 0.1, 0, 0.05)) {
		t.Error("n 1 or sd 0 should give NaN")
	}
}

// The queries needed, against an independent computation with scipy's t
// distribution: a plain loop n = 2, 3, ... until the power reaches 1 - β
// (t-test design) or t.ppf(0.975, n-1)·σ/√n <= the half-width (interval
// design).
func TestQueriesNeededAgainstIndependentComputationWithScipy(t *testing.T) {
	type point struct{ SD, Diff, Alpha, Beta, HW float64 }
	pts := []point{
		{0.2, 0.05, 0.05, 0.2, 0.05},
		{0.2, 0.05, 0.01, 0.1, 0.03},
		{0.15, 0.1, 0.05, 0.2, 0.1},
		{0.3, 0.02, 0.05, 0.2, 0.02},
		{0.05, 0.1, 0.05, 0.2, 0.2}, // both designs answer 2 or close
		{0.1, 0.03, 0.1, 0.3, 0.01},
		{0.25, 0.08, 0.05, 0.05, 0.04},
	}
	in, _ := json.Marshal(pts)
	out := reference.RunPython(t, "scipy", `
import json, sys, math, warnings
from scipy.stats import nct, t
warnings.simplefilter("ignore")
def power(n, d, sd, a):
    c = t.ppf(1 - a/2, n-1); nc = math.sqrt(n)*d/sd
    return nct.sf(c, n-1, nc) + nct.cdf(-c, n-1, nc)
res = []
for p in json.load(sys.stdin):
    n = 2
    while power(n, p["Diff"], p["SD"], p["Alpha"]) < 1 - p["Beta"]:
        n += 1
    m = 2
    while t.ppf(0.975, m-1)*p["SD"]/math.sqrt(m) > p["HW"]:
        m += 1
    res.append([n, m])
print(json.dumps(res))
`, in)
	var want [][2]int
	if err := json.Unmarshal(out, &want); err != nil {
		t.Fatal(err)
	}
	for i, p := range pts {
		n, ok := queriesForPower(p.SD, p.Diff, p.Alpha, p.Beta)
		if !ok || n != want[i][0] {
			t.Errorf("%+v: t-test design %d (%v), scipy loop %d", p, n, ok, want[i][0])
		}
		t.Logf("%+v: t-test design %d, interval design %d (scipy loop)", p, want[i][0], want[i][1])
		m, ok := queriesForWidth(p.SD, p.HW)
		if !ok || m != want[i][1] {
			t.Errorf("%+v: interval design %d (%v), scipy loop %d", p, m, ok, want[i][1])
		}
	}
}

// Three runs on four queries, worked by hand (values exact in binary, so
// rounding adds no spread): B = A + 1/8 everywhere (the differences have no
// spread: p = 0, significant at any level); C = A ± 1/8 alternately (mean
// difference 0: t = 0, p = 1); B - C = {0, 1/4, 0, 1/4}: mean 1/8, sd
// 1/(4√3), t = √3 with 3 degrees of freedom, whose two-sided
// p is 1/2 - 1/π = 0.1817 (Student's t with 3 df has the closed-form CDF
// 1/2 + (1/π)[u/(1+u²) + atan u], u = t/√3).
func TestDiscriminativePowerByHand(t *testing.T) {
	a := []float64{0.25, 0.5, 0.125, 0.75}
	tab := ScoreTable{Runs: []string{"A", "B", "C"}, Queries: []string{"q1", "q2", "q3", "q4"}}
	b, c := make([]float64, 4), make([]float64, 4)
	for i, v := range a {
		b[i] = v + 0.125
		c[i] = v + 0.125*float64(1-2*(i%2))
	}
	tab.Scores = [][]float64{a, b, c}
	ps := pairPValues(tab)
	if ps[0] != 0 || math.Abs(ps[1]-1) > 1e-12 || math.Abs(ps[2]-(0.5-1/math.Pi)) > 1e-9 {
		t.Errorf("p-values (A,B) (A,C) (B,C) = %v, want 0, 1, %v", ps, 0.5-1/math.Pi)
	}
	for _, c := range []struct {
		alpha float64
		sig   int
	}{{0.05, 1}, {0.01, 1}, {0.18, 1}, {0.2, 2}, {0, 1}} {
		p, err := DiscriminativePower("ndcg@10", tab, c.alpha)
		if err != nil {
			t.Fatal(err)
		}
		want := c.alpha
		if want == 0 {
			want = 0.05
		}
		if p.Pairs != 3 || p.Significant != c.sig || math.Abs(p.Share-float64(c.sig)/3) > 1e-15 || p.Alpha != want || p.Metric != "ndcg@10" {
			t.Errorf("α %v: %+v, want %d of 3", c.alpha, p, c.sig)
		}
	}
}

// Every pair's p-value against scipy.stats.ttest_rel, and the counts at
// several levels against the same counted in Python, on random tables.
func TestDiscriminativePowerAgainstScipy(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 11))
	var tabs []ScoreTable
	var scores [][][]float64
	for trial := range 4 {
		tabs = append(tabs, randomScoreTable(rng, 3+trial*2, 8+trial*9))
		scores = append(scores, tabs[trial].Scores)
	}
	in, _ := json.Marshal(scores)
	out := reference.RunPython(t, "scipy", `
import json, sys
from scipy.stats import ttest_rel
res = []
for s in json.load(sys.stdin):
    ps = []
    for a in range(len(s)):
        for b in range(a+1, len(s)):
            ps.append(float(ttest_rel(s[b], s[a]).pvalue))
    counts = [sum(1 for p in ps if p < al) for al in (0.01, 0.05, 0.1)]
    res.append({"p": ps, "counts": counts})
print(json.dumps(res))
`, in)
	var want []struct {
		P      []float64
		Counts []int
	}
	if err := json.Unmarshal(out, &want); err != nil {
		t.Fatal(err)
	}
	for trial, tab := range tabs {
		got := pairPValues(tab)
		if len(got) != len(want[trial].P) {
			t.Fatalf("%d pairs, scipy %d", len(got), len(want[trial].P))
		}
		for i := range got {
			if math.Abs(got[i]-want[trial].P[i]) > 1e-10 {
				t.Errorf("trial %d pair %d: p %v, scipy %v", trial, i, got[i], want[trial].P[i])
			}
		}
		for i, alpha := range []float64{0.01, 0.05, 0.1} {
			p, err := DiscriminativePower("ap", tab, alpha)
			if err != nil {
				t.Fatal(err)
			}
			if p.Significant != want[trial].Counts[i] || p.Pairs != len(want[trial].P) {
				t.Errorf("trial %d α %v: %d of %d significant, scipy %d of %d", trial, alpha, p.Significant, p.Pairs, want[trial].Counts[i], len(want[trial].P))
			}
			t.Logf("trial %d α %v: %d of %d pairs significant", trial, alpha, p.Significant, p.Pairs)
		}
	}
}

// randomScoreTable draws runs whose means differ a little and whose scores share
// a per-query effect, as real runs do, clipped to [0, 1].
func randomScoreTable(rng *rand.Rand, runs, queries int) ScoreTable {
	tab := ScoreTable{Runs: make([]string, runs), Queries: make([]string, queries), Scores: make([][]float64, runs)}
	qe := make([]float64, queries)
	for q := range qe {
		qe[q] = 0.5 + 0.2*rng.NormFloat64()
		tab.Queries[q] = "q" + string(rune('a'+q%26)) + string(rune('a'+q/26))
	}
	for r := range runs {
		tab.Runs[r] = "run" + string(rune('A'+r))
		shift := 0.04 * float64(r) * rng.Float64()
		tab.Scores[r] = make([]float64, queries)
		for q := range qe {
			v := qe[q] + shift + 0.1*rng.NormFloat64()
			tab.Scores[r][q] = math.Min(1, math.Max(0, v))
		}
	}
	return tab
}
