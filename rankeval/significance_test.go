package rankeval

import (
	"fmt"
	"math"
	"testing"
)

// Two runs over twelve queries of two documents: A puts d1 first, B d2. Under the actual
// grades d1 is better on every query (grade 2 or 3 against 0): A wins, significantly. Under
// the variant both documents get the same grade: no difference, so the verdict changes.
func TestSignificanceChangesWithTheGrades(t *testing.T) {
	runs := map[string]Run{"A": {}, "B": {}}
	actual, variant := Qrels{}, Qrels{}
	for i := range 12 {
		q := fmt.Sprintf("q%02d", i)
		runs["A"][q] = []ScoredDoc{{DocID: "d1", Score: 2}, {DocID: "d2", Score: 1}}
		runs["B"][q] = []ScoredDoc{{DocID: "d2", Score: 2}, {DocID: "d1", Score: 1}}
		actual[q] = map[string]int{"d1": 2 + i%2, "d2": 0}
		variant[q] = map[string]int{"d1": 2, "d2": 2}
	}
	o := Options{K: 10, Gain: GainExponential, Threshold: 1, MaxGrade: 4}
	v := PairedTTests(runs, o, MetricNDCG)
	base, err := v(actual)
	if err != nil {
		t.Fatal(err)
	}
	// The p-value is the paired t-test of the per-query differences, paired by query.
	var d []float64
	for i := range 12 {
		q := fmt.Sprintf("q%02d", i)
		a, _ := Evaluate(Qrels{q: actual[q]}, Run{q: runs["A"][q]}, o)
		b, _ := Evaluate(Qrels{q: actual[q]}, Run{q: runs["B"][q]}, o)
		_, va, _ := a.Values(MetricNDCG)
		_, vb, _ := b.Values(MetricNDCG)
		d = append(d, va[0]-vb[0])
	}
	_, _, want := PairedTTest(d)
	if got := base[[2]string{"A", "B"}]; math.Abs(got-want) > 1e-12 || got >= 0.05 {
		t.Fatalf("p = %v, want %v (< 0.05)", got, want)
	}
	effects := []AssessorEffect{{Assessor: "x"}, {Assessor: "same"}}
	if err := AddSignificance(effects, actual, map[string]Qrels{"x": variant, "same": actual}, v, 0.05); err != nil {
		t.Fatal(err)
	}
	ch := effects[0].SignificanceChanged
	if len(ch) != 1 || ch[0].A != "A" || ch[0].B != "B" || !ch[0].Before || ch[0].After || ch[0].PAfter != 1 {
		t.Fatalf("changes %+v", ch)
	}
	if len(effects[1].SignificanceChanged) != 0 {
		t.Fatalf("the same grades change a verdict: %+v", effects[1].SignificanceChanged)
	}
}
