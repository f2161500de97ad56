package agreement

import (
	"fmt"
	"math"
	"math/rand/v2"
	"reflect"
	"testing"
)

func TestConsensusRules(t *testing.T) {
	d := NewData(5)
	items := []struct {
		name             string
		grades           []int
		median, majority int
		mean             float64
	}{
		{"odd", []int{4, 0, 3}, 3, 3, 7.0 / 3},    // all tied: closest to median 3
		{"even", []int{1, 3, 3, 1}, 1, 1, 2},      // tie 1/3, median midpoint 2: equal distance -> lower
		{"plain", []int{2, 2, 4}, 2, 2, 8.0 / 3},  // clear majority
		{"skew", []int{0, 4, 4, 3, 0}, 3, 4, 2.2}, // tie 0/4, median 3 -> 4
		{"single", []int{1}, 1, 1, 1},
	}
	for _, it := range items {
		for r, g := range it.grades {
			mustAdd(t, d, it.name, fmt.Sprint("r", r), g)
		}
	}
	got := Consensus(d)
	for i, it := range items {
		c := got[i]
		if c.Item != it.name || c.N != len(it.grades) || c.Median != it.median || c.Majority != it.majority || math.Abs(c.Mean-it.mean) > 1e-12 {
			t.Errorf("%s: %+v, want median %d majority %d mean %v", it.name, c, it.median, it.majority, it.mean)
		}
	}
}

func TestSupersedeAndKeys(t *testing.T) {
	d := NewData(3)
	mustAdd(t, d, "a", "x", 0)
	mustAdd(t, d, "a", "y", 1)
	mustAdd(t, d, "a", "x", 2) // replaces the first
	if d.Judgments() != 2 || d.Items() != 1 || d.Raters() != 2 {
		t.Fatalf("judgments %d items %d raters %d", d.Judgments(), d.Items(), d.Raters())
	}
	c := Consensus(d)[0]
	if c.Mean != 1.5 {
		t.Errorf("mean %v, want 1.5 (later grade 2 for x)", c.Mean)
	}
	if err := d.AddID(1, 2, 0); err == nil {
		t.Error("mixed keys accepted")
	}
	if err := d.Add("b", "x", 3); err == nil {
		t.Error("grade 3 accepted on a 3-grade scale")
	}
	if err := d.Add("", "x", 1); err == nil {
		t.Error("empty item accepted")
	}

	// Integer ids: raters ordered numerically, named in decimal.
	di := NewData(2)
	for _, r := range []int64{10, 9, 100} {
		for it := int64(0); it < 4; it++ {
			if err := di.AddID(it, r, int((it+r)%2)); err != nil {
				t.Fatal(err)
			}
		}
	}
	if got := di.RaterNames(); !reflect.DeepEqual(got, []string{"9", "10", "100"}) {
		t.Errorf("rater order %v", got)
	}
	ps := CohenPairs(di, 0.95)
	if len(ps) != 3 || ps[0].A != "9" || ps[0].B != "10" {
		t.Errorf("pairs %+v", ps)
	}
	// 9 and 10 always disagree on two grades used equally: kappa -1.
	near(t, "kappa 9-10", ps[0].Kappa, -1, 1e-12)
	st, _ := RaterFigures(di, map[string]int{"0": 1, "1": 0, "7": 1, "2": 9})
	// Rater 10 grades (it+10)%2: item 0 -> 0 (gold 1), item 1 -> 1 (gold 0).
	if st[1].GoldItems != 2 || st[1].GoldAccuracy.V != 0 || st[1].GoldMAE.V != 1 {
		t.Errorf("gold for 10: %+v", st[1])
	}
}

