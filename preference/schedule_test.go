package preference

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// mergeWorst is top-down merge sort's worst case, W(n) = W(⌊n/2⌋) + W(⌈n/2⌉) + n − 1.
func mergeWorst(n int) int {
	if n <= 1 {
		return 0
	}
	return mergeWorst(n/2) + mergeWorst(n-n/2) + n - 1
}

// The schedule's comparisons grow as n log2 n. The bound asserted is merge sort's worst case
// n⌈log2 n⌉ − 2^⌈log2 n⌉ + 1 (Knuth, TAOCP vol. 3, §5.2.4, from memory; checked here
// against the recurrence), itself below n⌈log2 n⌉: a merge of runs of length a and b takes at
// most a + b − 1 comparisons, whatever the assessors answer.
func TestScheduleComparisonCount(t *testing.T) {
	const k = 3
	for _, n := range []int{10, 50, 200} {
		docs := docNames(n)
		o := newOracle(shuffled(docs, uint64(n)), spread(n, 3), uint64(n))
		js, p := runSchedule(t, "q", docs, o, k)
		lg := math.Ceil(math.Log2(float64(n)))
		worst := n*int(lg) - int(math.Pow(2, lg)) + 1
		if worst != mergeWorst(n) {
			t.Fatalf("n=%d: closed form %d, recurrence %d", n, worst, mergeWorst(n))
		}
		ratio := float64(p.Comparisons) / (float64(n) * math.Log2(float64(n)))
		t.Logf("n=%d: %d comparisons (%d judgments); n·log2 n = %.1f, ratio %.3f; worst case %d; all pairs %d",
			n, p.Comparisons, len(js), float64(n)*math.Log2(float64(n)), ratio, worst, n*(n-1)/2)
		if p.Comparisons > worst || p.Comparisons > n*int(lg) {
			t.Errorf("n=%d: %d comparisons, above the worst case %d", n, p.Comparisons, worst)
		}
		if len(js) != k*p.Comparisons {
			t.Errorf("n=%d: %d judgments for %d comparisons of %d assessors", n, len(js), p.Comparisons, k)
		}
		// No pair is asked twice.
		seen := map[pair]int{}
		for _, j := range js {
			p, _ := orient(j)
			seen[p]++
		}
		for pr, c := range seen {
			if c != k {
				t.Errorf("n=%d: pair %v judged %d times", n, pr, c)
			}
		}
		if len(p.Order) != n {
			t.Errorf("n=%d: order has %d documents", n, len(p.Order))
		}
	}
}

// With assessors who never err, the schedule's order is the true order.
func TestScheduleSortsAPerfectOracle(t *testing.T) {
	docs := docNames(37)
	truth := shuffled(docs, 3) // truth[0] is the best
	theta := make([]float64, len(truth))
	for i := range theta {
		theta[i] = 1000 * float64(len(truth)-i) // σ of the gaps is 1 to machine precision
	}
	o := newOracle(truth, theta, 1)
	_, p := runSchedule(t, "q", shuffled(docs, 9), o, 1)
	if !slices.Equal(p.Order, truth) {
		t.Errorf("order %v, want %v", p.Order, truth)
	}
}

// The plan depends on the judgments alone: not on their order, the documents' order, or the
// orientation a pair was shown in; and a comparison with fewer than k answers asks for the rest.
func TestScheduleResumes(t *testing.T) {
	docs := docNames(12)
	o := newOracle(docs, spread(12, 2), 5)
	js, final := runSchedule(t, "q", docs, o, 3)
	r := rand.New(rand.NewPCG(1, 2))
	mixed := slices.Clone(js)
	r.Shuffle(len(mixed), func(i, j int) { mixed[i], mixed[j] = mixed[j], mixed[i] })
	for i := range mixed {
		if i%2 == 0 {
			mixed[i].Left, mixed[i].Right, mixed[i].Outcome = mixed[i].Right, mixed[i].Left, mixed[i].Outcome.flip()
		}
	}
	again, err := Schedule("q", shuffled(docs, 4), mixed, 3)
	if err != nil {
		t.Fatal(err)
	}
	if !again.Done || !slices.Equal(again.Order, final.Order) || again.Comparisons != final.Comparisons {
		t.Errorf("replayed plan %+v, want %+v", again, final)
	}

	// Drop the last judgment: exactly its comparison comes back, needing one assessor.
	last := js[len(js)-1]
	p, err := Schedule("q", docs, js[:len(js)-1], 3)
	if err != nil {
		t.Fatal(err)
	}
	if p.Done || len(p.Next) != 1 || p.Next[0].Need != 1 ||
		p.Next[0].Left != last.Left || p.Next[0].Right != last.Right {
		t.Errorf("plan %+v, want %s vs %s needing 1", p, last.Left, last.Right)
	}

	// At the start, every merge of two single documents is open at once: n/2 of them for 16.
	p, _ = Schedule("q", docNames(16), nil, 3)
	if len(p.Next) != 8 {
		t.Errorf("%d comparisons open at the start, want 8", len(p.Next))
	}
	for _, c := range p.Next {
		if c.Need != 3 || c.Query != "q" {
			t.Errorf("comparison %+v", c)
		}
	}
}

