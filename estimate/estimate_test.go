package estimate

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"github.com/pertinent/pertinent/rankeval"
)

// randomCollection has runs with tied scores (scores on a coarse grid),
// documents the labels lack (unjudged) and labelled documents no run has,
// queries some runs lack and queries without a relevant document.
func randomCollection(seed uint64) ([]NamedRun, rankeval.Qrels) {
	rng := rand.New(rand.NewPCG(seed, 1))
	q := rankeval.Qrels{}
	nq := 5 + rng.IntN(10)
	runs := make([]NamedRun, 2+rng.IntN(3))
	for i := range runs {
		runs[i] = NamedRun{Name: fmt.Sprintf("r%d", i), Run: rankeval.Run{}}
	}
	for qi := range nq {
		qid := fmt.Sprintf("q%d", qi)
		q[qid] = map[string]int{}
		ndocs := 5 + rng.IntN(40)
		for d := range ndocs {
			if rng.Float64() < 0.8 {
				g := 0
				if qi%4 != 3 { // every fourth query has nothing relevant
					g = rng.IntN(5)
				}
				q[qid][fmt.Sprintf("d%d", d)] = g
			}
		}
		for i := range runs {
			if rng.Float64() < 0.1 {
				continue // the run lacks this query
			}
			var docs []rankeval.ScoredDoc
			for d := range ndocs + 5 {
				if rng.Float64() < 0.6 {
					docs = append(docs, rankeval.ScoredDoc{DocID: fmt.Sprintf("d%d", d), Score: float64(rng.IntN(8))})
				}
			}
			runs[i].Run[qid] = docs
		}
	}
	return runs, q
}

// With every pair judged in full the estimates are rankeval's figures.
func TestFullJudgmentEqualsRankeval(t *testing.T) {
	for seed := range uint64(20) {
		runs, q := randomCollection(seed)
		labels := fullLabels(q)
		for _, gain := range []rankeval.Gain{rankeval.GainExponential, rankeval.GainLinear} {
			for _, k := range []int{0, 5, 10} {
				for _, thr := range []int{1, 2} {
					o := Options{K: k, Gain: gain, Threshold: thr, MaxGrade: 4}
					rep, err := Estimate(runs, labels, o)
					if err != nil {
						t.Fatal(err)
					}
					for i, r := range runs {
						want, err := rankeval.Evaluate(q, r.Run, rankeval.Options{K: k, Gain: gain, Threshold: thr, MaxGrade: 4})
						if err != nil {
							t.Fatal(err)
						}
						got := rep.Runs[i]
						where := fmt.Sprintf("seed %d gain %v k %d threshold %d run %s", seed, gain, k, thr, r.Name)
						if got.NDCGQueries != want.NDCGQueries || got.APQueries != want.APQueries {
							t.Fatalf("%s: defined queries %d/%d, want %d/%d", where, got.NDCGQueries, got.APQueries, want.NDCGQueries, want.APQueries)
						}
						near(t, where+" NDCG", got.NDCG.Est, want.NDCG, 1e-12)
						near(t, where+" MAP", got.AP.Est, want.MAP, 1e-12)
						near(t, where+" judged", got.JudgedAtK, want.Judged, 1e-12)
						if got.NDCG.SE != 0 || got.AP.SE != 0 {
							t.Fatalf("%s: SE %v %v with every pair certain", where, got.NDCG.SE, got.AP.SE)
						}
						for j, qs := range want.PerQuery {
							pq := got.PerQuery[j]
							if pq.Query != qs.Query || pq.NDCGDefined != qs.NDCGDefined || pq.APDefined != qs.APDefined {
								t.Fatalf("%s query %s: %+v vs %+v", where, qs.Query, pq, qs)
							}
							near(t, where+" "+qs.Query+" NDCG", pq.NDCG.Est, qs.NDCG, 1e-12)
							near(t, where+" "+qs.Query+" AP", pq.AP.Est, qs.AP, 1e-12)
						}
					}
					for _, d := range rep.Differences {
						if d.Diff.SE != 0 {
							t.Fatalf("difference %s-%s %s: SE %v with every pair certain", d.B, d.A, d.Metric, d.Diff.SE)
						}
					}
				}
			}
		}
	}
}

