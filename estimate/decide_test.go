package estimate

import (
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/rankeval"
)

// adaptiveSim is an invented collection with a complete ground truth.
type adaptiveSim struct {
	truth rankeval.Qrels
	runs  []NamedRun
}

// newAdaptiveSim makes queries of docs documents each; a document's
// true grade is 0..4 with probabilities 0.55, 0.2, 0.12, 0.08, 0.05. Each
// run scores every document as quality * grade + standard normal noise, so
// a higher quality ranks relevant documents higher.
func newAdaptiveSim(seed uint64, queries, docs int, quality map[string]float64, names []string) adaptiveSim {
	rng := rand.New(rand.NewPCG(seed, 7))
	c := adaptiveSim{truth: rankeval.Qrels{}}
	runs := make([]rankeval.Run, len(names))
	for i := range runs {
		runs[i] = rankeval.Run{}
	}
	cum := []float64{0.55, 0.75, 0.87, 0.95, 1}
	for q := range queries {
		qid := fmt.Sprintf("q%02d", q)
		c.truth[qid] = map[string]int{}
		for d := range docs {
			did := fmt.Sprintf("d%03d", d)
			u, g := rng.Float64(), 0
			for u > cum[g] {
				g++
			}
			c.truth[qid][did] = g
			for i, n := range names {
				runs[i][qid] = append(runs[i][qid], rankeval.ScoredDoc{DocID: did, Score: quality[n]*float64(g) + rng.NormFloat64()})
			}
		}
	}
	for i, n := range names {
		c.runs = append(c.runs, NamedRun{Name: n, Run: runs[i]})
	}
	return c
}

func adaptiveMeanNDCG(t *testing.T, q rankeval.Qrels, run rankeval.Run, k int, g rankeval.Gain) float64 {
	t.Helper()
	s, err := rankeval.Evaluate(q, run, rankeval.Options{K: k, Gain: g, Threshold: 1, MaxGrade: 4})
	if err != nil {
		t.Fatal(err)
	}
	return s.NDCG
}

// adaptivePoolSize is the number of distinct pairs in the top k of the given runs.
func adaptivePoolSize(runs []NamedRun, k int) int {
	n := 0
	for _, q := range adaptiveQueries(runs...) {
		seen := map[string]bool{}
		for _, r := range runs {
			ranked := rankeval.Rank(r.Run[q])
			for i := 0; i < k && i < len(ranked); i++ {
				seen[ranked[i].DocID] = true
			}
		}
		n += len(seen)
	}
	return n
}

// TestDecideSettlesWithFewerJudgmentsThanPooling runs the minimal test
// collection loop on 20 simulated collections: 50 queries of 60 documents,
// two runs of quality 1.0 and 1.4 (which one is A changes with the seed),
// drawn again until their true mean NDCG@10 over the complete ground truth
// differs by at least 0.05. Each released pair is judged with its true
// grade until the decision is settled or nothing is left.
func TestDecideSettlesWithFewerJudgmentsThanPooling(t *testing.T) {
	const collections = 20
	right, sumJudged, sumPool := 0, 0, 0
	for s := range uint64(collections) {
		qa, qb := 1.0, 1.4
		if s%2 == 1 {
			qa, qb = qb, qa
		}
		var c adaptiveSim
		var trueDiff float64
		for try := uint64(0); ; try++ {
			c = newAdaptiveSim(1000*s+try, 50, 60, map[string]float64{"A": qa, "B": qb}, []string{"A", "B"})
			trueDiff = adaptiveMeanNDCG(t, c.truth, c.runs[1].Run, 10, rankeval.GainExponential) -
				adaptiveMeanNDCG(t, c.truth, c.runs[0].Run, 10, rankeval.GainExponential)
			if math.Abs(trueDiff) >= 0.05 {
				break
			}
		}
		d := Design{Kind: KindDecide, RunA: "A", RunB: "B", Seed: s}
		known := Labels{}
		judged := 0
		for {
			plan, err := PlanDecide(d, c.runs, known, rankeval.GainExponential, 4)
			if err != nil {
				t.Fatal(err)
			}
			if len(plan.Choices) == 0 {
				break
			}
			for _, ch := range plan.Choices {
				if _, dup := known[ch.Query][ch.Doc]; dup {
					t.Fatalf("collection %d: pair %s/%s released twice", s, ch.Query, ch.Doc)
				}
				if known[ch.Query] == nil {
					known[ch.Query] = map[string]Label{}
				}
				known[ch.Query][ch.Doc] = Label{Grade: c.truth[ch.Query][ch.Doc], Prob: 1, Stratum: -1}
				judged++
			}
		}
		dec, err := Decide(d, c.runs, known, rankeval.GainExponential, 4)
		if err != nil {
			t.Fatal(err)
		}
		pool := adaptivePoolSize(c.runs, 10)
		sign := -1.0
		if dec.ProbBBeatsA >= 0.5 {
			sign = 1
		}
		ok := dec.Settled && sign*trueDiff > 0
		if ok {
			right++
		}
		t.Logf("collection %2d: true diff %+.3f, decided %+.3f [%+.3f, %+.3f] p=%.3f certain=%v right=%v; judged %d, depth-10 pool %d: %s",
			s, trueDiff, dec.Diff, dec.Low, dec.High, dec.ProbBBeatsA, dec.Certain, ok, judged, pool, dec.Text)
		if judged >= pool {
			t.Errorf("collection %d: %d judgments, not fewer than the depth-10 pool's %d", s, judged, pool)
		}
		sumJudged += judged
		sumPool += pool
	}
	t.Logf("right sign in %d of %d; mean judgments %.1f against a mean depth-10 pool of %.1f",
		right, collections, float64(sumJudged)/collections, float64(sumPool)/collections)
	if float64(right) < 0.95*collections {
		t.Errorf("right sign in %d of %d collections, want at least 95%%", right, collections)
	}
}

