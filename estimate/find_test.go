package estimate

import (
	"fmt"
	"math/rand/v2"
	"reflect"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/rankeval"
)

// adaptiveJudge records true grades for the chosen pairs.
func adaptiveJudge(known Labels, truth rankeval.Qrels, choices []Choice) {
	for _, c := range choices {
		if known[c.Query] == nil {
			known[c.Query] = map[string]Label{}
		}
		known[c.Query][c.Doc] = Label{Grade: truth[c.Query][c.Doc], Prob: 1, Stratum: -1}
	}
}

// TestMoveToFrontByHand is worked by hand. Runs r1: a b c d and r2: e a f g;
// a, b, d and g are not relevant, c, e and f are (threshold 1). r1 starts in
// front: a is not relevant, so r2 goes to the front; e is relevant (r2
// stays), a was taken already (passed over), f is relevant, g is not (r1
// back in front); b is not (r2 in front, but it has nothing left); c, d.
// Judged one at a time: a e f g b c d.
func TestMoveToFrontByHand(t *testing.T) {
	runs := []NamedRun{adaptiveOneQuery("r1", "a", "b", "c", "d"), adaptiveOneQuery("r2", "e", "a", "f", "g")}
	truth := rankeval.Qrels{"q": {"a": 0, "b": 0, "c": 2, "d": 0, "e": 3, "f": 1, "g": 0}}
	d := Design{Kind: KindFind, Method: FindMoveToFront, Wave: 1}
	known := Labels{}
	var order []string
	var reasons []string
	for {
		plan, err := PlanFind(d, runs, known, 1)
		if err != nil {
			t.Fatal(err)
		}
		if len(plan.Choices) == 0 {
			break
		}
		c := plan.Choices[0]
		if c.Stratum != -1 || c.Prob != 1 || c.Combined != 1 || c.Priority != 1 {
			t.Errorf("choice %+v", c)
		}
		order = append(order, c.Doc)
		reasons = append(reasons, c.Reason)
		adaptiveJudge(known, truth, plan.Choices)
	}
	if got := strings.Join(order, " "); got != "a e f g b c d" {
		t.Fatalf("move-to-front judged %q, want %q", got, "a e f g b c d")
	}
	for i, want := range []string{
		"next of run r1 for query q (run r1 has no judged documents yet)",
		"next of run r2 for query q (run r2 has no judged documents yet)",
		"next of run r2 for query q (run r2 found 1 relevant of 2 so far)", // e, and a passed over
		"next of run r2 for query q (run r2 found 2 relevant of 3 so far)",
		"next of run r1 for query q (run r1 found 0 relevant of 1 so far)",
	} {
		if reasons[i] != want {
			t.Errorf("reason %d: %q, want %q", i, reasons[i], want)
		}
	}

	// A wave of three from nothing: r1's a, b and c, since pairs without a
	// grade yet tell nothing and r1 stays in front.
	plan, err := PlanFind(Design{Method: FindMoveToFront, Wave: 3}, runs, Labels{}, 1)
	if err != nil {
		t.Fatal(err)
	}
	if got := adaptiveChoiceDocs(plan); got != "a b c" {
		t.Errorf("first wave %q, want %q", got, "a b c")
	}
	// With a graded 0 and b pending: r2 goes in front, e, then a is taken,
	// f, g.
	known = Labels{"q": {"a": {Grade: 0, Prob: 1}, "b": {Grade: -1, Prob: 1}}}
	plan, err = PlanFind(Design{Method: FindMoveToFront, Wave: 4}, runs, known, 1)
	if err != nil {
		t.Fatal(err)
	}
	if got := adaptiveChoiceDocs(plan); got != "e f g c" {
		t.Errorf("wave after a = 0, b pending: %q, want %q", got, "e f g c")
	}
	if plan.Already != 2 {
		t.Errorf("already %d, want 2", plan.Already)
	}
}

