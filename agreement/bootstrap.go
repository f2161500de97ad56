package agreement

import (
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"sync"
	"sync/atomic"
)

// BootstrapOptions configures item-resampling bootstrap intervals.
type BootstrapOptions struct {
	Replicates int     // number of resamples; <= 0 disables
	Seed       uint64  // replicate r draws from PCG(Seed, r), so results do not depend on Workers
	Level      float64 // two-sided level, e.g. 0.95 (0 means 0.95)
	Workers    int     // goroutines; 0 means GOMAXPROCS
	// Stop, when set, is asked between replicates; once it returns true the bootstrap gives
	// up and returns a result with Stopped set and no intervals (for a caller whose data went
	// stale while it ran). It may be called from several goroutines at once.
	Stop func() bool
}

// BootCI is a percentile bootstrap interval. Used counts the replicates in
// which the statistic was defined; the interval is taken over those only.
type BootCI struct {
	Lo   Value `json:"lo"`
	Hi   Value `json:"hi"`
	Used int   `json:"used"`
}

// AlphaCIs holds bootstrap intervals for alpha under the four metrics.
type AlphaCIs struct {
	Nominal  BootCI `json:"nominal"`
	Ordinal  BootCI `json:"ordinal"`
	Interval BootCI `json:"interval"`
	Ratio    BootCI `json:"ratio"`
}

// Get returns the interval for metric m.
func (a AlphaCIs) Get(m Metric) BootCI {
	switch m {
	case Ordinal:
		return a.Ordinal
	case Interval:
		return a.Interval
	case Ratio:
		return a.Ratio
	}
	return a.Nominal
}

// BootstrapResult holds percentile intervals from resampling items.
type BootstrapResult struct {
	Replicates         int      `json:"replicates"`
	Seed               uint64   `json:"seed"`
	Level              float64  `json:"level"`
	Alpha              AlphaCIs `json:"alpha"`
	MeanQuadraticKappa BootCI   `json:"mean_quadratic_kappa"`
	Stopped            bool     `json:"stopped,omitempty"` // Stop ended it early: no intervals
}

// Bootstrap resamples the items that have two or more ratings (the only
// ones alpha and kappa can use) with replacement, the same number as there
// are, and recomputes alpha for every metric and the mean pairwise
// quadratic-weighted kappa on each resample. Intervals are percentiles
// (linear interpolation between order statistics).
func Bootstrap(d *Data, o BootstrapOptions) BootstrapResult {
	ix := d.built()
	return bootstrapOf(ix, tallyOf(ix, true), o)
}

const bootStats = 5 // four alphas, then mean quadratic kappa

func bootstrapOf(ix *index, full *tally, o BootstrapOptions) BootstrapResult {
	if o.Level <= 0 || o.Level >= 1 {
		o.Level = 0.95
	}
	res := BootstrapResult{Replicates: max(o.Replicates, 0), Seed: o.Seed, Level: o.Level}
	var pairable []int32
	for i := 0; i < ix.nItems(); i++ {
		if ix.start[i+1]-ix.start[i] >= 2 {
			pairable = append(pairable, int32(i))
		}
	}
	why := ""
	switch {
	case o.Replicates <= 0:
		why = "bootstrap not requested"
	case len(pairable) == 0:
		why = "no item has two or more ratings"
	}
	if why != "" {
		u := BootCI{Lo: undefined(why), Hi: undefined(why)}
		res.Alpha = AlphaCIs{u, u, u, u}
		res.MeanQuadraticKappa = u
		return res
	}

	bi := newBootIndex(ix, full, pairable)
	vals := make([]float64, o.Replicates*bootStats)
	ok := make([]bool, o.Replicates*bootStats)
	workers := o.Workers
	if workers <= 0 {
		workers = runtime.GOMAXPROCS(0)
	}
	workers = min(workers, o.Replicates)
	var stopped atomic.Bool
	var wg sync.WaitGroup
	for w := range workers {
		wg.Go(func() {
			t := full.cloneEmpty()
			for m := range t.coinc {
				if full.coinc[m] != nil {
					t.coinc[m] = make([]int64, len(full.coinc[m]))
				}
			}
			half := make([]int64, len(t.coinc)*t.k*t.k)
			mult := make([]int32, len(pairable))
			n := len(pairable)
			for r := w; r < o.Replicates; r += workers {
				if o.Stop != nil && (stopped.Load() || o.Stop()) {
					stopped.Store(true)
					return
				}
				rng := rand.New(rand.NewPCG(o.Seed, uint64(r)))
				clear(mult)
				for range n {
					mult[rng.IntN(n)]++
				}
				bi.accumulate(t, half, mult)
				as := alphaSet(coincidence(t), t.k)
				for j, m := range Metrics {
					v := as.Get(m)
					vals[r*bootStats+j], ok[r*bootStats+j] = v.V, v.OK
				}
				var sum float64
				cnt := 0
				for s := range t.pairA {
					e := cohenFlat(t.k, t.pairTable(s), Quadratic, 0, false)
					if e.Kappa.OK {
						sum += e.Kappa.V
						cnt++
					}
				}
				if cnt > 0 {
					vals[r*bootStats+4], ok[r*bootStats+4] = sum/float64(cnt), true
				}
			}
		})
	}
	wg.Wait()
	if stopped.Load() {
		w := "bootstrap stopped before it finished"
		u := BootCI{Lo: undefined(w), Hi: undefined(w)}
		res.Alpha = AlphaCIs{u, u, u, u}
		res.MeanQuadraticKappa = u
		res.Stopped = true
		return res
	}

	ci := func(j int) BootCI {
		xs := make([]float64, 0, o.Replicates)
		for r := 0; r < o.Replicates; r++ {
			if ok[r*bootStats+j] {
				xs = append(xs, vals[r*bootStats+j])
			}
		}
		if len(xs) == 0 {
			w := "undefined in every bootstrap replicate"
			return BootCI{Lo: undefined(w), Hi: undefined(w)}
		}
		slices.Sort(xs)
		a := (1 - o.Level) / 2
		return BootCI{Lo: defined(percentile(xs, a)), Hi: defined(percentile(xs, 1-a)), Used: len(xs)}
	}
	res.Alpha = AlphaCIs{Nominal: ci(0), Ordinal: ci(1), Interval: ci(2), Ratio: ci(3)}
	res.MeanQuadraticKappa = ci(4)
	return res
}