func near(t *testing.T, what string, got, want, tol float64) {
	t.Helper()
	if math.Abs(got-want) > tol {
		t.Fatalf("%s: got %.15g, want %.15g", what, got, want)
	}
}

// The ideal DCG from fractional counts interpolates the cumulative
// discount linearly (worked by hand from the definition).
func TestIdealDCGFractionalCounts(t *testing.T) {
	o := Options{K: 10, Gain: rankeval.GainLinear}
	var cum cumTable
	ideal := func(grades []int, w []float64) float64 {
		ql := &labelled{grade: grades, w: w}
		top := 0
		for _, g := range grades {
			top = max(top, g)
		}
		return ql.ideal(w, make([]float64, top+1), o, &cum)
	}
	// 1.5 documents of grade 1: D(1.5) = 1 + 0.5/log2(3).
	near(t, "IDCG", ideal([]int{0, 1}, []float64{3, 1.5}), 1+0.5/math.Log2(3), 1e-15)
	// Grades 2 (0.5 docs) and 1 (1 doc), linear gain: steps of 1 at b_2 = 0.5
	// and b_1 = 1.5: D(0.5) + D(1.5) = 0.5 + 1 + 0.5/log2(3).
	near(t, "IDCG", ideal([]int{1, 2}, []float64{1, 0.5}), 1.5+0.5/math.Log2(3), 1e-15)
	// Capped at K: D(10).
	d10 := 0.0
	for r := 1; r <= 10; r++ {
		d10 += 1 / math.Log2(float64(r)+1)
	}
	near(t, "IDCG capped", ideal([]int{1}, []float64{12.5}), d10, 1e-15)
}

// RBP's base and residual on a small ranking, worked by hand from
// RBP = (1-p) sum_i r_i p^(i-1) (Moffat & Zobel, TOIS 2008): grades 4,
// (unjudged), 2 with top grade 4 and p = 0.8 give base 0.2·1 + 0.2·0.64·0.5
// = 0.264 and residual 0.2·0.8 + 0.8^3 = 0.672.
func TestRBPResidual(t *testing.T) {
	runs := []NamedRun{{Name: "a", Run: rankeval.Run{"q": {{DocID: "x", Score: 3}, {DocID: "y", Score: 2}, {DocID: "z", Score: 1}}}}}
	labels := Labels{"q": {"x": {Grade: 4, Prob: 1}, "z": {Grade: 2, Prob: 1}}}
	rep, err := Estimate(runs, labels, Options{MaxGrade: 4})
	if err != nil {
		t.Fatal(err)
	}
	q := rep.Runs[0].PerQuery[0]
	near(t, "RBP", q.RBP, 0.264, 1e-12)
	near(t, "residual", q.RBPResidual, 0.672, 1e-12)
	// A pending pair is unjudged too.
	labels["q"]["y"] = Label{Grade: -1, Prob: 1, Stratum: 5}
	rep, _ = Estimate(runs, labels, Options{MaxGrade: 4})
	near(t, "residual with y pending", rep.Runs[0].PerQuery[0].RBPResidual, 0.672, 1e-12)
	if rep.Pending != 1 || rep.Judged != 2 {
		t.Fatalf("pending %d judged %d", rep.Pending, rep.Judged)
	}
}

