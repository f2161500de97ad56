package preference

import (
	"cmp"
	"slices"

	"github.com/pertinent/pertinent"
)

const source = "preference"

// Outcome is an assessor's answer for an ordered pair (left, right) of documents.
type Outcome int

const (
	LeftBetter      Outcome = iota + 1 // the left document is the better one for the query
	RightBetter                        // the right document is
	Same                               // about the same
	NeitherRelevant                    // neither document is relevant: no preference
)

// String names the outcome.
func (o Outcome) String() string {
	switch o {
	case LeftBetter:
		return "left"
	case RightBetter:
		return "right"
	case Same:
		return "same"
	case NeitherRelevant:
		return "neither"
	}
	return "invalid"
}

// flip is the same answer for the pair shown the other way round.
func (o Outcome) flip() Outcome {
	switch o {
	case LeftBetter:
		return RightBetter
	case RightBetter:
		return LeftBetter
	}
	return o
}

// Judgment is one assessor's preference between two documents of one query.
type Judgment struct {
	Query    string  `json:"query"`
	Left     string  `json:"left"`
	Right    string  `json:"right"`
	Outcome  Outcome `json:"outcome"`
	Assessor string  `json:"assessor"`
}

func (j Judgment) validate() error {
	switch {
	case j.Query == "" || j.Left == "" || j.Right == "" || j.Assessor == "":
		return pertinent.Errorf(pertinent.Invalid, source, "a preference judgment needs a query, two documents and an assessor")
	case j.Left == j.Right:
		return pertinent.Errorf(pertinent.Invalid, source, "query %s: document %s is compared with itself", j.Query, j.Left)
	case j.Outcome < LeftBetter || j.Outcome > NeitherRelevant:
		return pertinent.Errorf(pertinent.Invalid, source, "query %s: outcome %d is not one of left, right, same, neither", j.Query, int(j.Outcome))
	}
	return nil
}

// ByQuery groups judgments by query, keeping their order within each query.
func ByQuery(js []Judgment) map[string][]Judgment {
	m := map[string][]Judgment{}
	for _, j := range js {
		m[j.Query] = append(m[j.Query], j)
	}
	return m
}

// pair is an unordered pair of documents, A < B.
type pair struct{ A, B string }

// orient returns the pair of j with A < B and j's outcome read in that orientation.
func orient(j Judgment) (pair, Outcome) {
	if j.Left < j.Right {
		return pair{j.Left, j.Right}, j.Outcome
	}
	return pair{j.Right, j.Left}, j.Outcome.flip()
}

// votes counts the answers for one pair in its (A, B) orientation, one per assessor.
type votes struct {
	A, B, Same, Neither int
}

func (v votes) total() int { return v.A + v.B + v.Same + v.Neither }

func (v *votes) add(o Outcome, n int) {
	switch o {
	case LeftBetter:
		v.A += n
	case RightBetter:
		v.B += n
	case Same:
		v.Same += n
	case NeitherRelevant:
		v.Neither += n
	}
}

// majority is the most frequent answer; a tie between the most frequent answers is Same.
// LeftBetter means A is better, RightBetter B.
func (v votes) majority() Outcome {
	best, out, tied := -1, Same, false
	for _, c := range []struct {
		n int
		o Outcome
	}{{v.A, LeftBetter}, {v.B, RightBetter}, {v.Same, Same}, {v.Neither, NeitherRelevant}} {
		switch {
		case c.n > best:
			best, out, tied = c.n, c.o, false
		case c.n == best:
			tied = true
		}
	}
	if tied {
		return Same
	}
	return out
}

// Majority is the majority answer of one query's judgments of the pair (left, right), read
// in that orientation; a tie between the most frequent answers is Same. Judgments of other
// pairs are ignored, and an assessor's later judgment replaces an earlier one.
func Majority(left, right string, js []Judgment) Outcome {
	t, _ := tallies("", js, false)
	p := pair{left, right}
	swap := left > right
	if swap {
		p = pair{right, left}
	}
	m := t.votes[p].majority()
	if swap {
		m = m.flip()
	}
	return m
}

// tally holds one query's judgments by pair, the latest per assessor.
type tally struct {
	votes map[pair]votes
	// answers is each pair's answers by assessor, in the pair's orientation.
	answers map[pair]map[string]Outcome
	pairs   []pair // in order of first appearance
}

// tallies validates js and counts them by pair. With check, every judgment must be of
// query; without, query is not looked at.
func tallies(query string, js []Judgment, check bool) (*tally, error) {
	t := &tally{votes: map[pair]votes{}, answers: map[pair]map[string]Outcome{}}
	for _, j := range js {
		if err := j.validate(); err != nil {
			return nil, err
		}
		if check && j.Query != query {
			return nil, pertinent.Errorf(pertinent.Invalid, source, "a judgment of query %s is among those of query %s", j.Query, query)
		}
		p, o := orient(j)
		a := t.answers[p]
		if a == nil {
			a = map[string]Outcome{}
			t.answers[p] = a
			t.pairs = append(t.pairs, p)
		}
		v := t.votes[p]
		if old, ok := a[j.Assessor]; ok {
			v.add(old, -1)
		}
		a[j.Assessor] = o
		v.add(o, 1)
		t.votes[p] = v
	}
	return t, nil
}

// sortedPairs returns the tally's pairs in a fixed order.
func (t *tally) sortedPairs() []pair {
	ps := slices.Clone(t.pairs)
	slices.SortFunc(ps, func(x, y pair) int { return cmp.Or(cmp.Compare(x.A, y.A), cmp.Compare(x.B, y.B)) })
	return ps
}