func TestScheduleRefuses(t *testing.T) {
	if _, err := Schedule("q", docNames(3), nil, 0); err == nil {
		t.Error("k = 0 accepted")
	}
	other := []Judgment{{Query: "r", Left: "a", Right: "b", Outcome: LeftBetter, Assessor: "x"}}
	if _, err := Schedule("q", docNames(3), other, 1); err == nil {
		t.Error("a judgment of another query accepted")
	}
	self := []Judgment{{Query: "q", Left: "a", Right: "a", Outcome: LeftBetter, Assessor: "x"}}
	if _, err := Schedule("q", docNames(3), self, 1); err == nil {
		t.Error("a document compared with itself accepted")
	}
	p, err := Schedule("q", []string{"a"}, nil, 2)
	if err != nil || !p.Done || !slices.Equal(p.Order, []string{"a"}) {
		t.Errorf("one document: %+v, %v", p, err)
	}
}

// Majority ties read as about the same, so the earlier document stays first.
func TestMajority(t *testing.T) {
	j := func(l, r string, o Outcome, a string) Judgment {
		return Judgment{Query: "q", Left: l, Right: r, Outcome: o, Assessor: a}
	}
	cases := []struct {
		js   []Judgment
		want Outcome
	}{
		{[]Judgment{j("a", "b", LeftBetter, "x"), j("a", "b", LeftBetter, "y"), j("a", "b", RightBetter, "z")}, LeftBetter},
		{[]Judgment{j("a", "b", LeftBetter, "x"), j("b", "a", LeftBetter, "y")}, Same},
		{[]Judgment{j("b", "a", LeftBetter, "x"), j("b", "a", LeftBetter, "y"), j("a", "b", Same, "z")}, RightBetter},
		{[]Judgment{j("a", "b", LeftBetter, "x"), j("a", "b", RightBetter, "x")}, RightBetter}, // the later answer of x replaces the earlier
		{[]Judgment{j("a", "b", NeitherRelevant, "x"), j("a", "b", NeitherRelevant, "y"), j("a", "b", LeftBetter, "z")}, NeitherRelevant},
	}
	for i, c := range cases {
		if got := Majority("a", "b", c.js); got != c.want {
			t.Errorf("case %d: %v, want %v", i, got, c.want)
		}
		if got := Majority("b", "a", c.js); got != c.want.flip() {
			t.Errorf("case %d reversed: %v, want %v", i, got, c.want.flip())
		}
	}
}

// sameBest is the count when every answer is "about the same": the earlier run always stays
// first, so a merge takes one comparison per document of its left half, B(n) = B(⌊n/2⌋) +
// B(⌈n/2⌉) + ⌊n/2⌋, the fewest any merge of these halves can take.
func sameBest(n int) int {
	if n <= 1 {
		return 0
	}
	return sameBest(n/2) + sameBest(n-n/2) + n/2
}

// The counts DEVELOPERS.md quotes, over five shuffles each: noisy assessors (strengths spread
// over ±3, three per comparison, majority), assessors who never err, and assessors who always
// answer "about the same". Every count stays at or below merge sort's worst case, which is
// below n·log2 n; the "about the same" count is exactly sameBest.
func TestScheduleComparisonCountMeasured(t *testing.T) {
	const shuffles = 5
	for _, n := range []int{10, 50, 200} {
		docs := docNames(n)
		lg := math.Ceil(math.Log2(float64(n)))
		worst := n*int(lg) - int(math.Pow(2, lg)) + 1
		nlog := float64(n) * math.Log2(float64(n))
		for _, kind := range []string{"noisy", "perfect"} {
			lo, hi, sum := math.MaxInt, 0, 0
			for seed := uint64(1); seed <= shuffles; seed++ {
				truth := shuffled(docs, seed)
				theta := spread(n, 3)
				k := 3
				if kind == "perfect" {
					for i := range theta {
						theta[i] = 1000 * float64(i) // σ of the gaps is 1 to machine precision
					}
					k = 1
				}
				_, p := runSchedule(t, "q", docs, newOracle(truth, theta, seed), k)
				if p.Comparisons > worst {
					t.Errorf("n=%d %s seed %d: %d comparisons, above the worst case %d", n, kind, seed, p.Comparisons, worst)
				}
				lo, hi, sum = min(lo, p.Comparisons), max(hi, p.Comparisons), sum+p.Comparisons
			}
			mean := float64(sum) / shuffles
			t.Logf("n=%d %s: comparisons min %d mean %.1f max %d; n·log2 n %.1f (mean/n·log2 n %.3f); worst case %d; all pairs %d",
				n, kind, lo, mean, hi, nlog, mean/nlog, worst, n*(n-1)/2)
		}
		var js []Judgment
		for {
			p, err := Schedule("q", docs, js, 1)
			if err != nil {
				t.Fatal(err)
			}
			if p.Done {
				t.Logf("n=%d about the same: %d comparisons (%.3f of n·log2 n)", n, p.Comparisons, float64(p.Comparisons)/nlog)
				if p.Comparisons != sameBest(n) {
					t.Errorf("n=%d: %d comparisons when all are about the same, want %d", n, p.Comparisons, sameBest(n))
				}
				break
			}
			for _, c := range p.Next {
				js = append(js, Judgment{Query: "q", Left: c.Left, Right: c.Right, Outcome: Same, Assessor: "x"})
			}
		}
	}
}
