package store

import (
	"context"
	"fmt"
	"math"
	"slices"
	"strings"
	"testing"
)

// The report over two queries of two documents, two assessors each: on query A both prefer
// Aa; on query B one prefers Ba and the other calls them about the same.
func TestPreferenceFigures(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, users := prefFixture(t, s, 2, 3, 2, func(q, d int) int { return []int{4, 3, 1}[d] }) // Ac, Bc below 3
	answers := map[string][]string{"A": {"a", "a"}, "B": {"a", "same"}}
	for i, u := range users {
		for range 2 {
			v, err := s.NextComparison(ctx, p.ID, u)
			if err != nil {
				t.Fatal(err)
			}
			want := answers[v.Query.ExternalID][i]
			outcome := want
			if want == "a" { // the document ending in a is the better one, wherever it is shown
				outcome = "right"
				if v.Left.ExternalID[1] == 'a' {
					outcome = "left"
				}
			}
			answer(t, s, v, u, outcome)
		}
	}
	// Two kept runs: one ranks the preferred documents first, the other last.
	lead, err := s.UserByUsername(ctx, "lead")
	if err != nil {
		t.Fatal(err)
	}
	for name, body := range map[string]string{
		"good": "A Q0 Aa 1 2.0 good\nA Q0 Ab 2 1.0 good\nB Q0 Ba 1 2.0 good\nB Q0 Bb 2 1.0 good\n",
		"bad":  "A Q0 Ab 1 2.0 bad\nA Q0 Aa 2 1.0 bad\nB Q0 Bb 1 2.0 bad\nB Q0 Ba 2 1.0 bad\n",
	} {
		if _, err := s.KeepRun(ctx, p.ID, lead.ID, name, strings.NewReader(body)); err != nil {
			t.Fatal(err)
		}
	}
	r, err := s.PreferenceFigures(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if r.Threshold != 3 || r.JudgmentsPerComparison != 2 || r.Answers != 4 || len(r.Queries) != 2 {
		t.Fatalf("report %+v", r)
	}
	a := r.Queries[0]
	if a.Query != "A" || !slices.Equal(a.Documents, []string{"Aa", "Ab"}) || !a.Done || !slices.Equal(a.Order, []string{"Aa", "Ab"}) ||
		a.Fit.Scores[0].Document != "Aa" || a.Fit.Scores[0].Wins != 2 || a.Fit.Scores[0].Low >= a.Fit.Scores[0].Score {
		t.Errorf("query A: %+v", a)
	}
	// Worked by hand. Unanimous: A only, so 1 of 2; pairwise agreement (1 + 0) / 2. Nominal
	// alpha over the units A {first, first} and B {first, same}: the coincidences are
	// o(first, first) = 2, o(first, same) = o(same, first) = 1, so n = 4, D_o = 2/4 and
	// D_e = 2·3·1 / (4·3) = 1/2, and alpha = 1 − D_o/D_e = 0 (Krippendorff, "Computing
	// Krippendorff's alpha-reliability", 2011, from memory).
	g := r.Agreement
	if g.Comparisons != 2 || g.Unanimous != 1 || math.Abs(g.UnanimousShare.V-0.5) > 1e-12 || math.Abs(g.Pairwise.V-0.5) > 1e-12 ||
		!g.Alpha.Alpha.OK || math.Abs(g.Alpha.Alpha.V) > 1e-12 {
		t.Errorf("agreement %+v", g)
	}
	// As training pairs: Aa over Ab twice; Ba over Bb once (the "about the same" gives none).
	pairs, err := s.PreferencePairs(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if got := fmt.Sprint(pairs); got != "[{A Aa Ab 2} {B Ba Bb 1}]" {
		t.Errorf("training pairs %s", got)
	}
	// The runs, counted by hand: three answers with a preference (two on A, one on B), one
	// "about the same" on B.
	runs := map[string]RunPreference{}
	for _, x := range r.Runs {
		runs[x.Run] = x
	}
	if good := runs["good"]; good.Agree != 3 || good.Disagree != 0 || good.NoPreference != 1 || good.Share.V != 1 {
		t.Errorf("run good: %+v", good)
	}
	if bad := runs["bad"]; bad.Agree != 0 || bad.Disagree != 3 || !bad.Share.OK || bad.Share.V != 0 {
		t.Errorf("run bad: %+v", bad)
	}
}
