package agreement

import (
	"fmt"
	"math"
	"strings"
	"testing"
)

func near(t *testing.T, name string, got Value, want, tol float64) {
	t.Helper()
	if !got.OK {
		t.Errorf("%s: undefined (%s), want %v", name, got.Why, want)
		return
	}
	if math.Abs(got.V-want) > tol {
		t.Errorf("%s = %.6f, want %.6f (tol %g)", name, got.V, want, tol)
	}
}

// Cohen (1960) style 2x2 textbook example: 50 items, yes/yes 20, yes/no 5,
// no/yes 10, no/no 15 gives kappa 0.400; statsmodels cohens_kappa on the
// same table gives std_kappa 0.12700 and 95% CI [0.1511, 0.6489].
func TestCohenWorkedExample(t *testing.T) {
	table := [][]int64{{20, 5}, {10, 15}}
	e := CohenFromTable(table, Unweighted, 0.95)
	near(t, "kappa", e.Kappa, 0.400, 1e-12)
	near(t, "se", e.SE, 0.12700, 5e-6)
	near(t, "ci lo", e.CI.Lo, 0.1511, 5e-5)
	near(t, "ci hi", e.CI.Hi, 0.6489, 5e-5)

	// The same table through Data and CohenPairs.
	d := NewData(2)
	item := 0
	add := func(n, a, b int) {
		for range n {
			item++
			it := fmt.Sprint("i", item)
			mustAdd(t, d, it, "A", a)
			mustAdd(t, d, it, "B", b)
		}
	}
	add(20, 1, 1)
	add(5, 1, 0)
	add(10, 0, 1)
	add(15, 0, 0)
	ps := CohenPairs(d, 0.95)
	if len(ps) != 1 || ps[0].A != "A" || ps[0].B != "B" || ps[0].N != 50 {
		t.Fatalf("pairs = %+v", ps)
	}
	near(t, "pair kappa", ps[0].Kappa, 0.400, 1e-12)
	near(t, "pair se", ps[0].SE, 0.12700, 5e-6)
	if ps[0].Table[1][0] != 5 || ps[0].Table[0][1] != 10 {
		t.Errorf("table orientation: %v", ps[0].Table)
	}
	// With two grades every weighting gives the same kappa.
	near(t, "linear", ps[0].KappaLinear, 0.400, 1e-12)
	near(t, "quadratic", ps[0].KappaQuadratic, 0.400, 1e-12)
}

func mustAdd(t testing.TB, d *Data, item, rater string, g int) {
	t.Helper()
	if err := d.Add(item, rater, g); err != nil {
		t.Fatal(err)
	}
}

// Fleiss (1971) worked example as given on the Wikipedia article "Fleiss'
// kappa": 10 subjects, 14 raters, 5 categories. P-bar 0.378, P-bar_e 0.213,
// kappa 0.2099; statsmodels fleiss_kappa gives 0.209931.
var fleissWiki = [][]int{
	{0, 0, 0, 0, 14}, {0, 2, 6, 4, 2}, {0, 0, 3, 5, 6}, {0, 3, 9, 2, 0}, {2, 2, 8, 1, 1},
	{7, 7, 0, 0, 0}, {3, 2, 6, 3, 0}, {2, 5, 3, 2, 2}, {6, 5, 2, 1, 0}, {0, 2, 2, 3, 7},
}

func TestFleissWorkedExample(t *testing.T) {
	r := FleissFromCounts(fleissWiki, 0.95)
	near(t, "P-bar", r.PBar, 0.378, 5e-4)
	near(t, "P-bar_e", r.PE, 0.213, 5e-4)
	near(t, "kappa", r.Kappa, 0.209931, 5e-7)
	if r.ItemsUsed != 10 || r.RatersPerItem != 14 {
		t.Errorf("used %d items of %d raters", r.ItemsUsed, r.RatersPerItem)
	}

	// Same counts as judgments: subject s gets 14 ratings from raters r0..r13.
	d := NewData(5)
	for s, row := range fleissWiki {
		r := 0
		for g, c := range row {
			for range c {
				mustAdd(t, d, fmt.Sprint("s", s), fmt.Sprint("r", r), g)
				r++
			}
		}
	}
	f := Fleiss(d, 0.95)
	near(t, "kappa via Data", f.Kappa, 0.209931, 5e-7)
	for j := range f.PerGrade {
		if f.PerGrade[j].Kappa.V != r.PerGrade[j].Kappa.V {
			t.Errorf("per grade %d differs: %v vs %v", j, f.PerGrade[j].Kappa, r.PerGrade[j].Kappa)
		}
	}
	raw := Raw(d)
	near(t, "raw agreement = P-bar", raw.Exact, r.PBar.V, 1e-12)
}

// Krippendorff (2011) "Computing Krippendorff's Alpha-Reliability",
// reliability data example: 4 observers x 12 units, values 1..5, '.'
// missing. Alpha nominal 0.743, ordinal 0.815, interval 0.849, ratio 0.797.
func TestKrippendorffWorkedExample(t *testing.T) {
	rows := map[string]string{
		"A": "1 2 3 3 2 1 4 1 2 . . .",
		"B": "1 2 3 3 2 2 4 1 2 5 . 3",
		"C": ". 3 3 3 2 3 4 2 2 5 1 .",
		"D": "1 2 3 3 2 4 4 1 2 5 1 .",
	}
	// Values are used as grades on a 0..5 scale (0 unused) so interval and
	// ratio see the values 1..5 themselves.
	d := NewData(6)
	for _, obs := range []string{"A", "B", "C", "D"} {
		for u, v := range strings.Fields(rows[obs]) {
			if v == "." {
				continue
			}
			mustAdd(t, d, fmt.Sprint("u", u+1), obs, int(v[0]-'0'))
		}
	}
	want := map[Metric]float64{Nominal: 0.743, Ordinal: 0.815, Interval: 0.849, Ratio: 0.797}
	for m, w := range want {
		r := Alpha(d, m)
		near(t, "alpha "+m.String(), r.Alpha, w, 5e-4)
		// Unit 12 has one value, so 11 units and 40 values are pairable.
		if r.PairableUnits != 11 || r.PairableValues != 40 {
			t.Errorf("%v: pairable %d units %d values", m, r.PairableUnits, r.PairableValues)
		}
	}
	s := Alphas(d)
	for m, w := range want {
		near(t, "Alphas "+m.String(), s.Get(m), w, 5e-4)
	}
}