// adaptiveFindCollection: queries of 100 documents, about 10% relevant (grade 1-3);
// run "good" scores 2.5 * relevant + noise, four others 0.3 * relevant +
// noise. The good run is given third, so neither method starts with it.
func adaptiveFindCollection(seed uint64, queries int) (rankeval.Qrels, []NamedRun) {
	rng := rand.New(rand.NewPCG(seed, 11))
	truth := rankeval.Qrels{}
	names := []string{"p1", "p2", "good", "p3", "p4"}
	runs := make([]NamedRun, len(names))
	for i, n := range names {
		runs[i] = NamedRun{Name: n, Run: rankeval.Run{}}
	}
	for q := range queries {
		qid := fmt.Sprintf("q%02d", q)
		truth[qid] = map[string]int{}
		for d := range 100 {
			did := fmt.Sprintf("d%03d", d)
			g := 0
			if rng.Float64() < 0.1 {
				g = 1 + rng.IntN(3)
			}
			truth[qid][did] = g
			rel := 0.0
			if g > 0 {
				rel = 1
			}
			for i, n := range names {
				signal := 0.3
				if n == "good" {
					signal = 2.5
				}
				runs[i].Run[qid] = append(runs[i].Run[qid], rankeval.ScoredDoc{DocID: did, Score: signal*rel + rng.NormFloat64()})
			}
		}
	}
	return truth, runs
}

// adaptivePoolOrder is judging in depth-pool order: per query rank 1 of every run
// (in the runs' order), then rank 2, and so on, each document once; the
// queries take turns one pair at a time.
func adaptivePoolOrder(truth rankeval.Qrels, runs []NamedRun, n, threshold int) int {
	queries := adaptiveQueries(runs...)
	per := make([][]string, len(queries))
	for qi, q := range queries {
		seen := map[string]bool{}
		ranked := make([][]rankeval.ScoredDoc, len(runs))
		for i, r := range runs {
			ranked[i] = rankeval.Rank(r.Run[q])
		}
		for depth := 0; depth < 100; depth++ {
			for i := range runs {
				if depth < len(ranked[i]) && !seen[ranked[i][depth].DocID] {
					seen[ranked[i][depth].DocID] = true
					per[qi] = append(per[qi], ranked[i][depth].DocID)
				}
			}
		}
	}
	found, judged := 0, 0
	for i := 0; judged < n; i++ {
		for qi, q := range queries {
			if judged == n {
				break
			}
			if i < len(per[qi]) {
				judged++
				if truth[q][per[qi][i]] >= threshold {
					found++
				}
			}
		}
	}
	return found
}

// TestFindBeatsPoolOrder: with one run much better than the others, both
// methods find more relevant documents after 100, 200 and 400 judgments
// (10, 20 and 40 per query) than judging in depth-pool order does, over 5
// simulated collections of 10 queries, in waves of 20.
func TestFindBeatsPoolOrder(t *testing.T) {
	checkpoints := []int{100, 200, 400}
	total := map[string][]int{}
	for s := range uint64(5) {
		truth, runs := adaptiveFindCollection(s, 10)
		for _, method := range []string{FindMoveToFront, FindBandit} {
			d := Design{Kind: KindFind, Method: method, Seed: s}
			known := Labels{}
			judged, found := 0, 0
			var at []int
			for len(at) < len(checkpoints) {
				plan, err := PlanFind(d, runs, known, 1)
				if err != nil {
					t.Fatal(err)
				}
				if len(plan.Choices) != 20 {
					t.Fatalf("%s: wave of %d", method, len(plan.Choices))
				}
				for _, c := range plan.Choices {
					if _, dup := known[c.Query][c.Doc]; dup {
						t.Fatalf("%s: %s/%s released twice", method, c.Query, c.Doc)
					}
				}
				for _, c := range plan.Choices {
					adaptiveJudge(known, truth, []Choice{c})
					judged++
					if truth[c.Query][c.Doc] >= 1 {
						found++
					}
					if judged == checkpoints[len(at)] {
						at = append(at, found)
						if len(at) == len(checkpoints) {
							break
						}
					}
				}
			}
			for i, n := range checkpoints {
				pool := adaptivePoolOrder(truth, runs, n, 1)
				t.Logf("collection %d: %s found %d relevant after %d judgments, depth-pool order %d", s, method, at[i], n, pool)
				if at[i] <= pool {
					t.Errorf("collection %d: %s found %d relevant after %d judgments, not more than depth-pool order's %d", s, method, at[i], n, pool)
				}
				total[method] = append(total[method], at[i])
				if method == FindBandit {
					total["pool"] = append(total["pool"], pool)
				}
			}
		}
	}
	for _, m := range []string{FindMoveToFront, FindBandit, "pool"} {
		for i, n := range checkpoints {
			sum := 0
			for j := i; j < len(total[m]); j += len(checkpoints) {
				sum += total[m][j]
			}
			t.Logf("%s: mean %.1f relevant after %d judgments", m, float64(sum)/5, n)
		}
	}
}

