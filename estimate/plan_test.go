package estimate

import (
	"encoding/json"
	"fmt"
	"math"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/internal/reference"
	"github.com/pertinent/pertinent/rankeval"
)

func run(name string, q map[string][]rankeval.ScoredDoc) NamedRun {
	return NamedRun{Name: name, Run: rankeval.Run(q)}
}

func docs(ids ...string) []rankeval.ScoredDoc {
	out := make([]rankeval.ScoredDoc, len(ids))
	for i, id := range ids {
		out[i] = rankeval.ScoredDoc{DocID: id, Score: float64(len(ids) - i)}
	}
	return out
}

func TestBadInput(t *testing.T) {
	good := run("bm25.txt", map[string][]rankeval.ScoredDoc{"q1": docs("a", "b", "c")})
	tied := run("bm25.txt", map[string][]rankeval.ScoredDoc{"q7": {{DocID: "d9", Score: 4.2}, {DocID: "d3", Score: 4.2}, {DocID: "d1", Score: 1}}})
	many := map[string][]rankeval.ScoredDoc{}
	for i := range 25 {
		many[fmt.Sprintf("q%02d", i)] = []rankeval.ScoredDoc{{DocID: "x", Score: 1}, {DocID: "x", Score: 2}}
	}
	cases := []struct {
		name    string
		err     func() error
		want    []string
		lineCnt int // lines of the message, when checked
	}{
		{"no runs", func() error { return CheckRuns(nil, nil, false) }, []string{"no runs given; add at least one run"}, 0},
		{"same name twice", func() error { return CheckRuns([]NamedRun{good, good}, nil, true) },
			[]string{`two runs are named "bm25.txt"; give each run its own name`}, 0},
		{"document twice", func() error {
			return CheckRuns([]NamedRun{run("r", map[string][]rankeval.ScoredDoc{"q1": {{DocID: "d3", Score: 2}, {DocID: "d3", Score: 1}}})}, nil, true)
		}, []string{`run "r", query "q1": document "d3" appears 2 times; keep it once`}, 0},
		{"ties", func() error { return CheckRuns([]NamedRun{tied}, nil, false) },
			[]string{`run "bm25.txt", query "q7": documents "d3" and "d9" have the same score 4.2; give distinct scores, or tick "break ties by document id"`}, 1},
		{"ties broken", func() error { return CheckRuns([]NamedRun{tied}, nil, true) }, nil, 0},
		{"unknown query", func() error { return CheckRuns([]NamedRun{good}, map[string]bool{"q2": true}, true) },
			[]string{`run "bm25.txt" has query "q1", which is not among the project's queries; remove it from the run or add the query to the project`}, 0},
		{"score NaN", func() error {
			return CheckRuns([]NamedRun{run("r", map[string][]rankeval.ScoredDoc{"q1": {{DocID: "a", Score: math.NaN()}}})}, nil, true)
		}, []string{`run "r", query "q1": document "a" has score NaN; give it a finite score`}, 0},
		{"every problem at once, capped", func() error { return CheckRuns([]NamedRun{run("r", many)}, nil, false) },
			[]string{`run "r", query "q00": document "x" appears 2 times`, "and 5 more"}, 21},
		{"budget below the top stratum", func() error {
			_, err := MakePlan(Design{Kind: KindStratified, Depth: 3, MaxDepth: 10, Budget: 2}, []NamedRun{good}, nil)
			return err
		}, []string{"the top stratum (ranks 1-3 of every run) needs 3 judgments and the budget is 2; raise the budget or lower the depth"}, 1},
		{"per-query budget below the top stratum", func() error {
			_, err := MakePlan(Design{Kind: KindStratified, Depth: 3, MaxDepth: 10, PerQuery: 1}, []NamedRun{good}, nil)
			return err
		}, []string{`query "q1": the top stratum (ranks 1-3 of every run) needs 3 judgments and the budget per query is 1`}, 1},
		{"known pairs cost nothing", func() error {
			_, err := MakePlan(Design{Kind: KindStratified, Depth: 3, MaxDepth: 10, Budget: 2}, []NamedRun{good},
				Labels{"q1": {"a": {Grade: 2, Prob: 1}}})
			return err
		}, nil, 0},
		{"adaptive design", func() error {
			_, err := MakePlan(Design{Kind: KindDecide, Depth: 3}, []NamedRun{good}, nil)
			return err
		}, []string{"use PlanDecide or PlanFind"}, 0},
		{"stratified without budget", func() error {
			_, err := MakePlan(Design{Kind: KindStratified, Depth: 3, MaxDepth: 10}, []NamedRun{good}, nil)
			return err
		}, []string{"a stratified design needs a budget: set the total budget or the budget per query"}, 0},
		{"max depth not below depth", func() error {
			_, err := MakePlan(Design{Kind: KindStratified, Depth: 10, MaxDepth: 10, Budget: 50}, []NamedRun{good}, nil)
			return err
		}, []string{"max depth 10: set the deepest rank to sample above the depth 10"}, 0},
		{"plan refuses duplicates", func() error {
			_, err := MakePlan(Design{Kind: KindDepth, Depth: 3}, []NamedRun{run("r", map[string][]rankeval.ScoredDoc{"q1": {{DocID: "d3", Score: 2}, {DocID: "d3", Score: 1}}})}, nil)
			return err
		}, []string{`document "d3" appears 2 times`}, 0},
		{"estimate refuses a probability of 0", func() error {
			_, err := Estimate([]NamedRun{good}, Labels{"q1": {"a": {Grade: 1, Prob: 0}}}, Options{})
			return err
		}, []string{`query "q1", document "a": probability 0; probabilities lie in (0, 1]`}, 0},
		{"estimate refuses a grade above the top", func() error {
			_, err := Estimate([]NamedRun{good}, Labels{"q1": {"a": {Grade: 5, Prob: 1}}}, Options{MaxGrade: 4})
			return err
		}, []string{`grade 5 outside 0..4`}, 0},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			err := c.err()
			if c.want == nil {
				if err != nil {
					t.Fatalf("unexpected error: %v", err)
				}
				return
			}
			if err == nil {
				t.Fatalf("no error, want %q", c.want)
			}
			for _, w := range c.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error\n%s\nlacks %q", err, w)
				}
			}
			if n := strings.Count(err.Error(), "\n") + 1; c.lineCnt > 0 && n != c.lineCnt {
				t.Errorf("%d lines, want %d:\n%s", n, c.lineCnt, err)
			}
		})
	}
}

