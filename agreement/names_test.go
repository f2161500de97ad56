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

// Items added in ascending id order are interned without a map until one arrives out of
// order; either way the results equal string keys: revisiting an earlier item (found by
// search), a new item below the last (the switch to a map), and gold grades looked up in
// both states.
func TestAscendingItemIDs(t *testing.T) {
	for _, late := range []bool{false, true} {
		rng := rand.New(rand.NewPCG(5, 9))
		byName, byID := NewData(4), NewData(4)
		add := func(it, r int64, g int) {
			t.Helper()
			if err := byName.Add(strconv.FormatInt(it, 10), strconv.FormatInt(r, 10), g); err != nil {
				t.Fatal(err)
			}
			if err := byID.AddID(it, r, g); err != nil {
				t.Fatal(err)
			}
		}
		for it := int64(10); it < 400; it += 1 + int64(rng.IntN(3)) {
			for r := range int64(3) {
				add(it, r+int64(rng.IntN(4)), rng.IntN(4))
			}
			if rng.IntN(7) == 0 { // a later answer on an earlier item
				add(10, 1, rng.IntN(4))
			}
		}
		if late {
			add(5, 2, 3) // below every item so far
			add(11, 9, 1)
		}
		if byID.itemID != nil && !late {
			t.Error("ascending items built a map")
		}
		if byID.itemID == nil && late {
			t.Error("an item out of order kept the map-free form")
		}
		gold := map[string]int{"10": 2, "11": 1, "5": 0, "12": 3, "399": 1, "1000": 2}
		a, b := Compute(byName, Options{Gold: gold}), Compute(byID, Options{Gold: gold})
		// Raters are numbered alike here, and string keys order "10" before "2": compare
		// per-rater figures by name.
		if !reflect.DeepEqual(a.Judgments, b.Judgments) || !reflect.DeepEqual(a.Items, b.Items) ||
			!reflect.DeepEqual(a.KrippendorffAlpha, b.KrippendorffAlpha) || !reflect.DeepEqual(a.Fleiss, b.Fleiss) {
			t.Fatalf("late %v: reports differ\n%+v\n%+v", late, a, b)
		}
		stats := map[string]RaterStats{}
		for _, s := range a.RaterStats {
			stats[s.Rater] = s
		}
		gi := 0
		for _, s := range b.RaterStats {
			if !reflect.DeepEqual(stats[s.Rater], s) {
				t.Fatalf("late %v: rater %s\n%+v\n%+v", late, s.Rater, stats[s.Rater], s)
			}
			gi += s.GoldItems
		}
		if gi == 0 {
			t.Fatal("no gold item matched")
		}
	}
}