// Pairs chosen but not graded are made up for within their cell: the same
// estimate and SE as if the graded pairs had been drawn with probability
// Prob·graded/chosen and the others never drawn.
func TestResponseAdjustment(t *testing.T) {
	c := invent(3, 4, 60, 40, []float64{0.5, 1.5})
	pending, drawn := Labels{}, Labels{}
	rng := rand.New(rand.NewPCG(5, 5))
	for q, docs := range c.truth {
		pending[q], drawn[q] = map[string]Label{}, map[string]Label{}
		for _, d := range sortedKeys(docs) {
			if rng.Float64() < 0.5 {
				continue
			}
			pending[q][d] = Label{Grade: docs[d], Prob: 0.5, Stratum: 1}
		}
		// Grade every other chosen pair; count per cell.
		i, graded := 0, 0
		for _, d := range sortedKeys(pending[q]) {
			if i%2 == 1 {
				pending[q][d] = Label{Grade: -1, Prob: 0.5, Stratum: 1}
			} else {
				graded++
			}
			i++
		}
		for _, d := range sortedKeys(pending[q]) {
			if l := pending[q][d]; l.Grade >= 0 {
				drawn[q][d] = Label{Grade: l.Grade, Prob: 0.5 * float64(graded) / float64(len(pending[q])), Stratum: 1}
			}
		}
	}
	o := Options{K: 10, MaxGrade: 4}
	a, err := Estimate(c.runs, pending, o)
	if err != nil {
		t.Fatal(err)
	}
	b, _ := Estimate(c.runs, drawn, o)
	for i := range a.Runs {
		near(t, "NDCG", a.Runs[i].NDCG.Est, b.Runs[i].NDCG.Est, 1e-12)
		near(t, "NDCG SE", a.Runs[i].NDCG.SE, b.Runs[i].NDCG.SE, 1e-12)
		near(t, "AP", a.Runs[i].AP.Est, b.Runs[i].AP.Est, 1e-12)
		near(t, "AP SE", a.Runs[i].AP.SE, b.Runs[i].AP.SE, 1e-12)
	}
	if a.Pending == 0 || a.Runs[0].NDCG.SE == 0 {
		t.Fatalf("pending %d, SE %v: the check checks nothing", a.Pending, a.Runs[0].NDCG.SE)
	}
}

// The replicates' multipliers: in every mirrored pair of replicates a
// sampled pair's multipliers are 1 ± sqrt(1 - pi), so over the replicates
// their mean is 1 and their variance 1 - pi exactly; the signs are fair
// coins (binomial bounds at 4.5 SD over the pairs and replicates) and
// unrelated between pairs.
func TestMultipliers(t *testing.T) {
	o, err := Options{MaxGrade: 4, Replicates: 1000}.withDefaults(nil)
	if err != nil {
		t.Fatal(err)
	}
	docs := map[string]Label{}
	for i := range 60 {
		docs[fmt.Sprintf("d%02d", i)] = Label{Grade: i % 5, Prob: 0.05 + 0.95*float64(i)/60, Stratum: 1 + i%3}
	}
	docs["certain"] = Label{Grade: 3, Prob: 1}
	ql := label("q", docs, o)
	if len(ql.vary) != 60 {
		t.Fatalf("%d varying labels, want 60", len(ql.vary))
	}
	wb := append([]float64(nil), ql.w...)
	sum := make([]float64, len(ql.w))
	sq := make([]float64, len(ql.w))
	plus, prod := 0, 0.0
	for b := range o.Replicates {
		ql.multipliers(b, wb)
		for i := range wb {
			m := wb[i] / ql.w[i]
			sum[i] += m
			sq[i] += (m - 1) * (m - 1)
		}
		first, second := wb[ql.vary[0]]/ql.w[ql.vary[0]]-1, wb[ql.vary[1]]/ql.w[ql.vary[1]]-1
		prod += first * second
		for _, at := range ql.vary {
			if b%2 == 0 && wb[at] > ql.w[at] {
				plus++
			}
		}
	}
	n := float64(o.Replicates)
	for _, at := range ql.vary {
		pi := 1 / ql.w[at]
		near(t, "mean multiplier", sum[at]/n, 1, 1e-12)
		near(t, "multiplier variance", sq[at]/n, 1-pi, 1e-12)
	}
	certain := ql.index["certain"]
	if sum[certain] != n || sq[certain] != 0 {
		t.Fatalf("a certain pair's multiplier moved: mean %v", sum[certain]/n)
	}
	draws := float64(len(ql.vary) * o.Replicates / 2)
	if d := math.Abs(float64(plus) - draws/2); d > 4.5*math.Sqrt(draws/4) {
		t.Fatalf("%d plus signs of %v", plus, draws)
	}
	// Correlation of two pairs' signs: sd 1/sqrt(n) when unrelated.
	s0 := math.Sqrt((1 - 1/ql.w[ql.vary[0]]) * (1 - 1/ql.w[ql.vary[1]]))
	if r := prod / n / s0; math.Abs(r) > 4.5/math.Sqrt(n/2) {
		t.Fatalf("signs of two pairs correlate: %v", r)
	}
}