func TestPlanStrataAndChoices(t *testing.T) {
	c := invent(9, 20, 150, 100, []float64{0.5, 1, 1.5})
	d := Design{Kind: KindStratified, Depth: 5, MaxDepth: 100, Budget: 1200, Seed: 4}
	p, err := MakePlan(d, c.runs, nil)
	if err != nil {
		t.Fatal(err)
	}
	again, _ := MakePlan(d, c.runs, nil)
	if !reflect.DeepEqual(p, again) {
		t.Fatal("the same design and seed gave two plans")
	}
	d.Seed = 5
	other, _ := MakePlan(d, c.runs, nil)
	if reflect.DeepEqual(p.Choices, other.Choices) {
		t.Fatal("another seed gave the same sample")
	}
	wantBands := [][2]int{{1, 5}, {6, 10}, {11, 20}, {21, 40}, {41, 80}, {81, 100}}
	if len(p.Strata) != len(wantBands) {
		t.Fatalf("strata %+v", p.Strata)
	}
	expected := 0.0
	for i, s := range p.Strata {
		if s.FromRank != wantBands[i][0] || s.ToRank != wantBands[i][1] {
			t.Errorf("stratum %d: ranks %d-%d, want %v", i, s.FromRank, s.ToRank, wantBands[i])
		}
		if i > 1 && s.Rate > p.Strata[i-1].Rate {
			t.Errorf("stratum %d rate %v above the stratum before (%v)", i, s.Rate, p.Strata[i-1].Rate)
		}
		expected += s.Expected
	}
	near(t, "expected sample size", expected, 1200, 1e-6)
	// Rates follow the mean discount: r_s / r_t = m_s / m_t below the cap.
	m := func(i int) float64 { return meanDiscount(band{p.Strata[i].FromRank, p.Strata[i].ToRank}) }
	near(t, "rate ratio", p.Strata[2].Rate/p.Strata[4].Rate, m(2)/m(4), 1e-9)
	best := bestRanks(c.runs)
	for _, ch := range p.Choices {
		r := best[ch.Query][ch.Doc]
		if ch.Priority != 101-r {
			t.Fatalf("%+v: priority, want %d", ch, 101-r)
		}
		if r <= 5 {
			if ch.Stratum != 0 || ch.Prob != 1 || !strings.HasPrefix(ch.Reason, "rank "+strconv.Itoa(r)+" in run") || !strings.HasSuffix(ch.Reason, ", judged in full") {
				t.Fatalf("top pair %+v", ch)
			}
		} else if want := fmt.Sprintf("ranks %d-%d, sampled at rate %.3g", p.Strata[ch.Stratum].FromRank, p.Strata[ch.Stratum].ToRank, ch.Prob); ch.Reason != want || ch.Combined != ch.Prob {
			t.Fatalf("%+v: want reason %q", ch, want)
		}
	}
	if _, err := json.Marshal(p); err != nil {
		t.Fatal(err)
	}
}

