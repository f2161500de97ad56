package agreement

import (
	"cmp"
	"math"
	"math/rand/v2"
	"slices"
	"strconv"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/internal/reference"
)

// plainShares is the definition of drift written out: sort every compared grade by time
// (then id) and take the share agreeing over the last DriftWindow and over the earlier ones.
func plainShares(comp []Compared) (recent, earlier, diff Value, earlierN int) {
	if len(comp) <= DriftWindow {
		why := undefined("needs more than " + strconv.Itoa(DriftWindow) + " grades compared with consensus")
		return why, why, why, 0
	}
	comp = slices.Clone(comp)
	slices.SortFunc(comp, func(a, b Compared) int {
		if c := cmp.Compare(a.At, b.At); c != 0 {
			return c
		}
		return cmp.Compare(a.ID, b.ID)
	})
	share := func(cs []Compared) float64 {
		n := 0
		for _, c := range cs {
			if c.Agree {
				n++
			}
		}
		return float64(n) / float64(len(cs))
	}
	cut := len(comp) - DriftWindow
	r, e := share(comp[cut:]), share(comp[:cut])
	return defined(r), defined(e), defined(r - e), cut
}

// The ring keeping the latest grades gives the plain computation's figures whatever order
// the grades come in: in time order, reversed, shuffled, with equal times, and with fewer,
// exactly as many and more grades than the window.
func TestDriftEqualsPlainComputation(t *testing.T) {
	for seed := range uint64(60) {
		rng := rand.New(rand.NewPCG(seed, 7))
		n := rng.IntN(3 * DriftWindow)
		if seed%10 == 0 {
			n = DriftWindow + int(seed%3) - 1
		}
		comp := make([]Compared, n)
		for i := range comp {
			comp[i] = Compared{At: int64(i) * 1000, ID: int64(rng.IntN(1 << 20)), Agree: rng.IntN(3) > 0}
			if rng.IntN(4) == 0 {
				comp[i].At = 1000 * int64(rng.IntN(5)) // equal times: the id decides
			}
		}
		switch seed % 3 {
		case 1:
			slices.Reverse(comp)
		case 2:
			rng.Shuffle(len(comp), func(i, j int) { comp[i], comp[j] = comp[j], comp[i] })
		}
		var d Drift
		for _, c := range comp {
			d.Add(c)
		}
		r, e, diff, en := d.Shares()
		pr, pe, pdiff, pen := plainShares(comp)
		if r != pr || e != pe || diff != pdiff || en != pen || d.Compared() != n {
			t.Fatalf("seed %d (%d grades): ring %v %v %v %d, plain %v %v %v %d", seed, n, r, e, diff, en, pr, pe, pdiff, pen)
		}
	}
}

// A Drift is added to once per judgment on the lead's desk: it must not allocate.
func TestDriftAddDoesNotAllocate(t *testing.T) {
	var d Drift
	i := int64(0)
	if a := testing.AllocsPerRun(1000, func() {
		i++
		d.Add(Compared{At: (i * 7919) % 1000, ID: i, Agree: i%3 == 0})
	}); a != 0 {
		t.Fatalf("%v allocations per Add", a)
	}
}

// Spread's range and variance equal numpy's ptp and var (population variance, ddof=0).
func TestSpreadMatchesNumpy(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 5))
	var in strings.Builder
	var sets [][]int
	for range 50 {
		gs := make([]int, 1+rng.IntN(9))
		for i := range gs {
			gs[i] = rng.IntN(5)
		}
		slices.Sort(gs)
		sets = append(sets, gs)
		for i, g := range gs {
			if i > 0 {
				in.WriteByte(' ')
			}
			in.WriteString(strconv.Itoa(g))
		}
		in.WriteByte('\n')
	}
	out := reference.RunPython(t, "numpy", `
import sys, numpy as np
for line in sys.stdin:
    g = np.array([int(x) for x in line.split()])
    print(int(np.ptp(g)), repr(float(np.var(g))))
`, []byte(in.String()))
	lines := strings.Split(strings.TrimSpace(string(out)), "\n")
	if len(lines) != len(sets) {
		t.Fatalf("%d answers for %d sets", len(lines), len(sets))
	}
	for i, gs := range sets {
		f := strings.Fields(lines[i])
		wantSpread, _ := strconv.Atoi(f[0])
		wantVar, _ := strconv.ParseFloat(f[1], 64)
		spread, v := Spread(gs)
		if spread != wantSpread || math.Abs(v-wantVar) > 1e-12 {
			t.Errorf("%v: Spread = %d, %v; numpy %d, %v", gs, spread, v, wantSpread, wantVar)
		}
	}
	if s, v := Spread(nil); s != 0 || v != 0 {
		t.Errorf("Spread(nil) = %d, %v", s, v)
	}
}
