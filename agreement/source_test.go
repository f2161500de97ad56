package agreement

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/internal/reference"
)

// humanGrades draws n final grades on 0..4 with a skew towards the low grades, as relevance
// judgments usually have.
func humanGrades(rng *rand.Rand, n int) []int {
	cum := []float64{0.35, 0.6, 0.8, 0.92, 1}
	out := make([]int, n)
	for i := range out {
		u := rng.Float64()
		out[i] = slices.IndexFunc(cum, func(c float64) bool { return u < c })
	}
	return out
}

func clip(g, k int) int { return min(max(g, 0), k-1) }

func TestCompareSourceEqualToHumans(t *testing.T) {
	h := humanGrades(rand.New(rand.NewPCG(1, 2)), 400)
	r, err := CompareSource(5, h, h, 0.95)
	if err != nil {
		t.Fatal(err)
	}
	// Identical grades: kappa = 1 with zero variance for every weighting (Cohen 1960, 1968:
	// p_o = 1 gives (1 - p_e)/(1 - p_e)).
	for _, k := range []KappaEstimate{r.Kappa, r.KappaLinear, r.KappaQuadratic} {
		if !k.Kappa.OK || k.Kappa.V != 1 || !k.SE.OK || k.SE.V != 0 {
			t.Errorf("kappa %v se %v, want 1 and 0", k.Kappa, k.SE)
		}
	}
	if r.Equal.V != 1 || r.Above.V != 0 || r.Below.V != 0 || r.MeanDiff.V != 0 || len(r.Leans) != 0 {
		t.Errorf("direction %v/%v/%v mean %v leans %v", r.Above, r.Below, r.Equal, r.MeanDiff, r.Leans)
	}
	if !strings.Contains(r.Summary, "on no human grade does it differ by half a grade or more") {
		t.Errorf("summary %q", r.Summary)
	}
	for _, g := range r.Grades {
		if g.HumanShare.OK && (g.Recall.V != 1 || g.Precision.V != 1) {
			t.Errorf("grade %d: recall %v precision %v", g.Grade, g.Recall, g.Precision)
		}
	}
}

// A source that grades one above the humans on grades 0-2 (with some noise) is lenient by
// about one grade there and is not named elsewhere.
func TestCompareSourceKnownBias(t *testing.T) {
	rng := rand.New(rand.NewPCG(7, 8))
	h := humanGrades(rng, 2000)
	s := make([]int, len(h))
	for i, g := range h {
		s[i] = g
		if g <= 2 {
			s[i] = g + 1
		}
		if rng.Float64() < 0.15 { // symmetric noise of one step
			s[i] = clip(s[i]+2*rng.IntN(2)-1, 5)
		}
	}
	r, err := CompareSource(5, s, h, 0.95)
	if err != nil {
		t.Fatal(err)
	}
	want := []Lean{{Grades: []int{0, 1, 2}, Lenient: true, Steps: 1}}
	if len(r.Leans) != 1 || !slices.Equal(r.Leans[0].Grades, want[0].Grades) || !r.Leans[0].Lenient || r.Leans[0].Steps != 1 {
		t.Fatalf("leans %+v, want %+v", r.Leans, want)
	}
	if !strings.Contains(r.Summary, "lenient by about one grade on 0s, 1s and 2s") {
		t.Errorf("summary %q", r.Summary)
	}
	for _, g := range r.ByHuman[:3] {
		// +1 shifted, then noise: the mean is 1 less what clipping at 0 and 4 takes off, within
		// 0.15 of 1 here; the interval must exclude 0.
		if math.Abs(g.MeanDiff.V-1) > 0.15 || g.CI.Lo.V <= 0 {
			t.Errorf("grade %d: mean %v ci %v..%v", g.Grade, g.MeanDiff, g.CI.Lo, g.CI.Hi)
		}
	}
	for _, g := range r.ByHuman[3:] {
		if math.Abs(g.MeanDiff.V) >= LeanThreshold {
			t.Errorf("grade %d named: mean %v", g.Grade, g.MeanDiff)
		}
	}
	if r.Above.V <= r.Below.V {
		t.Errorf("above %v below %v", r.Above, r.Below)
	}
}