func TestDepthPlan(t *testing.T) {
	runs := []NamedRun{
		run("a", map[string][]rankeval.ScoredDoc{"q": docs("d1", "d2", "d3", "d4")}),
		run("b", map[string][]rankeval.ScoredDoc{"q": docs("d5", "d1", "d6")}),
	}
	known := Labels{"q": {"d2": {Grade: 1, Prob: 1}, "d5": {Grade: -1, Prob: 0.3, Stratum: 2}}}
	p, err := MakePlan(Design{Kind: KindDepth, Depth: 2}, runs, known)
	if err != nil {
		t.Fatal(err)
	}
	want := []Choice{
		{Query: "q", Doc: "d1", Prob: 1, Combined: 1, Priority: 2, Reason: "rank 1 in a, in the depth-2 pool"},
		{Query: "q", Doc: "d5", Prob: 1, Combined: 1, Priority: 2, Reason: "rank 1 in b, in the depth-2 pool; chosen before, now certain"},
	}
	if !reflect.DeepEqual(p.Choices, want) || p.Already != 2 {
		t.Fatalf("choices %+v already %d", p.Choices, p.Already)
	}
}

// A pair the project holds at probability p is not drawn again: it is
// chosen with Combined = the new rate when that is above p, and left alone
// otherwise; a pair it lacks is drawn iff its permanent random number lies
// below the rate.
func TestCombinedProbabilityRecorded(t *testing.T) {
	var ids []string
	for i := range 40 {
		ids = append(ids, fmt.Sprintf("d%02d", i))
	}
	runs := []NamedRun{run("a", map[string][]rankeval.ScoredDoc{"q": docs(ids...)})}
	known := Labels{"q": {
		"d20": {Grade: 2, Prob: 0.01, Stratum: 3},
		"d30": {Grade: 0, Prob: 0.99, Stratum: 3},
		"d02": {Grade: -1, Prob: 0.5, Stratum: 1},
	}}
	d := Design{Kind: KindStratified, Depth: 5, MaxDepth: 40, Budget: 15, Seed: 1}
	p, err := MakePlan(d, runs, known)
	if err != nil {
		t.Fatal(err)
	}
	rate := p.Strata[3].Rate
	if !(rate > 0.01 && rate < 0.99) {
		t.Fatalf("rate %v of ranks 21-40: the check needs it between the known probabilities", rate)
	}
	chosen := map[string]Choice{}
	for _, ch := range p.Choices {
		chosen[ch.Doc] = ch
		if ch.Combined != ch.Prob {
			t.Errorf("%+v: Combined is the rate", ch)
		}
	}
	if ch, ok := chosen["d20"]; !ok || ch.Combined != rate || !strings.Contains(ch.Reason, "chosen before, probability now") {
		t.Errorf("known pair below the rate: %+v (chosen %v)", ch, ok)
	}
	if _, ok := chosen["d30"]; ok {
		t.Error("known pair above the rate chosen again")
	}
	if ch := chosen["d02"]; ch.Combined != 1 || !strings.HasSuffix(ch.Reason, "chosen before, now certain") {
		t.Errorf("known pair in the top stratum: %+v", ch)
	}
	if p.Already != 3 {
		t.Errorf("already %d, want 3", p.Already)
	}
	for i, id := range ids[5:] {
		if _, ok := known["q"][id]; ok {
			continue
		}
		s := stratumOf(strataBands(5, 40), i+6)
		want := prn(d.Seed, "q", id) < p.Strata[s].Rate
		if _, ok := chosen[id]; ok != want {
			t.Errorf("%s: chosen %v, want %v (prn %v, rate %v)", id, ok, want, prn(d.Seed, "q", id), p.Strata[s].Rate)
		}
	}
}

