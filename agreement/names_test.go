package agreement

import (
	"math/rand/v2"
	"reflect"
	"strconv"
	"testing"
)

// Id-keyed data with named raters must give exactly the results of string-keyed data under
// those names: the names reverse the numeric order of the ids, so ordering by id instead of
// name would show. Items arrive mostly in runs (the last-item shortcut) with some out of
// order and some superseded.
func TestNameRatersMatchesStringKeys(t *testing.T) {
	name := func(id int64) string { return "r" + string(rune('z'-id)) }
	for seed := range uint64(30) {
		rng := rand.New(rand.NewPCG(seed, 7))
		k := 2 + rng.IntN(4)
		byName, byID := NewData(k), NewData(k)
		if err := byID.NameRaters(name); err != nil {
			t.Fatal(err)
		}
		gold := map[string]int{}
		items := 5 + rng.IntN(60)
		for n := 0; n < items*3; n++ {
			it := int64(n / 3)
			if rng.IntN(5) == 0 {
				it = int64(rng.IntN(items))
			}
			r := int64(rng.IntN(8))
			g := rng.IntN(k)
			if err := byName.Add(strconv.FormatInt(it, 10), name(r), g); err != nil {
				t.Fatal(err)
			}
			if err := byID.AddID(it, r, g); err != nil {
				t.Fatal(err)
			}
			if rng.IntN(10) == 0 {
				gold[strconv.FormatInt(it, 10)] = rng.IntN(k)
			}
		}
		o := Options{Gold: gold, Bootstrap: 20, Seed: 3, Workers: 1}
		a, b := Compute(byName, o), Compute(byID, o)
		if !reflect.DeepEqual(a, b) {
			t.Fatalf("seed %d: reports differ\nnames %+v\nids   %+v", seed, a, b)
		}
		if !reflect.DeepEqual(byName.RaterNames(), byID.RaterNames()) || !reflect.DeepEqual(byName.ItemNames(), byID.ItemNames()) {
			t.Fatalf("seed %d: names differ", seed)
		}
		if !reflect.DeepEqual(Consensus(byName), Consensus(byID)) {
			t.Fatalf("seed %d: consensus differs", seed)
		}
	}
	if err := NewData(2).NameRaters(nil); err != nil {
		t.Errorf("empty data refused names: %v", err)
	}
	d := NewData(2)
	mustAdd(t, d, "a", "x", 0)
	if err := d.NameRaters(func(int64) string { return "" }); err == nil {
		t.Error("string-keyed data accepted rater names")
	}
}