// percentile of sorted xs at q in [0,1], interpolating linearly between
// order statistics (numpy's default "linear" method).
func percentile(xs []float64, q float64) float64 {
	h := float64(len(xs)-1) * q
	lo := int(math.Floor(h))
	if lo >= len(xs)-1 {
		return xs[len(xs)-1]
	}
	return xs[lo] + (h-float64(lo))*(xs[lo+1]-xs[lo])
}

// cloneEmpty shares the pair slots of t (read-only once built over all
// items, since a resample never meets a new pair) with fresh counts.
func (t *tally) cloneEmpty() *tally {
	c := *t
	c.units = make([]int64, len(t.units))
	c.coinc = make([][]int64, len(t.coinc))
	c.pairTab = make([]int64, len(t.pairTab))
	return &c
}

// bootIndex lists, for every pairable item, the cells its rating pairs
// fall in, so a replicate is a run of additions: cell[j] indexes the
// unordered coincidence counts of the item's size (m*K*K + ga*K + gb) and
// pairCell[j] the rater-pair tables (slot*K*K + ga*K + gb).
type bootIndex struct {
	size     []int32 // ratings on each pairable item
	off      []int32 // pairs of item i: off[i]..off[i+1]
	cell     []int32
	pairCell []int // int: slot*K*K may pass 2^31 with many pairs and a long scale
}

func newBootIndex(ix *index, full *tally, pairable []int32) *bootIndex {
	k := ix.k
	kk := k * k
	bi := &bootIndex{size: make([]int32, len(pairable)), off: make([]int32, len(pairable)+1)}
	for j, i := range pairable {
		lo, hi := ix.start[i], ix.start[i+1]
		m := int(hi - lo)
		bi.size[j] = int32(m)
		rs, gs := ix.rater[lo:hi], ix.grade[lo:hi]
		for p := 0; p < m; p++ {
			for q := p + 1; q < m; q++ {
				c := int(gs[p])*k + int(gs[q])
				bi.cell = append(bi.cell, int32(m*kk+c))
				bi.pairCell = append(bi.pairCell, full.slot(rs[p], rs[q])*kk+c)
			}
		}
		bi.off[j+1] = int32(len(bi.cell))
	}
	return bi
}

// accumulate fills t with item j counted mult[j] times; half is scratch for
// the unordered coincidence counts.
func (bi *bootIndex) accumulate(t *tally, half []int64, mult []int32) {
	t.reset()
	clear(half)
	pt := t.pairTab
	for j, w32 := range mult {
		if w32 == 0 {
			continue
		}
		w := int64(w32)
		t.units[bi.size[j]] += w
		for p := bi.off[j]; p < bi.off[j+1]; p++ {
			half[bi.cell[p]] += w
			pt[bi.pairCell[p]] += w
		}
	}
	k := t.k
	kk := k * k
	for m, co := range t.coinc {
		if co == nil {
			continue
		}
		h := half[m*kk : (m+1)*kk]
		for c := 0; c < k; c++ {
			for d := 0; d < k; d++ {
				co[c*k+d] = h[c*k+d] + h[d*k+c]
			}
		}
	}
}
