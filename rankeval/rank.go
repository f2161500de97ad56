package rankeval

import (
	"cmp"
	"slices"
)

// Qrels holds final grades: query id -> document id -> grade.
type Qrels map[string]map[string]int

// ScoredDoc is one retrieved document of a run.
type ScoredDoc struct {
	DocID string
	Score float64
}

// Run is a ranker's output: query id -> retrieved documents (any order).
type Run map[string][]ScoredDoc

// Rank returns a sorted copy of docs: score descending, ties by document
// id descending.
func Rank(docs []ScoredDoc) []ScoredDoc {
	out := slices.Clone(docs)
	slices.SortFunc(out, func(a, b ScoredDoc) int {
		if c := cmp.Compare(b.Score, a.Score); c != 0 {
			return c
		}
		return cmp.Compare(b.DocID, a.DocID)
	})
	return out
}