func TestRaterFigures(t *testing.T) {
	d := NewData(5)
	// Rater c is always one grade above the others.
	for i := range 6 {
		g := i % 4
		it := fmt.Sprint("i", i)
		mustAdd(t, d, it, "a", g)
		mustAdd(t, d, it, "b", g)
		mustAdd(t, d, it, "c", g+1)
	}
	mustAdd(t, d, "solo", "a", 0)
	st, skipped := RaterFigures(d, map[string]int{"i0": 0, "i1": 1, "i2": 7})
	if skipped != 1 {
		t.Errorf("skipped %d", skipped)
	}
	a, c := st[0], st[2]
	if a.Judgments != 7 || a.Grades[0] != 3 || a.ConsensusItems != 6 {
		t.Errorf("a: %+v", a)
	}
	// Others of a are {b, c} = {g, g+1}: lower median g, so a always agrees.
	near(t, "a consensus", a.ConsensusAgreement, 1, 0)
	// Others of c are {g, g}: c is always one step off.
	near(t, "c consensus", c.ConsensusAgreement, 0, 0)
	near(t, "c consensus mae", c.ConsensusMAE, 1, 0)
	near(t, "c gold accuracy", c.GoldAccuracy, 0, 0)
	near(t, "a gold accuracy", a.GoldAccuracy, 1, 0)
	if a.KappaPairs != 2 || !a.MeanKappaQuadratic.OK || a.MeanKappaQuadratic.V <= c.MeanKappaQuadratic.V {
		t.Errorf("mean kappa a %v c %v", a.MeanKappaQuadratic, c.MeanKappaQuadratic)
	}
}

func TestBands(t *testing.T) {
	cases := []struct {
		v    float64
		want string
	}{{-0.3, "poor"}, {0, "slight"}, {0.2, "slight"}, {0.205, "fair"}, {0.6, "moderate"}, {0.61, "substantial"}, {0.81, "almost perfect"}, {1, "almost perfect"}, {-5, "poor"}}
	for _, c := range cases {
		if got := LandisKoch.Classify(defined(c.v)); got != c.want {
			t.Errorf("kappa %v: %q, want %q", c.v, got, c.want)
		}
	}
	for v, want := range map[float64]string{0.5: "insufficient", 0.667: "tentative", 0.79: "tentative", 0.8: "reliable"} {
		if got := KrippendorffThresholds.Classify(defined(v)); got != want {
			t.Errorf("alpha %v: %q, want %q", v, got, want)
		}
	}
	if LandisKoch.Classify(undefined("x")) != "" {
		t.Error("undefined value classified")
	}
}

// wellBehaved makes 300 items x 4 raters with moderately good agreement.
func wellBehaved() *Data {
	rng := rand.New(rand.NewPCG(5, 5))
	d := NewData(5)
	for i := range 300 {
		truth := rng.IntN(5)
		for r := range 4 {
			g := truth
			if rng.IntN(3) == 0 {
				g = min(max(truth+rng.IntN(3)-1, 0), 4)
			}
			if err := d.Add(fmt.Sprint("i", i), fmt.Sprint("r", r), g); err != nil {
				panic(err)
			}
		}
	}
	return d
}

func TestBootstrap(t *testing.T) {
	d := wellBehaved()
	o := BootstrapOptions{Replicates: 200, Seed: 42}
	a := Bootstrap(d, o)
	o.Workers = 1
	b := Bootstrap(d, o)
	if !reflect.DeepEqual(a, b) {
		t.Error("same seed, different workers: results differ")
	}
	o.Seed = 43
	if c := Bootstrap(d, o); reflect.DeepEqual(a.Alpha, c.Alpha) {
		t.Error("different seeds gave identical intervals")
	}
	point := Alphas(d)
	for _, m := range Metrics {
		ci := a.Alpha.Get(m)
		p := point.Get(m)
		if ci.Used != 200 || !(ci.Lo.V < p.V && p.V < ci.Hi.V) || ci.Hi.V-ci.Lo.V > 0.2 {
			t.Errorf("%v: point %v not inside [%v, %v] or interval too wide", m, p, ci.Lo, ci.Hi)
		}
	}
	mk, _ := meanQuadraticKappa(CohenPairs(d, 0.95))
	if ci := a.MeanQuadraticKappa; !(ci.Lo.V < mk.V && mk.V < ci.Hi.V) {
		t.Errorf("mean kappa %v not inside [%v, %v]", mk, ci.Lo, ci.Hi)
	}

	// Stop is asked between replicates: one that never fires changes nothing, one that fires
	// after a few replicates leaves no interval behind.
	o = BootstrapOptions{Replicates: 200, Seed: 42, Stop: func() bool { return false }}
	if s := Bootstrap(d, o); !reflect.DeepEqual(a, s) {
		t.Error("a Stop that never fires changed the result")
	}
	asked := 0
	o.Workers, o.Stop = 1, func() bool { asked++; return asked > 5 }
	s := Bootstrap(d, o)
	if !s.Stopped || s.Alpha.Ordinal.Lo.OK || s.MeanQuadraticKappa.Hi.OK || asked != 6 {
		t.Errorf("stopped bootstrap: %+v after %d questions", s, asked)
	}
}