func TestCompareSourceStrictOnTop(t *testing.T) {
	h := []int{4, 4, 4, 4, 4, 3, 3, 2, 1, 0, 0}
	s := []int{3, 3, 3, 2, 3, 3, 3, 2, 1, 0, 0}
	r, err := CompareSource(5, s, h, 0.95)
	if err != nil {
		t.Fatal(err)
	}
	// On 4s the differences are -1, -1, -1, -2, -1: mean -1.2 (to the nearest half grade, 1),
	// sd sqrt(0.2), se 0.2, t interval -1.2 ± 2.776 * 0.2 = [-1.755, -0.645] (t(0.975, 4) =
	// 2.776, from printed t tables).
	g := r.ByHuman[4]
	if math.Abs(g.MeanDiff.V+1.2) > 1e-15 || math.Abs(g.CI.Lo.V+1.7553) > 1e-3 || math.Abs(g.CI.Hi.V+0.6447) > 1e-3 {
		t.Errorf("4s: mean %v ci %v..%v", g.MeanDiff, g.CI.Lo, g.CI.Hi)
	}
	if !strings.HasSuffix(r.Summary, "; strict by about one grade on 4s") {
		t.Errorf("summary %q", r.Summary)
	}
}

func TestCompareSourceRejects(t *testing.T) {
	if _, err := CompareSource(5, []int{1, 2}, []int{1}, 0.95); err == nil {
		t.Error("lengths differ: no error")
	}
	if _, err := CompareSource(5, []int{5}, []int{1}, 0.95); err == nil {
		t.Error("grade off the scale: no error")
	}
	r, err := CompareSource(5, nil, nil, 0.95)
	if err != nil || r.Kappa.Kappa.OK || r.Equal.OK || r.Summary == "" {
		t.Errorf("no pairs: %+v %v", r, err)
	}
}

