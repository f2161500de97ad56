package estimate

import (
	"encoding/json"
	"fmt"
	"math"
	"testing"

	"github.com/pertinent/pertinent/internal/reference"
)

// Student's t quantile and distribution function behind the intervals and
// P(B beats A), against scipy.stats.t, over the degrees of freedom spread
// can give (2 and up) and the levels a design may ask for.
func TestStudentTAgainstScipy(t *testing.T) {
	levels := []float64{0.5, 0.8, 0.9, 0.95, 0.99, 0.999}
	dfs := []float64{2, 2.5, 3, 4.7, 7, 12, 30, 99.5, 1000, 123456, 5e7}
	xs := []float64{-6, -1.96, -0.4, 0, 0.3, 2.2, 8}
	in, _ := json.Marshal(map[string][]float64{"levels": levels, "dfs": dfs, "xs": xs})
	out := reference.RunPython(t, "scipy", `
import json, sys
from scipy.stats import t
d = json.load(sys.stdin)
print(json.dumps({
  "q": [[t.ppf((1 + l) / 2, df) for l in d["levels"]] for df in d["dfs"]],
  "cdf": [[t.cdf(x, df) for x in d["xs"]] for df in d["dfs"]],
}))
`, in)
	var want struct{ Q, CDF [][]float64 }
	if err := json.Unmarshal(out, &want); err != nil {
		t.Fatal(err)
	}
	for i, df := range dfs {
		for j, l := range levels {
			// 1e-8: at df 2.5, level 0.5 scipy's ppf is 2e-9 below the
			// point where scipy's own cdf (and gonum's) reach 0.75, which
			// is where tQuantile lands; elsewhere they agree to 1e-12.
			near(t, fmt.Sprintf("t quantile at %v, df %v", l, df), tQuantile(l, df), want.Q[i][j], 1e-8*want.Q[i][j])
		}
		for j, x := range xs {
			// 1e-8: gonum's incomplete beta function loses digits at
			// tens of millions of degrees of freedom (6e-9 at 5e7).
			near(t, fmt.Sprintf("t cdf at %v, df %v", x, df), tCDF(x, df), want.CDF[i][j], 1e-8)
		}
	}
	// Beyond largeDF: the normal quantile.
	if got := tQuantile(0.95, math.Inf(1)); got != zFor(0.95) {
		t.Fatalf("infinite df: %v, want z %v", got, zFor(0.95))
	}
}

// Satterthwaite's degrees of freedom by hand: one pair of weight 4 (pi =
// 1/4) at rate g: v = (1 - pi)·w²·g² = 12g², W = (1 - pi)·v², so df =
// 2v²/W = 2/(1 - pi) = 8/3 whatever g. n equal pairs: n·8/3. Two pairs,
// one carrying nearly all of the variance, give nearly one pair's.
func TestSpreadDegreesOfFreedom(t *testing.T) {
	var one spread
	one.add(4, 0.3)
	near(t, "v", one.v, 12*0.09, 1e-15)
	near(t, "one pair", one.df(), 8.0/3, 1e-12)
	var many spread
	for range 50 {
		many.add(4, 0.3)
	}
	near(t, "50 equal pairs", many.df(), 50*8.0/3, 1e-9)
	var uneven spread
	uneven.add(4, 1)
	uneven.add(4, 0.01)
	if df := uneven.df(); df < 8.0/3 || df > 8.0/3*1.001 {
		t.Fatalf("one pair carrying the variance: df %v, want just above %v", df, 8.0/3)
	}
	if df := (spread{}).df(); !math.IsInf(df, 1) {
		t.Fatalf("nothing varies: df %v, want +Inf", df)
	}
}
