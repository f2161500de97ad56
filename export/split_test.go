package export

import (
	"fmt"
	"math"
	"math/rand/v2"
	"reflect"
	"testing"

	"github.com/pertinent/pertinent"
)

func queryIDs(n int) []string {
	qs := make([]string, n)
	for i := range qs {
		qs[i] = fmt.Sprintf("q%04d", i)
	}
	return qs
}

func TestSplitByRatioCountsAndDeterminism(t *testing.T) {
	r := Ratios{Train: 0.7, Validation: 0.15, Test: 0.15}
	for _, n := range []int{1, 2, 3, 7, 10, 101, 1000} {
		qs := queryIDs(n)
		a, err := SplitByRatio(qs, r, 42)
		if err != nil {
			t.Fatal(err)
		}
		if len(a) != n {
			t.Fatalf("n=%d: %d queries assigned", n, len(a))
		}
		count := map[string]int{}
		for _, s := range a {
			count[s]++
		}
		for name, target := range map[string]float64{SplitTrain: r.Train, SplitValidation: r.Validation, SplitTest: r.Test} {
			if d := math.Abs(float64(count[name]) - target*float64(n)); d > 1 {
				t.Errorf("n=%d: %s has %d queries, target %.2f", n, name, count[name], target*float64(n))
			}
		}
		// input order and duplicates (one query, many rows) change nothing
		shuffledIn := append(append([]string{}, qs...), qs...)
		rand.New(rand.NewPCG(9, 9)).Shuffle(len(shuffledIn), func(i, j int) { shuffledIn[i], shuffledIn[j] = shuffledIn[j], shuffledIn[i] })
		b, _ := SplitByRatio(shuffledIn, r, 42)
		if !reflect.DeepEqual(a, b) {
			t.Errorf("n=%d: split depends on input order", n)
		}
	}
	a, _ := SplitByRatio(queryIDs(200), r, 1)
	b, _ := SplitByRatio(queryIDs(200), r, 2)
	if reflect.DeepEqual(a, b) {
		t.Error("seeds 1 and 2 gave the same split of 200 queries")
	}
}

// A fixed split for a fixed seed keeps exports reproducible across
// versions; this pins the assignment of a small example (recorded from
// this implementation: a change here means old seeds now split differently).
func TestSplitByRatioStableForSeed(t *testing.T) {
	a, _ := SplitByRatio(queryIDs(5), Ratios{Train: 0.6, Validation: 0.2, Test: 0.2}, 7)
	b, _ := SplitByRatio([]string{"q0004", "q0002", "q0000", "q0003", "q0001"}, Ratios{Train: 0.6, Validation: 0.2, Test: 0.2}, 7)
	if !reflect.DeepEqual(a, b) {
		t.Fatal("same seed and queries gave different splits")
	}
	want := map[string]string{"q0000": "train", "q0001": "validation", "q0002": "train", "q0003": "test", "q0004": "train"}
	if !reflect.DeepEqual(a, want) {
		t.Errorf("seed 7 split %v, was %v", a, want)
	}
}

func TestSplitRowsNeverCrossParts(t *testing.T) {
	rows := randomRows(rand.New(rand.NewPCG(1, 1)), 30, 5, 2)
	var ids []string
	for _, r := range rows {
		ids = append(ids, r.QueryID)
	}
	split, err := SplitByRatio(ids, Ratios{Train: 0.5, Validation: 0.25, Test: 0.25}, 3)
	if err != nil {
		t.Fatal(err)
	}
	part := map[string]string{}
	for _, r := range rows {
		s := split[r.QueryID]
		if s == "" {
			t.Fatalf("query %s unassigned", r.QueryID)
		}
		if p, ok := part[r.QueryID]; ok && p != s {
			t.Fatalf("query %s in %s and %s", r.QueryID, p, s)
		}
		part[r.QueryID] = s
	}
}

func TestSplitByRatioRejects(t *testing.T) {
	for _, r := range []Ratios{{0.5, 0.5, 0.5}, {-0.1, 0.6, 0.5}, {math.NaN(), 0, 1}, {}} {
		if _, err := SplitByRatio(queryIDs(10), r, 1); err == nil {
			t.Errorf("%+v accepted", r)
		}
	}
	a, err := SplitByRatio(queryIDs(10), Ratios{Train: 1}, 1)
	if err != nil || len(a) != 10 {
		t.Fatal(err)
	}
	for _, s := range a {
		if s != SplitTrain {
			t.Fatalf("ratio 0 part got a query: %s", s)
		}
	}
}

func TestSplitKFold(t *testing.T) {
	qs := queryIDs(23)
	a, err := SplitKFold(qs, 5, 11)
	if err != nil {
		t.Fatal(err)
	}
	count := map[string]int{}
	for _, s := range a {
		count[s]++
	}
	if len(count) != 5 {
		t.Fatalf("folds %v", count)
	}
	for name, c := range count {
		if c != 4 && c != 5 {
			t.Errorf("%s has %d queries; 23 over 5 folds gives 4 or 5", name, c)
		}
	}
	rev := make([]string, len(qs))
	for i, q := range qs {
		rev[len(qs)-1-i] = q
	}
	b, _ := SplitKFold(rev, 5, 11)
	if !reflect.DeepEqual(a, b) {
		t.Error("folds depend on input order")
	}
	if _, err := SplitKFold(qs, 1, 1); err == nil {
		t.Error("1 fold accepted")
	}
	if _, err := SplitKFold(queryIDs(3), 4, 1); err == nil {
		t.Error("more folds than queries accepted")
	}
	if FoldName(0) != "fold-1" {
		t.Error(FoldName(0))
	}
}

// ParseRatios reads the three shares as written and refuses other shapes as invalid input.
func TestParseRatios(t *testing.T) {
	r, err := ParseRatios("0.8, 0.1,0.1")
	if err != nil || *r != (Ratios{Train: 0.8, Validation: 0.1, Test: 0.1}) {
		t.Fatalf("ParseRatios = %+v, %v", r, err)
	}
	for _, s := range []string{"0.8,0.2", "0.8,x,0.1", ""} {
		if _, err := ParseRatios(s); pertinent.CodeOf(err) != pertinent.Invalid {
			t.Errorf("ParseRatios(%q): %v, want an Invalid error", s, err)
		}
	}
}