// TestFindWaveGoesRoundTheQueries: 50 queries and waves of 20: the first
// wave gives one pair to each of 20 queries, the next (the first still
// waiting for grades) to 20 others, the bandit repeats itself with the
// same seed, and nothing pending comes back.
func TestFindWaveGoesRoundTheQueries(t *testing.T) {
	_, runs := adaptiveFindCollection(9, 50)
	for _, method := range []string{FindBandit, FindMoveToFront} {
		d := Design{Method: method, Seed: 4}
		known := Labels{}
		first, err := PlanFind(d, runs, known, 1)
		if err != nil {
			t.Fatal(err)
		}
		again, _ := PlanFind(d, runs, known, 1)
		if !reflect.DeepEqual(first, again) {
			t.Errorf("%s: not repeatable", method)
		}
		qs := map[string]bool{}
		for _, c := range first.Choices {
			qs[c.Query] = true
			if known[c.Query] == nil {
				known[c.Query] = map[string]Label{}
			}
			known[c.Query][c.Doc] = Label{Grade: -1, Prob: 1, Stratum: -1}
		}
		if len(first.Choices) != 20 || len(qs) != 20 {
			t.Fatalf("%s: first wave %d pairs over %d queries", method, len(first.Choices), len(qs))
		}
		second, err := PlanFind(d, runs, known, 1)
		if err != nil {
			t.Fatal(err)
		}
		for _, c := range second.Choices {
			if qs[c.Query] {
				t.Errorf("%s: second wave goes back to query %s before the others had a pair", method, c.Query)
			}
			if _, dup := known[c.Query][c.Doc]; dup {
				t.Errorf("%s: pending pair %s/%s released again", method, c.Query, c.Doc)
			}
		}
		if second.Already != 20 {
			t.Errorf("%s: already %d, want 20", method, second.Already)
		}
	}
}

// TestFindEndsWhenEverythingIsKnown: a wave larger than what is left
// releases the rest and says so.
func TestFindEndsWhenEverythingIsKnown(t *testing.T) {
	runs := []NamedRun{adaptiveOneQuery("r1", "a", "b"), adaptiveOneQuery("r2", "b", "c")}
	for _, method := range []string{FindBandit, FindMoveToFront} {
		plan, err := PlanFind(Design{Method: method}, runs, Labels{"q": {"b": {Grade: 2, Prob: 1}}}, 1)
		if err != nil {
			t.Fatal(err)
		}
		if len(plan.Choices) != 2 || len(plan.Notes) != 1 || plan.Already != 1 {
			t.Errorf("%s: %+v", method, plan)
		}
	}
}

func TestFindRefuses(t *testing.T) {
	runs := []NamedRun{adaptiveOneQuery("r1", "a"), adaptiveOneQuery("r2", "b")}
	for _, c := range []struct {
		d         Design
		runs      []NamedRun
		threshold int
		want      string
	}{
		{Design{Method: "greedy"}, runs, 1, `unknown find method "greedy" ("bandit" or "move-to-front")`},
		{Design{}, runs, 1, `unknown find method ""`},
		{Design{Kind: KindStratified, Method: FindBandit}, runs, 1, `a "stratified" design does not find documents`},
		{Design{Method: FindBandit}, runs, 0, "relevance threshold 0"},
		{Design{Method: FindBandit}, nil, 1, "needs at least one run"},
		{Design{Method: FindBandit}, []NamedRun{runs[0], runs[0]}, 1, `two runs are named "r1"`},
		{Design{Method: FindBandit, Wave: -2}, runs, 1, "wave -2 is negative"},
	} {
		_, err := PlanFind(c.d, c.runs, Labels{}, c.threshold)
		if err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%+v: error %v, want %q", c.d, err, c.want)
		}
	}
}