// The permanent random numbers are uniform on [0, 1): a Kolmogorov–Smirnov
// test (scipy.stats.kstest) of 10,000 pairs' numbers under each of two
// seeds, and a Pearson correlation (scipy.stats.pearsonr) between the two
// seeds' numbers of the same pairs, which should be unrelated.
func TestPermanentRandomNumbersUniform(t *testing.T) {
	var a, b []float64
	for q := range 100 {
		for d := range 100 {
			qs, ds := fmt.Sprintf("q%d", q), fmt.Sprintf("doc-%d", d)
			a = append(a, prn(1, qs, ds))
			b = append(b, prn(2, qs, ds))
		}
	}
	in, _ := json.Marshal(map[string][]float64{"a": a, "b": b})
	out := reference.RunPython(t, "scipy", `
import json, sys
from scipy.stats import kstest, pearsonr
d = json.load(sys.stdin)
print(json.dumps({"pa": kstest(d["a"], "uniform").pvalue, "pb": kstest(d["b"], "uniform").pvalue, "pr": pearsonr(d["a"], d["b"]).pvalue}))
`, in)
	var got struct{ Pa, Pb, Pr float64 }
	if err := json.Unmarshal(out, &got); err != nil {
		t.Fatal(err)
	}
	// Fixed inputs, so the p-values are fixed too; 0.001 only catches a
	// broken hash.
	if got.Pa < 0.001 || got.Pb < 0.001 || got.Pr < 0.001 {
		t.Fatalf("p-values: uniform %v %v, unrelated across seeds %v", got.Pa, got.Pb, got.Pr)
	}
	t.Logf("KS p-values %.3f %.3f, correlation across seeds p %.3f", got.Pa, got.Pb, got.Pr)
}

// The normal quantile and distribution function behind every interval,
// against scipy.stats.norm.
func TestNormalAgainstScipy(t *testing.T) {
	levels := []float64{0.5, 0.8, 0.9, 0.95, 0.99, 0.999}
	xs := []float64{-6, -3.2, -1.96, -1, -0.1, 0, 0.3, 1.2, 1.645, 2.58, 5}
	in, _ := json.Marshal(map[string][]float64{"levels": levels, "xs": xs})
	out := reference.RunPython(t, "scipy", `
import json, sys
from scipy.stats import norm
d = json.load(sys.stdin)
print(json.dumps({"z": [norm.ppf((1 + l) / 2) for l in d["levels"]], "phi": [norm.cdf(x) for x in d["xs"]]}))
`, in)
	var want struct{ Z, Phi []float64 }
	if err := json.Unmarshal(out, &want); err != nil {
		t.Fatal(err)
	}
	for i, l := range levels {
		near(t, fmt.Sprintf("z(%v)", l), zFor(l), want.Z[i], 1e-12)
	}
	for i, x := range xs {
		near(t, fmt.Sprintf("phi(%v)", x), phi(x), want.Phi[i], 1e-15)
	}
}
