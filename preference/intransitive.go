package preference

import (
	"cmp"
	"slices"
)

// Triple is three documents whose majorities go round: A beats B, B beats C and C beats A.
// A is the smallest id of the three.
type Triple struct {
	A string `json:"a"`
	B string `json:"b"`
	C string `json:"c"`
}

// Intransitive returns the triples of one query's judgments whose pairwise majorities (a
// tie: about the same, which beats nobody) form a circle, in a fixed order. Each circle is
// reported once.
func Intransitive(query string, judgments []Judgment) ([]Triple, error) {
	t, err := tallies(query, judgments, true)
	if err != nil {
		return nil, err
	}
	return intransitive(t), nil
}

func intransitive(t *tally) []Triple {
	beats := map[string]map[string]bool{}
	add := func(w, l string) {
		if beats[w] == nil {
			beats[w] = map[string]bool{}
		}
		beats[w][l] = true
	}
	for p, v := range t.votes {
		switch v.majority() {
		case LeftBetter:
			add(p.A, p.B)
		case RightBetter:
			add(p.B, p.A)
		}
	}
	var out []Triple
	for a, la := range beats {
		for b := range la {
			if b < a {
				continue
			}
			for c := range beats[b] {
				if c > a && beats[c][a] {
					out = append(out, Triple{a, b, c})
				}
			}
		}
	}
	slices.SortFunc(out, func(x, y Triple) int {
		return cmp.Or(cmp.Compare(x.A, y.A), cmp.Compare(x.B, y.B), cmp.Compare(x.C, y.C))
	})
	return out
}
