package agreement

// tally holds the sufficient statistics gathered in one pass over items:
//
//   - coinc[m] counts ordered pairs of ratings (grade c, grade k) within
//     items that have exactly m ratings. Fleiss' kappa, Krippendorff's
//     alpha and raw agreement all follow from these K x K tables.
//   - a K x K confusion table per rater pair that shares at least one item,
//     rows for the rater that sorts first.
//
// Items may carry a multiplicity (bootstrap resampling); nil means one each.
type tally struct {
	k     int
	units []int64   // units[m]: items with m ratings
	coinc [][]int64 // coinc[m]: K*K ordered pair counts, nil if no such item

	withPairs bool
	nRaters   int
	slotDense []int32          // triangular pair index -> slot+1 (0: none)
	slotMap   map[uint64]int32 // used instead when raters are many
	pairA     []int32
	pairB     []int32
	pairTab   []int64 // slot*K*K + ga*K + gb
}

// denseSlotLimit bounds the triangular slot array (4 bytes each).
const denseSlotLimit = 1 << 21

func newTally(ix *index, withPairs bool) *tally {
	t := &tally{
		k:         ix.k,
		units:     make([]int64, ix.maxM+1),
		coinc:     make([][]int64, ix.maxM+1),
		withPairs: withPairs,
		nRaters:   ix.nRaters(),
	}
	if withPairs {
		r := int64(t.nRaters)
		if np := r * (r - 1) / 2; np <= denseSlotLimit {
			t.slotDense = make([]int32, np)
		} else {
			t.slotMap = map[uint64]int32{}
		}
	}
	return t
}

// reset zeroes counts but keeps the pair slots, so bootstrap replicates
// reuse memory.
func (t *tally) reset() {
	clear(t.units)
	for _, c := range t.coinc {
		clear(c)
	}
	clear(t.pairTab)
}

func (t *tally) slot(a, b int32) int {
	var s int32
	if t.slotDense != nil {
		r := int64(t.nRaters)
		ai := int64(a)
		tri := ai*r - ai*(ai+1)/2 + int64(b-a-1)
		s = t.slotDense[tri]
		if s == 0 {
			s = t.newSlot(a, b)
			t.slotDense[tri] = s
		}
	} else {
		key := uint64(a)<<32 | uint64(uint32(b))
		s = t.slotMap[key]
		if s == 0 {
			s = t.newSlot(a, b)
			t.slotMap[key] = s
		}
	}
	return int(s - 1)
}

func (t *tally) newSlot(a, b int32) int32 {
	t.pairA = append(t.pairA, a)
	t.pairB = append(t.pairB, b)
	t.pairTab = append(t.pairTab, make([]int64, t.k*t.k)...)
	return int32(len(t.pairA))
}

// add accumulates all items of ix, item i counted mult[i] times (nil: once).
func (t *tally) add(ix *index, mult []int32) {
	k := t.k
	kk := k * k
	var counts []int64
	for i := 0; i < ix.nItems(); i++ {
		w := int64(1)
		if mult != nil {
			if mult[i] == 0 {
				continue
			}
			w = int64(mult[i])
		}
		lo, hi := ix.start[i], ix.start[i+1]
		m := int(hi - lo)
		t.units[m] += w
		if m < 2 {
			continue
		}
		co := t.coinc[m]
		if co == nil {
			co = make([]int64, kk)
			t.coinc[m] = co
		}
		rs, gs := ix.rater[lo:hi], ix.grade[lo:hi]
		if !t.withPairs && m*(m-1)/2 > kk {
			// Many ratings on one item: count grades instead of pairs.
			if counts == nil {
				counts = make([]int64, k)
			}
			clear(counts)
			for _, g := range gs {
				counts[g]++
			}
			for c := 0; c < k; c++ {
				if counts[c] == 0 {
					continue
				}
				row := co[c*k : c*k+k]
				for d := 0; d < k; d++ {
					n := counts[c] * counts[d]
					if c == d {
						n -= counts[c]
					}
					row[d] += w * n
				}
			}
			continue
		}
		for p := 0; p < m; p++ {
			gp := int(gs[p])
			for q := p + 1; q < m; q++ {
				gq := int(gs[q])
				co[gp*k+gq] += w
				co[gq*k+gp] += w
				if t.withPairs {
					s := t.slot(rs[p], rs[q])
					t.pairTab[s*kk+gp*k+gq] += w
				}
			}
		}
	}
}

// pairTable returns the K x K table of pair slot s.
func (t *tally) pairTable(s int) []int64 {
	kk := t.k * t.k
	return t.pairTab[s*kk : (s+1)*kk]
}

func tallyOf(ix *index, withPairs bool) *tally {
	t := newTally(ix, withPairs)
	t.add(ix, nil)
	return t
}
