package agreement

import (
	"encoding/json"
	"fmt"
	"maps"
	"math"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/internal/reference"
)

// simulated grades 400 items by each rater on 0..4: "fair" raters give the true grade or,
// one time in five, a grade one step off either way; "up" adds one to grades below 4,
// "down" takes one off grades above 0, each on top of the fair noise.
func simulated(t *testing.T, raters map[string]int) *Data {
	t.Helper()
	rng := rand.New(rand.NewPCG(5, 6))
	truth := humanGrades(rng, 400)
	d := NewData(5)
	for i, g := range truth {
		for _, r := range slices.Sorted(maps.Keys(raters)) {
			x := g
			if rng.Float64() < 0.2 {
				x += 2*rng.IntN(2) - 1
			}
			if err := d.Add(fmt.Sprint("p", i), r, clip(x+raters[r], 5)); err != nil {
				t.Fatal(err)
			}
		}
	}
	return d
}

func TestLeniencyFindsBiasedRaters(t *testing.T) {
	// Six raters, so each is compared with the median of five: an odd count has no lower-median
	// lean of its own.
	d := simulated(t, map[string]int{"ann": 0, "bob": 0, "cat": 0, "dan": 0, "up": 1, "down": -1})
	ls := Leniency(d, 0.95, DSOptions{})
	by := map[string]AssessorLeniency{}
	for _, l := range ls {
		by[l.Rater] = l
	}
	up, down := by["up"], by["down"]
	// +1 on every grade below the top: about 0.9 above a consensus of fair raters, less what
	// clipping at 4 takes off; the median of the others is fair with one biased rater among four.
	if up.MeanDiff.V < 0.6 || up.CI.Lo.V <= 0 || !strings.HasPrefix(up.Summary, "lenient: ") {
		t.Errorf("up: %+v", up)
	}
	if down.MeanDiff.V > -0.4 || down.CI.Hi.V >= 0 || !strings.HasPrefix(down.Summary, "strict: ") {
		t.Errorf("down: %+v", down)
	}
	if up.Over.V-up.Under.V < 0.5 || up.Balance.V < 0.5 || !strings.Contains(up.Summary, "(over-grading)") {
		t.Errorf("up: over %v under %v: %s", up.Over, up.Under, up.Summary)
	}
	if down.Under.V-down.Over.V < 0.4 || down.Balance.V > -0.5 || !strings.Contains(down.Summary, "(under-grading)") {
		t.Errorf("down: over %v under %v: %s", down.Over, down.Under, down.Summary)
	}
	for _, r := range []string{"ann", "bob", "cat", "dan"} {
		if l := by[r]; math.Abs(l.MeanDiff.V) > 0.1 || math.Abs(l.Balance.V) >= DSLeanMargin || !strings.Contains(l.Summary, "(neither") {
			t.Errorf("%s: mean %v balance %v: %s", r, l.MeanDiff, l.Balance, l.Summary)
		}
	}
}

func TestLeniencyIdenticalRaters(t *testing.T) {
	d := NewData(5)
	rng := rand.New(rand.NewPCG(9, 9))
	for i, g := range humanGrades(rng, 200) {
		for _, r := range []string{"a", "b", "c"} {
			if err := d.Add(fmt.Sprint(i), r, g); err != nil {
				t.Fatal(err)
			}
		}
	}
	for _, l := range Leniency(d, 0.95, DSOptions{}) {
		if l.MeanDiff.V != 0 || l.CI.Lo.V != 0 || l.CI.Hi.V != 0 || l.Equal.V != 1 ||
			!strings.HasPrefix(l.Summary, "in line with the others") || !strings.Contains(l.Summary, "(neither") {
			t.Errorf("%+v", l)
		}
	}
}

func TestLeniencyAlone(t *testing.T) {
	d := NewData(5)
	for _, j := range []struct {
		i, r string
		g    int
	}{{"1", "a", 2}, {"1", "b", 3}, {"2", "c", 1}} {
		if err := d.Add(j.i, j.r, j.g); err != nil {
			t.Fatal(err)
		}
	}
	by := map[string]AssessorLeniency{}
	for _, l := range Leniency(d, 0.95, DSOptions{}) {
		by[l.Rater] = l
	}
	if c := by["c"]; c.MeanDiff.OK || c.Items != 0 || !strings.HasPrefix(c.Summary, "not compared") {
		t.Errorf("c: %+v", c)
	}
	if a := by["a"]; a.MeanDiff.V != -1 || a.CI.Lo.OK || a.Items != 1 {
		t.Errorf("a: %+v", a)
	}
}

