package estimate

import (
	"strings"
	"testing"
)

func reportOf(ests []float64, diffs []Difference, sampled, pending int) Report {
	rep := Report{Sampled: sampled, Pending: pending, Differences: diffs}
	for i, e := range ests {
		rep.Runs = append(rep.Runs, RunEstimate{Run: string(rune('a' + i)), NDCG: Interval{Est: e, SE: 0.01, Low: e - 0.0196, High: e + 0.0196}})
	}
	return rep
}

func diff(a, b string, p, half float64) Difference {
	return Difference{A: a, B: b, Metric: "ndcg", ProbBBeatsA: p, Diff: Interval{Low: -half, High: half}}
}

func TestStopSignal(t *testing.T) {
	d := Design{Kind: KindStratified}
	cases := []struct {
		name   string
		rep    Report
		budget int
		state  string
		text   string
		more   int
	}{
		// Order c > b > a: adjacent pairs (c, b) and (b, a).
		{"settled", reportOf([]float64{0.3, 0.4, 0.5}, []Difference{diff("a", "b", 0.99, 0.02), diff("a", "c", 1, 0.02), diff("b", "c", 0.98, 0.02)}, 100, 0),
			10, StateSettled, "The order of these runs is settled (p = 0.98).", 0},
		// A difference stored the other way round (A above B) counts as 1 - p.
		{"settled either way round", reportOf([]float64{0.5, 0.4}, []Difference{diff("a", "b", 0.01, 0.02)}, 100, 0),
			10, StateSettled, "(p = 0.99)", 0},
		{"judging", reportOf([]float64{0.3, 0.4}, []Difference{diff("a", "b", 0.8, 0.05)}, 100, 312),
			10, StateJudging, "312 chosen pairs are still being judged.", 312},
		{"spent", reportOf([]float64{0.3, 0.4}, []Difference{diff("a", "b", 0.8, 0.05)}, 100, 0),
			0, StateSpent, "The budget is spent and the order is not settled (p = 0.80)", 0},
		{"narrow", reportOf([]float64{0.3, 0.4}, []Difference{diff("a", "b", 0.8, 0.024)}, 140, 0),
			1000, StateNarrow, "About 420 more judgments would narrow the interval to ±0.012.", 420},
		{"narrow, no budget limit", reportOf([]float64{0.3, 0.4}, []Difference{diff("a", "b", 0.8, 0.024)}, 140, 0),
			-1, StateNarrow, "About 420 more judgments", 420},
		{"narrow within what is left", reportOf([]float64{0.3, 0.4}, []Difference{diff("a", "b", 0.8, 0.024)}, 140, 0),
			140, StateNarrow, "The 140 judgments left in the budget would narrow the interval to about ±0.017", 140},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			s := StopSignal(d, c.rep, c.budget)
			if s.State != c.state || !strings.Contains(s.Text, c.text) || s.More != c.more {
				t.Fatalf("got %+v, want %s %q more %d", s, c.state, c.text, c.more)
			}
		})
	}
}
