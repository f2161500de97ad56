package preference

import (
	"encoding/json"
	"fmt"
	"math"
	"testing"

	"github.com/pertinent/pertinent/internal/reference"
)

// scipyBT fits the same penalised negative log-likelihood with scipy.optimize.minimize
// (BFGS on its own gradient) and returns θ in the order of docs, with standard errors from
// a central-difference Hessian of that gradient, for the centred scores (P H⁻¹ P). The script shares no code with the fit:
// it reads the raw judgments and scores "same" as half a win itself.
const scipyBT = `
import json, sys
import numpy as np
from scipy.optimize import minimize
from scipy.special import log_expit, expit
d = json.load(sys.stdin)
docs = d["docs"]; ix = {x: i for i, x in enumerate(docs)}; lam = 1.0 / d["sd"] ** 2
I, J, W = [], [], []
for j in d["judgments"]:
    o = j["outcome"]
    if o == 4:
        continue
    w = {1: 1.0, 2: 0.0, 3: 0.5}[o]
    I.append(ix[j["left"]]); J.append(ix[j["right"]]); W.append(w)
I, J, W = np.array(I), np.array(J), np.array(W)
def f(t):
    x = t[I] - t[J]
    return -(W * log_expit(x) + (1 - W) * log_expit(-x)).sum() + lam * (t * t).sum() / 2
def g(t):
    x = t[I] - t[J]
    r = -(W - expit(x))
    out = lam * t
    np.add.at(out, I, r)
    np.add.at(out, J, -r)
    return out
res = minimize(f, np.zeros(len(docs)), jac=g, method="BFGS", options={"gtol": 1e-12, "maxiter": 10000})
t = res.x
h = 1e-5
H = np.array([(g(t + h * e) - g(t - h * e)) / (2 * h) for e in np.eye(len(docs))])
P = np.eye(len(docs)) - 1.0 / len(docs)
se = np.sqrt(np.diag(P @ np.linalg.inv((H + H.T) / 2) @ P))
print(json.dumps({"theta": t.tolist(), "se": se.tolist()}))
`

func judgmentsOf(q string, spec []struct {
	l, r string
	o    Outcome
	n    int
}) []Judgment {
	var js []Judgment
	for _, s := range spec {
		for a := range s.n {
			js = append(js, Judgment{Query: q, Left: s.l, Right: s.r, Outcome: s.o, Assessor: fmt.Sprint(s.l, s.r, s.o, a)})
		}
	}
	return js
}

type spec = []struct {
	l, r string
	o    Outcome
	n    int
}

// Invented data sets: an unbeaten document, a tie-heavy set with a "neither relevant" left
// out, and a set whose comparisons fall into two unconnected groups.
var btSets = map[string]struct {
	docs []string
	js   spec
	sd   float64
}{
	"unbeaten": {[]string{"a", "b", "c", "d"}, spec{
		{"a", "b", LeftBetter, 3}, {"c", "a", RightBetter, 2}, {"a", "d", LeftBetter, 1},
		{"b", "c", LeftBetter, 2}, {"b", "c", RightBetter, 1}, {"c", "d", Same, 2}, {"d", "b", LeftBetter, 1},
	}, 2},
	"ties": {[]string{"a", "b", "c", "d", "e"}, spec{
		{"a", "b", Same, 4}, {"a", "b", LeftBetter, 1}, {"b", "c", Same, 2}, {"c", "b", LeftBetter, 3},
		{"c", "d", RightBetter, 2}, {"d", "e", LeftBetter, 5}, {"e", "a", Same, 1}, {"e", "a", NeitherRelevant, 3},
		{"a", "d", RightBetter, 2},
	}, 1},
	"disconnected": {[]string{"a", "b", "c", "d", "e", "f"}, spec{
		{"a", "b", LeftBetter, 4}, {"b", "a", LeftBetter, 1}, {"b", "c", LeftBetter, 2},
		{"d", "e", RightBetter, 3}, {"e", "f", Same, 2}, {"f", "d", LeftBetter, 2},
	}, 0.5},
}

func TestBradleyTerryMatchesScipy(t *testing.T) {
	for name, set := range btSets {
		js := judgmentsOf("q", set.js)
		fit, err := FitBradleyTerry("q", set.docs, js, FitOptions{PriorSD: set.sd})
		if err != nil {
			t.Fatal(err)
		}
		type jj struct {
			Left    string  `json:"left"`
			Right   string  `json:"right"`
			Outcome Outcome `json:"outcome"`
		}
		var raw []jj
		for _, j := range js {
			raw = append(raw, jj{j.Left, j.Right, j.Outcome})
		}
		in, _ := json.Marshal(map[string]any{"docs": set.docs, "sd": set.sd, "judgments": raw})
		var ref struct{ Theta, SE []float64 }
		if err := json.Unmarshal(reference.RunPython(t, "scipy, numpy", scipyBT, in), &ref); err != nil {
			t.Fatal(err)
		}
		got := map[string]Score{}
		var sum float64
		for _, s := range fit.Scores {
			got[s.Document] = s
			sum += s.Score
		}
		for i, d := range set.docs {
			s := got[d]
			if math.Abs(s.Score-ref.Theta[i]) > 1e-6 {
				t.Errorf("%s: θ(%s) = %.9f, scipy %.9f", name, d, s.Score, ref.Theta[i])
			}
			if math.Abs(s.SE-ref.SE[i]) > 1e-5 {
				t.Errorf("%s: SE(%s) = %.9f, scipy %.9f", name, d, s.SE, ref.SE[i])
			}
			if z := 1.959963984540054; math.Abs(s.High-s.Score-z*s.SE) > 1e-9 || math.Abs(s.Score-s.Low-z*s.SE) > 1e-9 {
				t.Errorf("%s: interval [%g, %g] around %g with SE %g", name, s.Low, s.High, s.Score, s.SE)
			}
		}
		// The likelihood sees only differences, so the prior centres the scores.
		if math.Abs(sum) > 1e-9 {
			t.Errorf("%s: scores sum to %g", name, sum)
		}
		t.Logf("%s: %d judgments used, %d neither, %d Newton iterations", name, fit.Used, fit.Neither, fit.Iterations)
	}
}

