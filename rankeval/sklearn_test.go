package rankeval

import (
	"encoding/json"
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/pertinent/pertinent/internal/reference"
)

// TestNDCGLinearMatchesSklearn checks NDCG with linear gain against
// sklearn.metrics.ndcg_score on many random queries, through one python
// call. Without score ties sklearn's ignore_ties=True ranking is fully
// determined; with ties sklearn (ignore_ties=False) averages over them, as
// Options.AverageTies does. Every document is judged, since sklearn only
// sees the documents it is given. Exponential gain is checked the same
// way: NDCG with gain 2^g-1 is linear-gain NDCG of the labels 2^g-1.
func TestNDCGLinearMatchesSklearn(t *testing.T) {
	type sample struct {
		YTrue      []float64 `json:"y_true"`
		YScore     []float64 `json:"y_score"`
		K          *int      `json:"k"`
		IgnoreTies bool      `json:"ignore_ties"`
	}
	type local struct {
		q    Qrels
		r    Run
		o    Options
		exp  bool
		name string
	}
	rng := rand.New(rand.NewPCG(2026, 1))
	var samples []sample
	var cases []local
	for i := range 240 {
		n := 2 + rng.IntN(30)
		ties := i%2 == 1
		exp := i%4 >= 2
		grades := map[string]int{}
		var docs []ScoredDoc
		var yt, ys []float64
		for j := range n {
			g := rng.IntN(5)
			if j == 0 {
				g = 1 + rng.IntN(4) // at least one relevant: sklearn scores 0 where NDCG is undefined
			}
			s := rng.Float64()
			if ties {
				s = float64(rng.IntN(4)) // few distinct scores: many ties
			}
			id := fmt.Sprintf("d%02d", j)
			grades[id] = g
			docs = append(docs, ScoredDoc{id, s})
			label := float64(g)
			if exp {
				label = math.Exp2(float64(g)) - 1
			}
			yt = append(yt, label)
			ys = append(ys, s)
		}
		var kp *int
		k := []int{0, 1, 3, 5, 10}[rng.IntN(5)]
		if k > 0 {
			kp = &k
		}
		gain := GainLinear
		if exp {
			gain = GainExponential
		}
		samples = append(samples, sample{yt, ys, kp, !ties})
		cases = append(cases, local{
			q: Qrels{"q": grades}, r: Run{"q": docs},
			o:    Options{K: k, Gain: gain, Threshold: 1, MaxGrade: 4, AverageTies: ties},
			name: fmt.Sprintf("case %d (n=%d k=%d ties=%v exp=%v)", i, n, k, ties, exp),
		})
	}
	in, _ := json.Marshal(samples)
	script := `
import json, sys
import numpy as np
from sklearn.metrics import ndcg_score
out = []
for s in json.load(sys.stdin):
    out.append(float(ndcg_score(np.array([s["y_true"]]), np.array([s["y_score"]]), k=s["k"], ignore_ties=s["ignore_ties"])))
print(json.dumps(out))
`
	var want []float64
	if err := json.Unmarshal(reference.RunPython(t, "sklearn", script, in), &want); err != nil {
		t.Fatal(err)
	}
	if len(want) != len(cases) {
		t.Fatalf("%d results for %d cases", len(want), len(cases))
	}
	for i, c := range cases {
		s, err := Evaluate(c.q, c.r, c.o)
		if err != nil {
			t.Fatal(err)
		}
		if got := s.PerQuery[0].NDCG; !near(got, want[i], 1e-9) {
			t.Errorf("%s: NDCG %.12f, sklearn %.12f", c.name, got, want[i])
		}
	}
}

// TestStudentTAgainstScipy checks the paired t-test against
// scipy.stats.ttest_rel and the two-sided tail of Student's t against
// scipy.stats.t.sf.
func TestStudentTAgainstScipy(t *testing.T) {
	rng := rand.New(rand.NewPCG(11, 12))
	type pair struct{ A, B []float64 }
	var sets []pair
	for _, n := range []int{3, 5, 10, 30, 200} {
		for _, shift := range []float64{0, 0.05, 0.3} {
			var p pair
			for range n {
				a := rng.Float64()
				p.A = append(p.A, a)
				p.B = append(p.B, a+shift+0.2*rng.NormFloat64())
			}
			sets = append(sets, p)
		}
	}
	// (t, df): small and large degrees of freedom, the centre and far tails.
	tailPoints := [][2]float64{{0.3, 1}, {2, 2}, {1.5, 3}, {0.01, 5}, {2.5, 9}, {4, 29}, {12, 29}, {0.8, 199}, {3.1, 199}, {-2.2, 14}}
	in, _ := json.Marshal(map[string]any{"sets": sets, "tail": tailPoints})
	script := `
import json, sys
from scipy import stats
d = json.load(sys.stdin)
tt = []
for s in d["sets"]:
    r = stats.ttest_rel(s["B"], s["A"])
    tt.append([float(r.statistic), float(r.pvalue)])
print(json.dumps({"ttest": tt, "tail": [float(2 * stats.t.sf(abs(x), df)) for x, df in d["tail"]]}))
`
	var want struct {
		TTest [][2]float64 `json:"ttest"`
		Tail  []float64    `json:"tail"`
	}
	if err := json.Unmarshal(reference.RunPython(t, "scipy", script, in), &want); err != nil {
		t.Fatal(err)
	}
	for i, s := range sets {
		d := make([]float64, len(s.A))
		for j := range d {
			d[j] = s.B[j] - s.A[j]
		}
		tv, df, p := PairedTTest(d)
		if df != len(d)-1 || !near(tv, want.TTest[i][0], 1e-9*math.Max(1, math.Abs(tv))) || !near(p, want.TTest[i][1], 1e-10) {
			t.Errorf("set %d (n=%d): t=%.12g p=%.12g, scipy t=%.12g p=%.12g", i, len(d), tv, p, want.TTest[i][0], want.TTest[i][1])
		}
	}
	for i, x := range tailPoints {
		if got := studentTTwoSided(x[0], x[1]); !near(got, want.Tail[i], 1e-12) {
			t.Errorf("P(|T| >= %g), df %g = %.15g, scipy %.15g", x[0], x[1], got, want.Tail[i])
		}
	}
}