// TestLeniencyAgainstScipy recomputes each rater's differences from the others' median with
// numpy (np.median of the others, taking the lower middle value for an even count by sorting)
// and the interval with scipy's t distribution (quantile by inverting t.sf, see
// TestCompareSourceAgainstReference).
func TestLeniencyAgainstScipy(t *testing.T) {
	rng := rand.New(rand.NewPCG(12, 13))
	d := NewData(5)
	type judg struct {
		Item, Rater string
		Grade       int
	}
	var js []judg
	raters := []string{"a", "b", "c", "d", "e"}
	for i := range 150 {
		for _, r := range raters {
			if rng.Float64() < 0.6 {
				g := rng.IntN(5)
				if r == "b" {
					g = clip(g+1, 5)
				}
				js = append(js, judg{fmt.Sprint(i), r, g})
				if err := d.Add(fmt.Sprint(i), r, g); err != nil {
					t.Fatal(err)
				}
			}
		}
	}
	in, _ := json.Marshal(js)
	script := `
import json, sys
from collections import defaultdict
import numpy as np
from scipy import stats, optimize
items = defaultdict(list)
for j in json.load(sys.stdin):
    items[j["Item"]].append((j["Rater"], j["Grade"]))
diffs = defaultdict(list)
for gs in items.values():
    for k, (r, g) in enumerate(gs):
        others = sorted(x for m, (_, x) in enumerate(gs) if m != k)
        if others:
            diffs[r].append(g - others[(len(others) - 1) // 2])
out = {}
for r, d in diffs.items():
    d = np.array(d, dtype=float)
    df = len(d) - 1
    q = optimize.brentq(lambda x: stats.t.sf(x, df) - 0.025, 0, 50, xtol=1e-15, rtol=1e-15)
    m, se = d.mean(), stats.sem(d)
    out[r] = [len(d), float(m), float(m - q * se), float(m + q * se)]
print(json.dumps(out))
`
	var want map[string][4]float64
	if err := json.Unmarshal(reference.RunPython(t, "scipy", script, in), &want); err != nil {
		t.Fatal(err)
	}
	ls := Leniency(d, 0.95, DSOptions{})
	if len(ls) != len(want) {
		t.Fatalf("%d raters, reference %d", len(ls), len(want))
	}
	for _, l := range ls {
		w := want[l.Rater]
		if float64(l.Items) != w[0] || math.Abs(l.MeanDiff.V-w[1]) > 1e-12 || math.Abs(l.CI.Lo.V-w[2]) > 1e-10 || math.Abs(l.CI.Hi.V-w[3]) > 1e-10 {
			t.Errorf("%s: %d %.15g %.15g..%.15g, reference %v", l.Rater, l.Items, l.MeanDiff.V, l.CI.Lo.V, l.CI.Hi.V, w)
		}
	}
}

func TestWithoutAssessor(t *testing.T) {
	js := []PairGrade[string]{
		{"p1", "a", 0}, {"p1", "b", 2}, {"p1", "c", 3}, // median 2
		{"p2", "a", 4}, {"p2", "b", 1}, // lower median 1
		{"p3", "a", 3},                 // a alone
		{"p4", "b", 0}, {"p4", "c", 4}, // adjudicated 2
	}
	fixed := map[string]int{"p4": 2}
	actual, rep := WithoutAssessor(js, fixed, nil, ReplaceByOthers)
	if want := map[string]int{"p1": 2, "p2": 1, "p3": 3, "p4": 2}; !maps.Equal(actual, want) {
		t.Errorf("actual %v, want %v", actual, want)
	}
	// Without a: p1's others {2, 3} have lower median 2, which replaces a's 0: median of
	// {2, 2, 3} is 2; p2's other is b's 1: {1, 1} gives 1; p3 keeps a's 3 (nobody to replace
	// it with); p4 keeps its adjudication.
	want := map[string]map[string]int{
		"a": {"p1": 2, "p2": 1, "p3": 3, "p4": 2},
		"b": {"p1": 0, "p2": 4, "p3": 3, "p4": 2},
		"c": {"p1": 0, "p2": 1, "p3": 3, "p4": 2},
	}
	for a, w := range want {
		if !maps.Equal(rep[a], w) {
			t.Errorf("replace %s: %v, want %v", a, rep[a], w)
		}
	}
	_, out := WithoutAssessor(js, fixed, nil, LeaveOut)
	if w := map[string]int{"p1": 2, "p2": 1, "p4": 2}; !maps.Equal(out["a"], w) {
		t.Errorf("leave out a: %v, want %v", out["a"], w)
	}
	// Majority as the consensus: b left out of p1 leaves {0, 3}, a tie whose midpoint 1.5 is
	// as far from both, so the lower grade wins (MajorityGrade's rule).
	_, maj := WithoutAssessor(js, nil, MajorityGrade, LeaveOut)
	if maj["b"]["p1"] != 0 || maj["b"]["p4"] != 4 {
		t.Errorf("majority without b: %v", maj["b"])
	}
}

// AloneAndOthers worked by hand: pair p graded 1, 3, 4 by a, b, c; pair q graded 2 by a
// alone. a's own grade of p is 1 against the others' lower median of {3, 4}, 3; q, graded
// by nobody else, is in neither.
func TestAloneAndOthers(t *testing.T) {
	js := []PairGrade[string]{{"p", "a", 1}, {"p", "b", 3}, {"p", "c", 4}, {"q", "a", 2}}
	alone, others := AloneAndOthers(js, nil)
	if len(alone["a"]) != 1 || alone["a"]["p"] != 1 || others["a"]["p"] != 3 {
		t.Errorf("a: alone %v, others %v", alone["a"], others["a"])
	}
	if alone["c"]["p"] != 4 || others["c"]["p"] != 1 || alone["b"]["p"] != 3 || others["b"]["p"] != 1 {
		t.Errorf("b, c: alone %v, others %v", alone, others)
	}
}