func TestBradleyTerryCounts(t *testing.T) {
	set := btSets["ties"]
	fit, err := FitBradleyTerry("q", nil, judgmentsOf("q", set.js), FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if fit.Used != 20 || fit.Neither != 3 || fit.PriorSD != 2 || fit.Level != 0.95 {
		t.Errorf("used %d, neither %d, prior %g, level %g", fit.Used, fit.Neither, fit.PriorSD, fit.Level)
	}
	for _, s := range fit.Scores {
		if s.Document == "a" && (s.Wins != 1 || s.Losses != 2 || s.Ties != 5) {
			t.Errorf("a: %+v", s)
		}
	}
	// An unjudged document gets the prior, centred: score 0, SE = PriorSD·√(1 − 1/n), n = 6.
	fit, _ = FitBradleyTerry("q", []string{"z"}, judgmentsOf("q", set.js), FitOptions{})
	for _, s := range fit.Scores {
		if s.Document == "z" && (s.Score != 0 || math.Abs(s.SE-2*math.Sqrt(5.0/6)) > 1e-12) {
			t.Errorf("unjudged: %+v", s)
		}
	}
	for _, o := range []FitOptions{{PriorSD: -1}, {Level: 1}, {Level: -0.5}} {
		if _, err := FitBradleyTerry("q", nil, nil, o); err == nil {
			t.Errorf("options %+v accepted", o)
		}
	}
}

// On 20 documents of known strengths judged through the schedule's comparisons by three
// simulated Bradley–Terry assessors each, the fitted order recovers the true one.
func TestBradleyTerryRecoversOrder(t *testing.T) {
	docs := docNames(20)
	theta := spread(20, 4)
	o := newOracle(docs, theta, 42)
	js, plan := runSchedule(t, "q", docs, o, 3)
	fit, err := FitBradleyTerry("q", docs, js, FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	got := map[string]float64{}
	for _, s := range fit.Scores {
		got[s.Document] = s.Score
	}
	est := make([]float64, len(docs))
	for i, d := range docs {
		est[i] = got[d]
	}
	rho := spearman(theta, est)
	in, _ := json.Marshal(map[string]any{"x": theta, "y": est})
	out := reference.RunPython(t, "scipy", `
import json, sys
from scipy.stats import spearmanr
d = json.load(sys.stdin)
print(json.dumps(spearmanr(d["x"], d["y"]).statistic))
`, in)
	var ref float64
	if err := json.Unmarshal(out, &ref); err != nil {
		t.Fatal(err)
	}
	if math.Abs(rho-ref) > 1e-12 {
		t.Errorf("Spearman %.15f, scipy.stats.spearmanr %.15f", rho, ref)
	}
	t.Logf("20 documents, %d comparisons, %d judgments: Spearman %.4f (scipy %.4f)", plan.Comparisons, len(js), rho, ref)
	if rho < 0.9 {
		t.Errorf("Spearman %.4f below 0.9", rho)
	}
}

// Over repeated simulations the 95% intervals cover the true strengths about 95% of the
// time. Ten documents, every pair judged four times; the true strengths sum to zero as the
// fitted ones do. The bound is wide: the prior pulls scores a little towards zero, and
// intervals of one simulation are not independent.
func TestBradleyTerryCoverage(t *testing.T) {
	const reps, per = 300, 4
	docs := docNames(10)
	theta := spread(10, 1.5)
	o := newOracle(docs, theta, 99)
	truth := map[string]float64{}
	for i, d := range docs {
		truth[d] = theta[i]
	}
	covered, total := 0, 0
	for range reps {
		var js []Judgment
		for i := range docs {
			for j := i + 1; j < len(docs); j++ {
				for a := range per {
					js = append(js, o.answer(Comparison{Query: "q", Left: docs[i], Right: docs[j]}, fmt.Sprint(a)))
				}
			}
		}
		fit, err := FitBradleyTerry("q", docs, js, FitOptions{})
		if err != nil {
			t.Fatal(err)
		}
		for _, s := range fit.Scores {
			total++
			if s.Low <= truth[s.Document] && truth[s.Document] <= s.High {
				covered++
			}
		}
	}
	rate := float64(covered) / float64(total)
	t.Logf("95%% intervals covered the true strength %d of %d times (%.3f)", covered, total, rate)
	if rate < 0.92 || rate > 0.985 {
		t.Errorf("coverage %.3f, want about 0.95", rate)
	}
}
