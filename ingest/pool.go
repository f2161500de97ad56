package ingest

import (
	"cmp"
	"container/heap"
	"slices"
)

// RunRank says at which rank one run retrieved a pooled pair.
type RunRank struct {
	Run  string
	Rank int
}

// PoolPair is a pair the pool puts up for judging.
type PoolPair struct {
	QueryID  string
	DocID    string
	Runs     []RunRank // contributing runs, by run name
	BestRank int       // smallest rank over Runs
	Priority int       // depth + 1 - BestRank: a run's top document gets depth
}

// Pooler builds a depth-k pool. Within each (run, query) it orders entries
// by score descending, then by the file's rank column ascending, then by
// document id ascending, as common practice in evaluation tools ranks by
// score and ignores the rank column; the rank a pooled pair reports is its
// position in that order. Only the top k per (run, query) are held.
type Pooler struct {
	depth int
	tops  map[[2]string]*topK
}

// NewPooler returns a Pooler of the given depth; depth must be at least 1.
func NewPooler(depth int) *Pooler {
	if depth < 1 {
		panic("ingest: pool depth must be at least 1")
	}
	return &Pooler{depth: depth, tops: map[[2]string]*topK{}}
}

// Add offers one run entry; run names the run it belongs to (a file name or
// its run tag). A document repeated within one (run, query) keeps its
// better entry.
func (p *Pooler) Add(run string, e RunEntry) {
	key := [2]string{run, e.QueryID}
	t := p.tops[key]
	if t == nil {
		t = &topK{in: map[string]bool{}}
		p.tops[key] = t
	}
	t.add(p.depth, e)
}

// Pairs returns the pool ordered by query id, then best rank, then doc id.
func (p *Pooler) Pairs() []PoolPair {
	type qd struct{ q, d string }
	byPair := map[qd]*PoolPair{}
	for key, t := range p.tops {
		entries := slices.Clone(t.h)
		slices.SortFunc(entries, func(a, b RunEntry) int {
			if better(a, b) {
				return -1
			}
			if better(b, a) {
				return 1
			}
			return 0
		})
		for i, e := range entries {
			k := qd{e.QueryID, e.DocID}
			pp := byPair[k]
			if pp == nil {
				pp = &PoolPair{QueryID: e.QueryID, DocID: e.DocID, BestRank: i + 1}
				byPair[k] = pp
			}
			pp.Runs = append(pp.Runs, RunRank{Run: key[0], Rank: i + 1})
			pp.BestRank = min(pp.BestRank, i+1)
		}
	}
	out := make([]PoolPair, 0, len(byPair))
	for _, pp := range byPair {
		slices.SortFunc(pp.Runs, func(a, b RunRank) int { return cmp.Compare(a.Run, b.Run) })
		pp.Priority = p.depth + 1 - pp.BestRank
		out = append(out, *pp)
	}
	slices.SortFunc(out, func(a, b PoolPair) int {
		return cmp.Or(cmp.Compare(a.QueryID, b.QueryID), cmp.Compare(a.BestRank, b.BestRank), cmp.Compare(a.DocID, b.DocID))
	})
	return out
}

// Pool is the depth-k pool of whole runs, keyed by run name.
func Pool(depth int, runs map[string][]RunEntry) []PoolPair {
	p := NewPooler(depth)
	for name, entries := range runs {
		for _, e := range entries {
			p.Add(name, e)
		}
	}
	return p.Pairs()
}

// better reports whether a ranks above b.
func better(a, b RunEntry) bool {
	if a.Score != b.Score {
		return a.Score > b.Score
	}
	if a.Rank != b.Rank {
		return a.Rank < b.Rank
	}
	return a.DocID < b.DocID
}

// topK is a heap whose root is the worst of the best k entries so far.
type topK struct {
	h  []RunEntry
	in map[string]bool // doc ids currently held
}

func (t *topK) Len() int           { return len(t.h) }
func (t *topK) Less(i, j int) bool { return better(t.h[j], t.h[i]) }
func (t *topK) Swap(i, j int)      { t.h[i], t.h[j] = t.h[j], t.h[i] }
func (t *topK) Push(x any)         { t.h = append(t.h, x.(RunEntry)) }
func (t *topK) Pop() any {
	e := t.h[len(t.h)-1]
	t.h = t.h[:len(t.h)-1]
	return e
}

func (t *topK) add(k int, e RunEntry) {
	if t.in[e.DocID] {
		for i, old := range t.h {
			if old.DocID == e.DocID {
				if better(e, old) {
					t.h[i] = e
					heap.Fix(t, i)
				}
				return
			}
		}
	}
	if len(t.h) < k {
		heap.Push(t, e)
		t.in[e.DocID] = true
		return
	}
	if better(e, t.h[0]) {
		delete(t.in, t.h[0].DocID)
		t.h[0] = e
		heap.Fix(t, 0)
		t.in[e.DocID] = true
	}
}