// TestDecideWithEverythingJudgedIsExact: with every pair graded the
// decision is rankeval's difference of mean NDCG@K, certain, with a
// probability of 0 or 1. Includes a query without any relevant document
// (left out, as rankeval does), a query one run lacks, and graded
// documents outside both top Ks (they count in the ideal DCG).
func TestDecideWithEverythingJudgedIsExact(t *testing.T) {
	for s := range uint64(10) {
		c := newAdaptiveSim(50+s, 12, 30, map[string]float64{"A": 0.8, "B": 1.0}, []string{"A", "B"})
		for d := range c.truth["q03"] {
			c.truth["q03"][d] = 0
		}
		delete(c.runs[0].Run, "q05")
		for _, pooled := range []bool{false, true} {
			known := Labels{}
			qrels := rankeval.Qrels{}
			for q, docs := range c.truth {
				known[q], qrels[q] = map[string]Label{}, map[string]int{}
				for d, g := range docs {
					// Pooled: only the top 10s (and one deep document) are judged.
					if pooled && d > "d012" && !adaptiveInTop(c.runs, q, d, 10) {
						continue
					}
					known[q][d] = Label{Grade: g, Prob: 1}
					qrels[q][d] = g
				}
			}
			for _, gain := range []rankeval.Gain{rankeval.GainExponential, rankeval.GainLinear} {
				for _, k := range []int{5, 10} {
					d := Design{RunA: "A", RunB: "B", K: k, Seed: s}
					dec, err := Decide(d, c.runs, known, gain, 4)
					if err != nil {
						t.Fatal(err)
					}
					want := adaptiveMeanNDCG(t, qrels, c.runs[1].Run, k, gain) - adaptiveMeanNDCG(t, qrels, c.runs[0].Run, k, gain)
					if math.Abs(dec.Diff-want) > 1e-12 || math.Abs(dec.Low-want) > 1e-12 || math.Abs(dec.High-want) > 1e-12 {
						t.Errorf("seed %d pooled %v gain %v k %d: diff %.15f [%g, %g], rankeval %.15f", s, pooled, gain, k, dec.Diff, dec.Low, dec.High, want)
					}
					if !dec.Certain || !dec.Settled || dec.Unjudged != 0 || dec.Draws != 1 {
						t.Errorf("seed %d: certain %v settled %v unjudged %d draws %d", s, dec.Certain, dec.Settled, dec.Unjudged, dec.Draws)
					}
					if wantP := map[bool]float64{true: 1, false: 0}[want > 0]; dec.ProbBBeatsA != wantP {
						t.Errorf("seed %d: P(B beats A) = %g with everything judged, want %g", s, dec.ProbBBeatsA, wantP)
					}
					plan, err := PlanDecide(d, c.runs, known, gain, 4)
					if err != nil || len(plan.Choices) != 0 {
						t.Errorf("settled plan: %v, %d choices", err, len(plan.Choices))
					}
				}
			}
		}
	}
}

