package rankeval

import (
	"math"
	"math/rand/v2"
	"testing"
)

// Student t with 1 degree of freedom is the Cauchy distribution:
// P(|T| >= 1) = 1 - 2*atan(1)/pi = 0.5 exactly (textbook identity).
// For df = 2, P(|T| >= t) = 1 - t/sqrt(2 + t^2); at t = 2: 1 - 2/sqrt(6).
func TestStudentTClosedForms(t *testing.T) {
	if p := studentTTwoSided(1, 1); !near(p, 0.5, 1e-14) {
		t.Errorf("df=1: %v", p)
	}
	if p := studentTTwoSided(2, 2); !near(p, 1-2/math.Sqrt(6), 1e-14) {
		t.Errorf("df=2: %v", p)
	}
	if p := studentTTwoSided(0, 7); !near(p, 1, 1e-14) {
		t.Errorf("t=0: %v", p)
	}
}

func TestPairedTTestDegenerate(t *testing.T) {
	if _, _, p := PairedTTest([]float64{0, 0, 0}); p != 1 {
		t.Errorf("all zero: p = %v", p)
	}
	if tv, _, p := PairedTTest([]float64{0.1, 0.1}); p != 0 || !math.IsInf(tv, 1) {
		t.Errorf("constant: t = %v p = %v", tv, p)
	}
	if _, _, p := PairedTTest([]float64{1}); !math.IsNaN(p) {
		t.Errorf("one value: p = %v", p)
	}
}

func TestRandomisationTest(t *testing.T) {
	// Exact: the 8 sign patterns of {1, 2, 3} give |sum| >= 6 only for
	// all plus and all minus, so p = 2/8 = 0.25. With 40000 trials the
	// estimate has standard error sqrt(0.25*0.75/40000) = 0.0022; 0.01 is
	// more than 4 of them.
	if p := RandomisationTest([]float64{1, 2, 3}, 40000, 5); !near(p, 0.25, 0.01) {
		t.Errorf("{1,2,3}: p = %v, exact 0.25", p)
	}
	// Same seed, same answer; the +1 correction makes the smallest
	// possible p 1/(n+1): 40 equal differences flip to all-same signs with
	// probability 2^-39, so no trial reaches the observation.
	d := make([]float64, 40)
	for i := range d {
		d[i] = 0.5
	}
	if p := RandomisationTest(d, 999, 1); p != 1.0/1000 {
		t.Errorf("extreme: p = %v, want 1/1000", p)
	}
	rng := rand.New(rand.NewPCG(3, 3))
	big := make([]float64, 300)
	for i := range big {
		big[i] = 0.012 + 0.1*rng.NormFloat64()
	}
	p1 := RandomisationTest(big, 20000, 42)
	if p2 := RandomisationTest(big, 20000, 42); p1 != p2 {
		t.Errorf("same seed: %v then %v", p1, p2)
	}
	// With many roughly normal differences the randomisation distribution
	// of the mean is close to the t distribution (both approach the same
	// normal limit), so the p-values agree loosely: Monte Carlo error
	// (~0.004 at 20000 trials) plus the finite-sample gap between the two
	// tests; 0.03 allows both.
	_, _, pt := PairedTTest(big)
	if !near(p1, pt, 0.03) || pt < 0.01 || pt > 0.9 {
		t.Errorf("randomisation p %v vs t-test p %v", p1, pt)
	}
}

func TestCompare(t *testing.T) {
	q := Qrels{
		"q1": {"a": 2, "b": 0, "c": 1},
		"q2": {"a": 1, "b": 3},
		"q3": {"x": 0},
	}
	ra := Run{"q1": {{"a", 3}, {"b", 2}, {"c", 1}}, "q2": {{"a", 2}, {"b", 1}}}
	rb := Run{"q1": {{"b", 3}, {"a", 2}, {"c", 1}}, "q2": {{"b", 2}, {"a", 1}}, "q3": {{"x", 1}}}
	o := Options{K: 3, Gain: GainExponential, Threshold: 1, MaxGrade: 3}
	a, _ := Evaluate(q, ra, o)
	b, _ := Evaluate(q, rb, o)
	c, err := Compare(a, b, MetricNDCG, 1000, 7)
	if err != nil {
		t.Fatal(err)
	}
	// q3 has no relevant document: NDCG undefined, not paired.
	if len(c.Queries) != 2 || c.Queries[0] != "q1" || c.Queries[1] != "q2" {
		t.Fatalf("queries %v", c.Queries)
	}
	for i := range c.Diff {
		if c.Diff[i] != c.B[i]-c.A[i] {
			t.Errorf("diff %d", i)
		}
	}
	if c.A[0] != a.PerQuery[0].NDCG || c.B[1] != b.PerQuery[1].NDCG || !near(c.MeanDiff, b.NDCG-a.NDCG, 1e-12) {
		t.Errorf("values %+v", c)
	}
	// q1 gets worse (a=2 moves from 1st to 2nd), q2 better (b=3 moves up)
	if c.Diff[0] >= 0 || c.Diff[1] <= 0 {
		t.Errorf("diffs %v", c.Diff)
	}
	if c.RandomisationP <= 0 || c.RandomisationP > 1 || c.DF != 1 || c.Permutations != 1000 {
		t.Errorf("test fields %+v", c)
	}
	if _, err := Compare(a, b, Metric("bogus"), 10, 1); err == nil {
		t.Error("unknown metric accepted")
	}
	o.K = 2
	b2, _ := Evaluate(q, rb, o)
	if _, err := Compare(a, b2, MetricNDCG, 10, 1); err == nil {
		t.Error("different options accepted")
	}
	other, _ := Evaluate(Qrels{"q1": q["q1"], "q9": q["q2"]}, rb, Options{K: 3, Gain: GainExponential, Threshold: 1, MaxGrade: 3})
	if _, err := Compare(a, other, MetricNDCG, 10, 1); err == nil {
		t.Error("different qrels accepted")
	}
}
