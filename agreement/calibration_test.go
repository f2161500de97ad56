package agreement

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/pertinent/pertinent/internal/reference"
)

// Worked by hand: answers 2/2, 3/2, 0/0, 4/2, 1/1 and one cannot-judge. Exact 3 of 5,
// within one 4 of 5, |d| = 0+1+0+2+0 = 3, signed sum +3.
func TestScoreCalibrationByHand(t *testing.T) {
	s := ScoreCalibration([]CalibrationAnswer{
		{Grade: 2, Known: 2, Graded: true}, {Grade: 3, Known: 2, Graded: true}, {Grade: 0, Known: 0, Graded: true},
		{Grade: 4, Known: 2, Graded: true}, {Grade: 1, Known: 1, Graded: true}, {Known: 3},
	}, 0.95)
	if s.Answered != 6 || s.Graded != 5 || s.Matched != 3 {
		t.Fatalf("%+v", s)
	}
	for name, c := range map[string][2]float64{
		"exact": {s.Exact.V, 0.6}, "within one": {s.WithinOne.V, 0.8}, "mean abs": {s.MeanAbs.V, 0.6}, "mean signed": {s.MeanSigned.V, 0.6},
	} {
		if math.Abs(c[0]-c[1]) > 1e-12 {
			t.Errorf("%s = %v, want %v", name, c[0], c[1])
		}
	}
	if none := ScoreCalibration([]CalibrationAnswer{{Known: 1}}, 0); none.Exact.OK || none.ExactCI.Lo.OK {
		t.Errorf("no graded answers must leave the figures undefined: %+v", none)
	}
}

// The intervals against statsmodels: proportion_confint(method="wilson") for the exact share
// and a one-sample t interval (DescrStatsW.tconfint_mean) for the mean signed difference.
func TestScoreCalibrationMatchesStatsmodels(t *testing.T) {
	type set struct {
		Given, Known []int
	}
	var sets []set
	rng := rand.New(rand.NewPCG(9, 27))
	for range 25 {
		n := 2 + rng.IntN(30)
		var s set
		for range n {
			k := rng.IntN(5)
			g := min(4, max(0, k+rng.IntN(3)-1))
			s.Given, s.Known = append(s.Given, g), append(s.Known, k)
		}
		sets = append(sets, s)
	}
	in, _ := json.Marshal(sets)
	script := `
import json, sys
import numpy as np
from statsmodels.stats.proportion import proportion_confint
from statsmodels.stats.weightstats import DescrStatsW
out = []
for s in json.load(sys.stdin):
    g, k = np.array(s["Given"]), np.array(s["Known"])
    lo, hi = proportion_confint(int((g == k).sum()), len(g), alpha=0.05, method="wilson")
    d = (g - k).astype(float)
    tlo, thi = DescrStatsW(d).tconfint_mean(alpha=0.05) if d.std() > 0 else (d.mean(), d.mean())
    out.append([lo, hi, tlo, thi])
print(json.dumps(out))
`
	var want [][4]float64
	if err := json.Unmarshal(reference.RunPython(t, "statsmodels", script, in), &want); err != nil {
		t.Fatal(err)
	}
	for i, s := range sets {
		var as []CalibrationAnswer
		for j := range s.Given {
			as = append(as, CalibrationAnswer{Grade: s.Given[j], Known: s.Known[j], Graded: true})
		}
		got := ScoreCalibration(as, 0.95)
		for j, v := range []float64{got.ExactCI.Lo.V, got.ExactCI.Hi.V, got.SignedCI.Lo.V, got.SignedCI.Hi.V} {
			if math.Abs(v-want[i][j]) > 1e-9 {
				t.Errorf("set %d figure %d: %v, statsmodels %v", i, j, v, want[i][j])
			}
		}
	}
}
