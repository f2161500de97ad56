package estimate

import (
	"cmp"
	"fmt"
	"math"
	"slices"
)

// Signal is the plain-language "when to stop" for a design.
type Signal struct {
	// State is "settled" (the order of the runs will not change with more
	// judgments at the design's confidence), "judging" (chosen pairs are
	// still being graded), "spent" (no budget left, order not settled) or
	// "narrow" (more judgments would narrow the intervals).
	State string `json:"state"`
	Text  string `json:"text"`
	// P is the smallest probability, over runs next to each other in the
	// order by NDCG, that the better-placed run is truly better.
	P float64 `json:"p"`
	// More: judgments suggested next (narrow), or pairs awaiting a grade
	// (judging).
	More int `json:"more"`
	// HalfWidth the widest interval would have after More judgments.
	HalfWidth float64 `json:"half_width"`
}

// The States of a Signal.
const (
	StateSettled = "settled"
	StateNarrow  = "narrow"
	StateSpent   = "spent"
	StateJudging = "judging"
)

// StopSignal says whether to judge on. The order of the runs by estimated
// NDCG is settled when, for each two runs next to each other in it, the
// probability that the upper one is better is at least the design's
// Confidence (0.95), i.e. each adjacent ProbBBeatsA is >= 0.95 or <= 0.05.
// Otherwise: "judging" while chosen pairs await grades, "spent" when
// budgetLeft is 0 (negative means no limit), else "narrow" with the
// judgments that would halve the widest interval (of the adjacent NDCG
// differences; of the runs' NDCG with a single run). That figure assumes the
// variance falls as 1/n in the number n of sampled judgments, an
// approximation that holds while new judgments are drawn like the earlier
// ones: halving needs 4n, so 3n more.
func StopSignal(d Design, rep Report, budgetLeft int) Signal {
	conf := d.Confidence
	if conf == 0 {
		conf = 0.95
	}
	p, half := orderConfidence(rep)
	sig := Signal{P: p, HalfWidth: half}
	switch {
	case len(rep.Runs) >= 2 && p >= conf, len(rep.Runs) < 2 && half == 0 && rep.Pending == 0:
		sig.State = StateSettled
		if len(rep.Runs) >= 2 {
			sig.Text = fmt.Sprintf("The order of these runs is settled (%s).", prob(p))
		} else {
			sig.Text = "Every chosen pair is judged and the estimate has no sampling error left."
		}
		if rep.Pending > 0 {
			sig.Text += fmt.Sprintf(" %d chosen pairs are still being judged.", rep.Pending)
		}
	case rep.Pending > 0:
		sig.State, sig.More = StateJudging, rep.Pending
		sig.Text = fmt.Sprintf("%d chosen pairs are still being judged.", rep.Pending)
		if rep.Pending == 1 {
			sig.Text = "1 chosen pair is still being judged."
		}
	case budgetLeft == 0:
		sig.State = StateSpent
		sig.Text = fmt.Sprintf("The budget is spent and the order is not settled (%s); raise the budget to judge on.", prob(p))
	default:
		sig.State = StateNarrow
		n := rep.Sampled
		more := 3 * n
		if n == 0 {
			// Nothing sampled: the width comes from no 1/n law; suggest the budget.
			more = max(budgetLeft, 0)
		}
		if budgetLeft > 0 && more > budgetLeft {
			sig.More = budgetLeft
			sig.HalfWidth = half * math.Sqrt(float64(n)/float64(n+budgetLeft))
			sig.Text = fmt.Sprintf("The %d judgments left in the budget would narrow the interval to about ±%.3f; halving it (±%.3f) would take about %d.",
				budgetLeft, sig.HalfWidth, half/2, more)
			return sig
		}
		sig.More, sig.HalfWidth = more, half/2
		sig.Text = fmt.Sprintf("About %d more judgments would narrow the interval to ±%.3f.", more, half/2)
	}
	return sig
}

// orderConfidence returns the smallest probability that the upper of two
// adjacent runs (by estimated NDCG) is better, and the widest half-width.
func orderConfidence(rep Report) (float64, float64) {
	if len(rep.Runs) < 2 {
		half := 0.0
		for _, r := range rep.Runs {
			half = max(half, (r.NDCG.High-r.NDCG.Low)/2)
		}
		return 0, half
	}
	order := make([]int, len(rep.Runs))
	for i := range order {
		order[i] = i
	}
	slices.SortStableFunc(order, func(a, b int) int { return cmp.Compare(rep.Runs[b].NDCG.Est, rep.Runs[a].NDCG.Est) })
	diffs := map[[2]string]Difference{}
	for _, d := range rep.Differences {
		if d.Metric == "ndcg" {
			diffs[[2]string{d.A, d.B}] = d
		}
	}
	p, half := 1.0, 0.0
	for i := 0; i+1 < len(order); i++ {
		up, down := rep.Runs[order[i]].Run, rep.Runs[order[i+1]].Run
		var pu float64
		var d Difference
		if x, ok := diffs[[2]string{down, up}]; ok {
			d, pu = x, x.ProbBBeatsA
		} else if x, ok := diffs[[2]string{up, down}]; ok {
			d, pu = x, 1-x.ProbBBeatsA
		} else {
			continue
		}
		p = min(p, pu)
		half = max(half, (d.Diff.High-d.Diff.Low)/2)
	}
	return p, half
}

// prob writes a probability with two decimals, never rounding to a
// certainty that is not there.
func prob(p float64) string {
	s := fmt.Sprintf("%.2f", p)
	if s == "1.00" && p < 1 {
		return "p > 0.99"
	}
	return "p = " + s
}
