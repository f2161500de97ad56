package agreement

import (
	"encoding/json"
	"strings"
	"testing"
)

// undefinedWith fails unless v is undefined with a reason containing frag.
func undefinedWith(t *testing.T, name string, v Value, frag string) {
	t.Helper()
	if v.OK {
		t.Errorf("%s = %v, want undefined", name, v.V)
		return
	}
	if v.Why == "" || !strings.Contains(v.Why, frag) {
		t.Errorf("%s: reason %q, want it to mention %q", name, v.Why, frag)
	}
}

func TestOneGradeUsedByEveryone(t *testing.T) {
	d := NewData(5)
	for _, it := range []string{"a", "b", "c"} {
		for _, r := range []string{"x", "y", "z"} {
			mustAdd(t, d, it, r, 2)
		}
	}
	rep := Compute(d, Options{Bootstrap: 20, Seed: 1})
	undefinedWith(t, "fleiss", rep.FleissKappa, "grade 2")
	for _, m := range Metrics {
		undefinedWith(t, "alpha "+m.String(), rep.KrippendorffAlpha.Get(m), "grade 2")
	}
	if len(rep.Cohen) != 3 {
		t.Fatalf("%d pairs", len(rep.Cohen))
	}
	for _, p := range rep.Cohen {
		undefinedWith(t, "cohen", p.Kappa, "only grade 2")
		undefinedWith(t, "cohen quadratic", p.KappaQuadratic, "only grade 2")
		undefinedWith(t, "cohen se", p.SE, "only grade 2")
		if p.Why == "" {
			t.Error("pair without reason")
		}
	}
	undefinedWith(t, "mean kappa", rep.MeanQuadraticKappa, "every rater pair")
	// Raw agreement is still defined: everyone agrees.
	near(t, "percent agreement", rep.PercentAgreement, 1, 0)
	if rep.Undefined["fleiss_kappa"] == "" || rep.Undefined["krippendorff_alpha.ordinal"] == "" {
		t.Errorf("undefined map: %v", rep.Undefined)
	}
	if rep.Bootstrap == nil || rep.Bootstrap.Alpha.Ordinal.Lo.OK || rep.Bootstrap.Alpha.Ordinal.Used != 0 {
		t.Errorf("bootstrap of undefined alpha: %+v", rep.Bootstrap)
	}
	b, err := json.Marshal(rep)
	if err != nil {
		t.Fatal(err)
	}
	if strings.Contains(string(b), "NaN") || !strings.Contains(string(b), `"fleiss_kappa":null`) {
		t.Errorf("JSON: %s", b)
	}
}

func TestFewerThanTwoRaters(t *testing.T) {
	for _, d := range []*Data{NewData(5), func() *Data {
		d := NewData(5)
		mustAdd(t, d, "a", "x", 1)
		mustAdd(t, d, "b", "x", 3)
		mustAdd(t, d, "a", "x", 4) // supersedes, still one rating
		return d
	}()} {
		rep := Compute(d, Options{Bootstrap: 10})
		undefinedWith(t, "fleiss", rep.FleissKappa, "two or more ratings")
		undefinedWith(t, "alpha", rep.KrippendorffAlpha.Nominal, "two or more ratings")
		undefinedWith(t, "mean kappa", rep.MeanQuadraticKappa, "no two raters")
		undefinedWith(t, "percent", rep.PercentAgreement, "two or more ratings")
		if len(rep.Cohen) != 0 || rep.Undefined["raters"] == "" {
			t.Errorf("cohen %v undefined %v", rep.Cohen, rep.Undefined)
		}
		if _, err := json.Marshal(rep); err != nil {
			t.Fatal(err)
		}
		ds := DawidSkene(d, DSOptions{})
		if len(ds.Grade) != d.Items() {
			t.Errorf("DS grades %d for %d items", len(ds.Grade), d.Items())
		}
		_ = Consensus(d)
	}
}

func TestNoSharedItems(t *testing.T) {
	d := NewData(3)
	mustAdd(t, d, "a", "x", 0)
	mustAdd(t, d, "b", "y", 2)
	p := CohenPair(d, "x", "y", 0.95)
	undefinedWith(t, "kappa", p.Kappa, "no shared items")
	undefinedWith(t, "agreement", p.Agreement, "no shared items")
	if p.N != 0 {
		t.Errorf("n = %d", p.N)
	}
	if len(CohenPairs(d, 0.95)) != 0 {
		t.Error("pairs without shared items are listed")
	}
	undefinedWith(t, "unknown rater", CohenPair(d, "x", "nobody", 0.95).Kappa, "no shared items")
	e := CohenFromTable([][]int64{{0, 0}, {0, 0}}, Quadratic, 0.95)
	undefinedWith(t, "empty table", e.Kappa, "no shared items")
	e = CohenFromTable([][]int64{{1, 2}}, Linear, 0.95)
	undefinedWith(t, "ragged table", e.Kappa, "not square")
}

// One rater constant and the other not: chance agreement is below 1, so
// kappa is defined and 0 (Cohen 1960: agreement no better than chance).
func TestOneConstantRater(t *testing.T) {
	e := CohenFromTable([][]int64{{3, 0, 0}, {4, 0, 0}, {2, 0, 0}}, Unweighted, 0.95)
	near(t, "kappa", e.Kappa, 0, 1e-15)
	near(t, "se", e.SE, 0, 1e-7) // 0 up to the square root of rounding
}

func TestFleissUsesModalRaterCount(t *testing.T) {
	d := NewData(3)
	// Two items with 2 ratings, two with 3 ratings (tie -> 3), one with 4.
	rows := map[string][]int{"a": {0, 0}, "b": {1, 2}, "c": {0, 1, 1}, "d": {2, 2, 2}, "e": {0, 1, 2, 2}}
	for it, gs := range rows {
		for r, g := range gs {
			mustAdd(t, d, it, string(rune('p'+r)), g)
		}
	}
	f := Fleiss(d, 0.95)
	if f.RatersPerItem != 3 || f.ItemsUsed != 2 || f.ItemsSkipped != 3 {
		t.Errorf("m %d used %d skipped %d", f.RatersPerItem, f.ItemsUsed, f.ItemsSkipped)
	}
	want := FleissFromCounts([][]int{{1, 2, 0}, {0, 0, 3}}, 0.95)
	near(t, "kappa", f.Kappa, want.Kappa.V, 1e-15)
}

func TestValueJSON(t *testing.T) {
	b, _ := json.Marshal(struct {
		A, B Value
	}{defined(0.25), undefined("x")})
	if string(b) != `{"A":0.25,"B":null}` {
		t.Errorf("got %s", b)
	}
	var v struct{ A, B Value }
	if err := json.Unmarshal(b, &v); err != nil || !v.A.OK || v.A.V != 0.25 || v.B.OK {
		t.Errorf("round trip: %+v %v", v, err)
	}
	if defined(nanValue()).OK {
		t.Error("NaN accepted as defined")
	}
}

func nanValue() float64 {
	z := 0.0
	return z / z
}