func TestPercentile(t *testing.T) {
	xs := []float64{1, 2, 3, 4, 5}
	// numpy.percentile([1,2,3,4,5], [2.5, 50, 97.5]) = 1.1, 3, 4.9
	for q, want := range map[float64]float64{0.025: 1.1, 0.5: 3, 0.975: 4.9, 1: 5, 0: 1} {
		if got := percentile(xs, q); math.Abs(got-want) > 1e-12 {
			t.Errorf("q %v: %v want %v", q, got, want)
		}
	}
}

// Compute must agree with the single-statistic functions it bundles.
func TestComputeMatchesParts(t *testing.T) {
	d := wellBehaved()
	rep := Compute(d, Options{})
	if f := Fleiss(d, 0.95); rep.FleissKappa != f.Kappa || !reflect.DeepEqual(rep.Fleiss, f) {
		t.Error("fleiss differs")
	}
	if rep.KrippendorffAlpha != Alphas(d) {
		t.Error("alpha differs")
	}
	if !reflect.DeepEqual(rep.Cohen, CohenPairs(d, 0.95)) {
		t.Error("cohen differs")
	}
	raw := Raw(d)
	if rep.PercentAgreement != raw.Exact || rep.AdjacentAgreement != raw.Adjacent {
		t.Error("raw differs")
	}
	if rep.Items != 300 || rep.Raters != 4 || rep.Judgments != 1200 || rep.PairableItems != 300 || len(rep.Cohen) != 6 {
		t.Errorf("counts %+v", rep)
	}
	if rep.Bootstrap != nil || len(rep.Undefined) != 0 {
		t.Errorf("bootstrap %v undefined %v", rep.Bootstrap, rep.Undefined)
	}
	if rep.Judgments != d.Judgments() || rep.AdjacentAgreement.V < rep.PercentAgreement.V {
		t.Error("adjacent below exact")
	}
}

// A bootstrap replicate that draws every item once must reproduce the
// full-data tallies exactly.
func TestBootIndexIdentity(t *testing.T) {
	for _, d := range []*Data{wellBehaved(), func() *Data {
		// Mixed item sizes, including a large item.
		d := NewData(4)
		rng := rand.New(rand.NewPCG(9, 9))
		for i := range 60 {
			n := 1 + rng.IntN(5)
			if i == 3 {
				n = 30
			}
			for r := range n {
				mustAdd(t, d, fmt.Sprint("i", i), fmt.Sprint("r", (r*7+i)%31), rng.IntN(4))
			}
		}
		return d
	}()} {
		ix := d.built()
		full := tallyOf(ix, true)
		var pairable []int32
		for i := 0; i < ix.nItems(); i++ {
			if ix.start[i+1]-ix.start[i] >= 2 {
				pairable = append(pairable, int32(i))
			}
		}
		bi := newBootIndex(ix, full, pairable)
		rep := full.cloneEmpty()
		for m := range rep.coinc {
			if full.coinc[m] != nil {
				rep.coinc[m] = make([]int64, len(full.coinc[m]))
			}
		}
		mult := make([]int32, len(pairable))
		for j := range mult {
			mult[j] = 1
		}
		bi.accumulate(rep, make([]int64, len(rep.coinc)*rep.k*rep.k), mult)
		if !reflect.DeepEqual(rep.pairTab, full.pairTab) {
			t.Error("pair tables differ")
		}
		for m := 2; m < len(full.coinc); m++ {
			if !reflect.DeepEqual(rep.coinc[m], full.coinc[m]) || rep.units[m] != full.units[m] {
				t.Errorf("m=%d: coincidences differ", m)
			}
		}
	}
}
