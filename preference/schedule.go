package preference

import (
	"slices"

	"github.com/pertinent/pertinent"
)

// Comparison is a pair to put to assessors: Need more of them, each a different assessor
// from those who already judged it, in either orientation.
type Comparison struct {
	Query string `json:"query"`
	Left  string `json:"left"`
	Right string `json:"right"`
	Need  int    `json:"need"`
}

// Plan is where a query's sort stands.
type Plan struct {
	// Next are the comparisons the sort is waiting for; they are independent of each other,
	// so all may be judged at once. Empty when Done.
	Next []Comparison `json:"next"`
	// Done: every comparison the sort needs is decided; Order is then the documents, best
	// first.
	Done  bool     `json:"done"`
	Order []string `json:"order,omitempty"`
	// Comparisons counts the sort's comparisons so far: those decided and those in Next.
	Comparisons int `json:"comparisons"`
}

// Schedule returns the next comparisons to ask for one query's documents (those the caller
// chose, say every document at or above a grade), given the preference judgments so far.
//
// The questions are the comparisons of a top-down merge sort (von Neumann's; its worst case
// of n⌈log2 n⌉ − 2^⌈log2 n⌉ + 1 comparisons is from Knuth, The Art of Computer Programming
// vol. 3, §5.2.4, from memory), so a query costs at most n⌈log2 n⌉ comparisons rather than
// the n(n−1)/2 of judging every pair. Merge sort never compares two documents twice, and the
// merges of separate halves are independent, so up to n/2 questions are open at once. The
// sort is resumed by replaying it from the documents (in the order of their ids, so the
// caller's order does not matter) against the judgments: a comparison with k or more
// judgments is decided by their majority (a tie: about the same), and the first undecided
// comparison of each merge is asked next. About the same and neither relevant keep the
// earlier document first. Judgments of pairs the sort does not ask about (say of documents
// no longer above the caller's grade) are ignored; adding a document reshapes the sort, and
// the comparisons it asks again are answered by the judgments already there.
func Schedule(query string, docs []string, judgments []Judgment, k int) (Plan, error) {
	if k < 1 {
		return Plan{}, pertinent.Errorf(pertinent.Invalid, source, "each comparison needs at least one assessor, not %d", k)
	}
	t, err := tallies(query, judgments, true)
	if err != nil {
		return Plan{}, err
	}
	ds := slices.Clone(docs)
	slices.Sort(ds)
	ds = slices.Compact(ds)
	if len(ds) > 0 && ds[0] == "" {
		return Plan{}, pertinent.Errorf(pertinent.Invalid, source, "query %s: a document without an id", query)
	}
	s := &sorter{query: query, t: t, k: k}
	order, done := s.sort(ds)
	p := Plan{Next: s.next, Done: done, Comparisons: s.used}
	if done {
		p.Order = order
	}
	return p, nil
}

type sorter struct {
	query string
	t     *tally
	k     int
	next  []Comparison
	used  int
}

// sort merge-sorts xs best first; false when some comparison is still undecided.
func (s *sorter) sort(xs []string) ([]string, bool) {
	if len(xs) <= 1 {
		return xs, true
	}
	m := len(xs) / 2
	l, okl := s.sort(xs[:m])
	r, okr := s.sort(xs[m:])
	if !okl || !okr {
		return nil, false
	}
	out := make([]string, 0, len(xs))
	i, j := 0, 0
	for i < len(l) && j < len(r) {
		s.used++
		first, ok := s.decide(l[i], r[j])
		if !ok {
			return nil, false
		}
		if first {
			out = append(out, l[i])
			i++
		} else {
			out = append(out, r[j])
			j++
		}
	}
	out = append(out, l[i:]...)
	return append(out, r[j:]...), true
}

// decide reports whether a stays before b, or queues the comparison when fewer than k
// assessors have answered it.
func (s *sorter) decide(a, b string) (aFirst, ok bool) {
	p, swap := pair{a, b}, false
	if a > b {
		p, swap = pair{b, a}, true
	}
	v := s.t.votes[p]
	if n := v.total(); n < s.k {
		s.next = append(s.next, Comparison{Query: s.query, Left: a, Right: b, Need: s.k - n})
		return false, false
	}
	m := v.majority()
	if swap {
		m = m.flip()
	}
	return m != RightBetter, true
}
