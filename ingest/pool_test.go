package ingest

import (
	"strings"
	"testing"
)

func TestPool(t *testing.T) {
	// Hand-made runs. Run C's rank column disagrees with its scores: pooling
	// follows the scores. Run A's q2 has a full tie, broken by doc id.
	files := map[string]string{
		"A": "q1 Q0 d1 1 3 A\nq1 Q0 d2 2 2 A\nq1 Q0 d3 3 1 A\n" +
			"q2 Q0 d8 1 1 A\nq2 Q0 d7 1 1 A\nq2 Q0 d5 0 0 A\n",
		"B": "q1 Q0 d3 1 0.9 B\nq1 Q0 d4 2 0.9 B\nq1 Q0 d1 3 0.1 B\n",
		"C": "q1 Q0 d2 1 0.5 C\nq1 Q0 d9 2 0.7 C\n",
	}
	runs := map[string][]RunEntry{}
	for name, src := range files {
		err := ReadRun(strings.NewReader(src), Options{File: name}, func(e RunEntry) error {
			runs[name] = append(runs[name], e)
			return nil
		})
		if err != nil {
			t.Fatal(err)
		}
	}
	// Top 2 by score: A/q1 d1,d2; B/q1 d3,d4 (tie on score, rank 1 first);
	// C/q1 d9,d2; A/q2 d7,d8 (full tie, doc id order).
	want := []PoolPair{
		{QueryID: "q1", DocID: "d1", Runs: []RunRank{{"A", 1}}, BestRank: 1, Priority: 2},
		{QueryID: "q1", DocID: "d3", Runs: []RunRank{{"B", 1}}, BestRank: 1, Priority: 2},
		{QueryID: "q1", DocID: "d9", Runs: []RunRank{{"C", 1}}, BestRank: 1, Priority: 2},
		{QueryID: "q1", DocID: "d2", Runs: []RunRank{{"A", 2}, {"C", 2}}, BestRank: 2, Priority: 1},
		{QueryID: "q1", DocID: "d4", Runs: []RunRank{{"B", 2}}, BestRank: 2, Priority: 1},
		{QueryID: "q2", DocID: "d7", Runs: []RunRank{{"A", 1}}, BestRank: 1, Priority: 2},
		{QueryID: "q2", DocID: "d8", Runs: []RunRank{{"A", 2}}, BestRank: 2, Priority: 1},
	}
	mustEqual(t, Pool(2, runs), want)

	// Depth 3 adds A's d3 (rank 3, already B's rank 1), B's d1 and A's d5.
	got := Pool(3, runs)
	mustEqual(t, len(got), 8)
	mustEqual(t, got[0], PoolPair{QueryID: "q1", DocID: "d1", Runs: []RunRank{{"A", 1}, {"B", 3}}, BestRank: 1, Priority: 3})
	mustEqual(t, got[1], PoolPair{QueryID: "q1", DocID: "d3", Runs: []RunRank{{"A", 3}, {"B", 1}}, BestRank: 1, Priority: 3})
	mustEqual(t, got[7], PoolPair{QueryID: "q2", DocID: "d5", Runs: []RunRank{{"A", 3}}, BestRank: 3, Priority: 1})
}

func TestPoolerRepeatedDocument(t *testing.T) {
	p := NewPooler(2)
	p.Add("r", RunEntry{QueryID: "q", DocID: "a", Score: 1})
	p.Add("r", RunEntry{QueryID: "q", DocID: "b", Score: 2})
	p.Add("r", RunEntry{QueryID: "q", DocID: "a", Score: 3}) // better entry for a
	p.Add("r", RunEntry{QueryID: "q", DocID: "c", Score: 0})
	mustEqual(t, p.Pairs(), []PoolPair{
		{QueryID: "q", DocID: "a", Runs: []RunRank{{"r", 1}}, BestRank: 1, Priority: 2},
		{QueryID: "q", DocID: "b", Runs: []RunRank{{"r", 2}}, BestRank: 2, Priority: 1},
	})
}