// TestCompareSourceAgainstReference checks the confusion matrix against
// sklearn.metrics.confusion_matrix, the weighted kappas against
// sklearn.metrics.cohen_kappa_score and the per-grade t intervals against SciPy on random
// data. The t quantile is found by inverting scipy.stats.t.sf with brentq rather than taken
// from scipy.stats.t.ppf: Debian's SciPy 1.10 ppf is off by about 1e-8 (at df 39 its 0.975
// quantile 2.0226909117 has an upper tail of 0.02500000045 by quadrature of the density),
// while sf agrees with quadrature to 1e-16.
func TestCompareSourceAgainstReference(t *testing.T) {
	rng := rand.New(rand.NewPCG(31, 41))
	type set struct {
		H, S []int
	}
	var sets []set
	for i := range 12 {
		h := humanGrades(rng, 30+40*i)
		s := make([]int, len(h))
		for j, g := range h {
			s[j] = clip(g+rng.IntN(3)-1+i%3-1, 5)
		}
		sets = append(sets, set{h, s})
	}
	in, _ := json.Marshal(sets)
	script := `
import json, sys
import numpy as np
from sklearn.metrics import confusion_matrix, cohen_kappa_score
from scipy import stats, optimize
out = []
for s in json.load(sys.stdin):
    h, src = np.array(s["H"]), np.array(s["S"])
    ci = []
    for g in range(5):
        d = (src - h)[h == g].astype(float)
        if len(d) >= 2 and d.std() > 0:
            df = len(d) - 1
            q = optimize.brentq(lambda x: stats.t.sf(x, df) - 0.025, 0, 20, xtol=1e-15, rtol=1e-15)
            m, se = d.mean(), stats.sem(d)
            ci.append([float(m), float(m - q * se), float(m + q * se)])
        else:
            ci.append(None)
    out.append({
        "cm": confusion_matrix(h, src, labels=list(range(5))).tolist(),
        "lin": float(cohen_kappa_score(h, src, weights="linear")),
        "quad": float(cohen_kappa_score(h, src, weights="quadratic")),
        "plain": float(cohen_kappa_score(h, src)),
        "ci": ci,
    })
print(json.dumps(out))
`
	var want []struct {
		CM               [][]int64
		Lin, Quad, Plain float64
		CI               []*[3]float64
	}
	if err := json.Unmarshal(reference.RunPython(t, "sklearn, scipy", script, in), &want); err != nil {
		t.Fatal(err)
	}
	if len(want) != len(sets) {
		t.Fatalf("%d results for %d sets", len(want), len(sets))
	}
	for i, s := range sets {
		r, err := CompareSource(5, s.S, s.H, 0.95)
		if err != nil {
			t.Fatal(err)
		}
		for h := range 5 {
			if !slices.Equal(r.Confusion[h], want[i].CM[h]) {
				t.Errorf("set %d row %d: %v, sklearn %v", i, h, r.Confusion[h], want[i].CM[h])
			}
		}
		for _, c := range []struct {
			got  Value
			want float64
		}{{r.Kappa.Kappa, want[i].Plain}, {r.KappaLinear.Kappa, want[i].Lin}, {r.KappaQuadratic.Kappa, want[i].Quad}} {
			if math.Abs(c.got.V-c.want) > 1e-12 {
				t.Errorf("set %d: kappa %v, sklearn %.15g", i, c.got, c.want)
			}
		}
		for g, w := range want[i].CI {
			if w == nil {
				continue
			}
			b := r.ByHuman[g]
			if math.Abs(b.MeanDiff.V-w[0]) > 1e-12 || math.Abs(b.CI.Lo.V-w[1]) > 1e-9 || math.Abs(b.CI.Hi.V-w[2]) > 1e-9 {
				t.Errorf("set %d grade %d: %.15g %.15g..%.15g, scipy %v", i, g, b.MeanDiff.V, b.CI.Lo.V, b.CI.Hi.V, *w)
			}
		}
	}
}

// TestTQuantileAgainstQuadrature checks the Student t quantile against the upper tail found by
// integrating the density with scipy.integrate.quad (independent of any incomplete beta
// routine): the tail beyond tQuantile(0.975, df) must be 0.025.
func TestTQuantileAgainstQuadrature(t *testing.T) {
	dfs := []float64{1, 2, 3, 4, 9, 39, 69, 200, 1999}
	xs := make([]float64, len(dfs))
	for i, df := range dfs {
		xs[i] = tQuantile(0.975, df)
	}
	in, _ := json.Marshal(map[string]any{"df": dfs, "x": xs})
	script := `
import json, sys, math
from scipy import integrate
d = json.load(sys.stdin)
out = []
for df, x in zip(d["df"], d["x"]):
    c = math.exp(math.lgamma((df + 1) / 2) - math.lgamma(df / 2)) / math.sqrt(df * math.pi)
    v, _ = integrate.quad(lambda u: c * (1 + u * u / df) ** (-(df + 1) / 2), x, math.inf, epsabs=1e-16, epsrel=1e-14)
    out.append(v)
print(json.dumps(out))
`
	var tails []float64
	if err := json.Unmarshal(reference.RunPython(t, "scipy", script, in), &tails); err != nil {
		t.Fatal(err)
	}
	for i, df := range dfs {
		if math.Abs(tails[i]-0.025) > 1e-12 {
			t.Errorf("df %g: quantile %.17g leaves a tail of %.17g", df, xs[i], tails[i])
		}
	}
	// t(0.975, 1) is tan(0.475 pi) = 12.7062, the Cauchy quantile (closed form).
	if x := tQuantile(0.975, 1); math.Abs(x-math.Tan(0.475*math.Pi)) > 1e-9 {
		t.Errorf("df 1: %.15g, tan(0.475 pi) = %.15g", x, math.Tan(0.475*math.Pi))
	}
}