func adaptiveInTop(runs []NamedRun, q, doc string, k int) bool {
	for _, r := range runs {
		ranked := rankeval.Rank(r.Run[q])
		for i := 0; i < k && i < len(ranked); i++ {
			if ranked[i].DocID == doc {
				return true
			}
		}
	}
	return false
}

func adaptiveOneQuery(name string, docs ...string) NamedRun {
	run := rankeval.Run{}
	for i, d := range docs {
		run["q"] = append(run["q"], rankeval.ScoredDoc{DocID: d, Score: float64(len(docs) - i)})
	}
	return NamedRun{Name: name, Run: run}
}

// TestPlanDecideOrdersByWeight is worked by hand: K = 3, A ranks a b c,
// B ranks b d a. The weights disc_B - disc_A with disc(r) = 1/log2(r+1):
// d = 1/log2(3) = 0.631, a = 1/2 - 1 = -0.5, c = 0 - 1/2 = -0.5,
// b = 1 - 0.631 = 0.369. One query, so the order is by |w|: d, then a and c
// (tied, by id), then b. A known pair (c, chosen but not graded) is never
// released again.
func TestPlanDecideOrdersByWeight(t *testing.T) {
	runs := []NamedRun{adaptiveOneQuery("A", "a", "b", "c"), adaptiveOneQuery("B", "b", "d", "a")}
	d := Design{RunA: "A", RunB: "B", K: 3}
	plan, err := PlanDecide(d, runs, Labels{}, rankeval.GainExponential, 4)
	if err != nil {
		t.Fatal(err)
	}
	if got := adaptiveChoiceDocs(plan); got != "d a c b" {
		t.Fatalf("order %q, want %q", got, "d a c b")
	}
	for i, c := range plan.Choices {
		if c.Stratum != -1 || c.Prob != 1 || c.Priority != 4-i || c.Reason == "" {
			t.Errorf("choice %+v", c)
		}
	}
	if !strings.Contains(plan.Choices[0].Reason, "rank 2 in B") || !strings.Contains(plan.Choices[0].Reason, "not in A's top 3") {
		t.Errorf("reason %q", plan.Choices[0].Reason)
	}
	plan, err = PlanDecide(d, runs, Labels{"q": {"c": {Grade: -1, Prob: 1, Stratum: -1}}}, rankeval.GainExponential, 4)
	if err != nil {
		t.Fatal(err)
	}
	if got := adaptiveChoiceDocs(plan); got != "d a b" {
		t.Fatalf("order with c pending %q, want %q", got, "d a b")
	}
}

func adaptiveChoiceDocs(p Plan) string {
	var s []string
	for _, c := range p.Choices {
		s = append(s, c.Doc)
	}
	return strings.Join(s, " ")
}