// The bootstrap SE of one query's NDCG and AP, with many replicates, is
// close to the delta method's (Horvitz–Thompson variance of the
// linearised estimate, the derivatives taken numerically in each weight):
// the two agree to first order, the bootstrap adding the curvature, which
// is small with 45 of the query's pairs judged (measured: within 0.5% for
// NDCG, 3% for AP; at 30 judged 11% and 4%, at 20 judged 4% and 7%).
//
// And the SE and degrees of freedom Estimate reports follow from that
// bootstrap, computed here again on its own, and numerical derivatives of
// the point and of the bias-corrected estimate in each sampled weight (the
// multipliers' spread held at the design's): SE = bootstrap SE ·
// sqrt(V(corrected) / V(point)), DF = 2 V(corrected)² / W (see spread).
func TestBootstrapSEMatchesDeltaMethod(t *testing.T) {
	c := invent(11, 1, 80, 60, []float64{0.7})
	plan, err := MakePlan(Design{Kind: KindStratified, Depth: 3, MaxDepth: 60, Budget: 45, Seed: 2}, c.runs, nil)
	if err != nil {
		t.Fatal(err)
	}
	labels := labelsOf(c.truth, plan.Choices, nil)
	o := Options{MaxGrade: 4, Replicates: 20000}
	rep, err := Estimate(c.runs, labels, o)
	if err != nil {
		t.Fatal(err)
	}
	q := sortedKeys(labels)[0]
	od, _ := o.withDefaults(labels)
	ql := label(q, labels[q], od)
	var tr runTerms
	var cum cumTable
	ql.terms(c.runs[0].Run[q], od, &tr)
	counts := make([]float64, 5)
	ndcg := func(w []float64) float64 { return tr.dcg(w) / ql.ideal(w, counts, od, &cum) }
	ap := func(w []float64) float64 { return tr.apNum(w) / ql.relevant(w, od.Threshold) }
	// boot is the figure at ql.w, the mean of its replicates and their SD.
	boot := func(f func([]float64) float64) (point, mean, sd float64) {
		point = f(ql.w)
		wb := append([]float64(nil), ql.w...)
		sum, sq := 0.0, 0.0
		for b := range od.Replicates {
			ql.multipliers(b, wb)
			d := f(wb) - point
			sum += d
			sq += d * d
		}
		n := float64(od.Replicates)
		return point, point + sum/n, math.Sqrt(sq/n - sum*sum/n/n)
	}
	corrected := func(f func([]float64) float64) func([]float64) float64 {
		return func(w []float64) float64 {
			saved := ql.w
			ql.w = w
			defer func() { ql.w = saved }()
			point, mean, _ := boot(f)
			return 2*point - mean
		}
	}
	for _, m := range []struct {
		name string
		f    func([]float64) float64
		got  Interval
	}{
		{"NDCG", ndcg, rep.Runs[0].NDCG},
		{"AP", ap, rep.Runs[0].AP},
	} {
		// Derivatives in each sampled weight, by central differences.
		const h = 1e-6
		vp, vc, wc := 0.0, 0.0, 0.0
		cf := corrected(m.f)
		for _, at := range ql.vary {
			w := ql.w[at]
			up, down := append([]float64(nil), ql.w...), append([]float64(nil), ql.w...)
			up[at], down[at] = w+h, w-h
			dp := (m.f(up) - m.f(down)) / (2 * h)
			dc := (cf(up) - cf(down)) / (2 * h)
			vf := (w - 1) * w // (1 - pi) / pi², pi = 1/w
			vp += vf * dp * dp
			vc += vf * dc * dc
			wc += (1 - 1/w) * (vf * dc * dc) * (vf * dc * dc)
		}
		if vp == 0 {
			t.Fatal("no sampled pair: the check checks nothing")
		}
		_, _, se := boot(m.f)
		t.Logf("%s: SE bootstrap %.5f, delta %.5f; corrected/point linearised SE %.4f; reported SE %.5f, DF %.1f",
			m.name, se, math.Sqrt(vp), math.Sqrt(vc/vp), m.got.SE, m.got.DF)
		near(t, m.name+" SE / delta SE", se/math.Sqrt(vp), 1, 0.05)
		near(t, m.name+" reported SE", m.got.SE, se*math.Sqrt(vc/vp), 1e-5*se)
		near(t, m.name+" DF", m.got.DF, 2*vc*vc/wc, 1e-4*m.got.DF)
		if m.got.DF == 0 {
			t.Errorf("%s: no degrees of freedom reported", m.name)
		}
	}
}