// TestDecideCertainByHand: K = 2, A ranks x y, B ranks z w; z and w are
// graded 4 (gain 15): DCG(B) = 15 + 15/log2(3) = 24.46. With x graded 0
// and y unjudged, A's DCG is at most 15/log2(3) = 9.46 (y at grade 4 in
// rank 2), below B's whatever y is: certain. With x unjudged too, A could
// reach 24.46 (a tie): not certain.
func TestDecideCertainByHand(t *testing.T) {
	runs := []NamedRun{adaptiveOneQuery("A", "x", "y"), adaptiveOneQuery("B", "z", "w")}
	d := Design{RunA: "A", RunB: "B", K: 2}
	known := Labels{"q": {"z": {Grade: 4, Prob: 1}, "w": {Grade: 4, Prob: 1}, "x": {Grade: 0, Prob: 1}}}
	dec, err := Decide(d, runs, known, rankeval.GainExponential, 4)
	if err != nil {
		t.Fatal(err)
	}
	if !dec.Certain || !dec.Settled || dec.Unjudged != 1 || dec.Judged != 3 || dec.ProbBBeatsA != 1 {
		t.Errorf("one unjudged: %+v", dec)
	}
	if !strings.Contains(dec.Text, "B beats A") || !strings.Contains(dec.Text, "whatever") {
		t.Errorf("text %q", dec.Text)
	}
	delete(known["q"], "x")
	dec, err = Decide(d, runs, known, rankeval.GainExponential, 4)
	if err != nil {
		t.Fatal(err)
	}
	if dec.Certain || dec.Unjudged != 2 {
		t.Errorf("two unjudged: %+v", dec)
	}
	// B fails to win only when x and y are both at grade 4 (a tie). Both
	// are at ranks 1-3, where the graded documents are z and w, both 4: with
	// one pseudo-count per grade P(4) = (2+1)/(2+5) = 3/7, so
	// P(B beats A) = 1 - (3/7)^2 = 40/49 = 0.816; 2,000 draws hold it to
	// about 0.009 (one standard error).
	if want := 40.0 / 49; math.Abs(dec.ProbBBeatsA-want) > 0.03 || dec.Draws != DecideDraws {
		t.Errorf("P(B beats A) = %g over %d draws, want about %.3f", dec.ProbBBeatsA, dec.Draws, want)
	}
}

// TestDecideNotSettledSaysHowMany: nothing judged on a close pair of runs.
func TestDecideNotSettledSaysHowMany(t *testing.T) {
	c := newAdaptiveSim(3, 20, 30, map[string]float64{"A": 1, "B": 1.05}, []string{"A", "B"})
	dec, err := Decide(Design{RunA: "A", RunB: "B"}, c.runs, Labels{}, rankeval.GainExponential, 4)
	if err != nil {
		t.Fatal(err)
	}
	if dec.Settled || dec.Judged != 0 || dec.Unjudged != adaptivePoolSize(c.runs, 10) || !strings.HasPrefix(dec.Text, "Not settled yet") {
		t.Errorf("%+v", dec)
	}
	if dec.Low > dec.Diff || dec.Diff > dec.High {
		t.Errorf("interval [%g, %g] does not hold %g", dec.Low, dec.High, dec.Diff)
	}
	again, _ := Decide(Design{RunA: "A", RunB: "B"}, c.runs, Labels{}, rankeval.GainExponential, 4)
	if again != dec {
		t.Errorf("not repeatable: %+v then %+v", dec, again)
	}
	t.Log(dec.Text)
}

func TestDecideRefuses(t *testing.T) {
	runs := []NamedRun{adaptiveOneQuery("A", "a"), adaptiveOneQuery("B", "b")}
	for _, c := range []struct {
		d    Design
		want string
	}{
		{Design{RunA: "nope", RunB: "B"}, `run A "nope" is not among the runs ("A", "B")`},
		{Design{RunA: "A", RunB: "nope"}, `run B "nope" is not among the runs`},
		{Design{RunA: "A", RunB: "A"}, `run A and run B are both "A"; a decision needs two different runs`},
		{Design{RunB: "B"}, "needs run A and run B"},
		{Design{Kind: KindDepth, RunA: "A", RunB: "B"}, `a "depth" design cannot decide`},
		{Design{RunA: "A", RunB: "B", Confidence: 0.4}, "confidence 0.4 must lie between 0.5 and 1"},
		{Design{RunA: "A", RunB: "B", Wave: -1}, "wave -1 is negative"},
	} {
		_, err := PlanDecide(c.d, runs, Labels{}, rankeval.GainExponential, 4)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v, want %q", c.d, err, c.want)
		}
		_, err = Decide(c.d, runs, Labels{}, rankeval.GainExponential, 4)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("Decide %+v: error %v, want %q", c.d, err, c.want)
		}
	}
	d := Design{RunA: "A", RunB: "B"}
	if _, err := Decide(d, runs, Labels{"q": {"a": {Grade: 5}}}, rankeval.GainExponential, 4); err == nil || !strings.Contains(err.Error(), "grade 5 outside -1..4") {
		t.Errorf("grade off the scale: %v", err)
	}
	if _, err := Decide(d, runs, Labels{}, rankeval.Gain(7), 4); err == nil || !strings.Contains(err.Error(), "unknown gain") {
		t.Errorf("unknown gain: %v", err)
	}
}
