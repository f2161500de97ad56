package estimate

import (
	"fmt"
	"math/rand/v2"

	"github.com/pertinent/pertinent/rankeval"
)

// collection is an invented test collection with a complete ground truth.
type collection struct {
	runs  []NamedRun
	truth rankeval.Qrels // every pair any run retrieves, graded
}

// invent makes a collection: per query, docs documents with a latent
// quality u ~ N(0,1) and grade = number of the cut points 0.5, 1.2, 1.8,
// 2.4 that u passes (about 31%, 12%, 4% and 1% reach 1, 2, 3, 4). Run r
// scores a document u + noise[r]·N(0,1) and retrieves its top depth, so
// relevance falls with rank, and runs with less noise are better. Every
// retrieved pair is graded in the truth.
func invent(seed uint64, queries, docs, depth int, noise []float64) collection {
	rng := rand.New(rand.NewPCG(seed, 7))
	c := collection{truth: rankeval.Qrels{}}
	c.runs = make([]NamedRun, len(noise))
	for i := range noise {
		c.runs[i] = NamedRun{Name: fmt.Sprintf("run%d", i+1), Run: rankeval.Run{}}
	}
	cuts := []float64{0.5, 1.2, 1.8, 2.4}
	for q := range queries {
		qid := fmt.Sprintf("q%03d", q+1)
		u := make([]float64, docs)
		grades := make([]int, docs)
		for d := range docs {
			u[d] = rng.NormFloat64()
			for _, cut := range cuts {
				if u[d] > cut {
					grades[d]++
				}
			}
		}
		c.truth[qid] = map[string]int{}
		ids := make([]string, docs)
		gradeOf := make(map[string]int, docs)
		for d := range docs {
			ids[d] = fmt.Sprintf("d%04d", d)
			gradeOf[ids[d]] = grades[d]
		}
		for r, sd := range noise {
			scored := make([]rankeval.ScoredDoc, docs)
			for d := range docs {
				scored[d] = rankeval.ScoredDoc{DocID: ids[d], Score: u[d] + sd*rng.NormFloat64()}
			}
			top := rankeval.Rank(scored)[:depth]
			c.runs[r].Run[qid] = top
			for _, t := range top {
				c.truth[qid][t.DocID] = gradeOf[t.DocID]
			}
		}
	}
	return c
}

// labelsOf grades a plan's choices from the truth, with Combined as Prob.
func labelsOf(truth rankeval.Qrels, chs []Choice, into Labels) Labels {
	if into == nil {
		into = Labels{}
	}
	for _, ch := range chs {
		if into[ch.Query] == nil {
			into[ch.Query] = map[string]Label{}
		}
		into[ch.Query][ch.Doc] = Label{Grade: truth[ch.Query][ch.Doc], Prob: ch.Combined, Stratum: ch.Stratum}
	}
	return into
}

// fullLabels labels every pair of the qrels with probability 1.
func fullLabels(q rankeval.Qrels) Labels {
	l := Labels{}
	for qid, docs := range q {
		l[qid] = map[string]Label{}
		for d, g := range docs {
			l[qid][d] = Label{Grade: g, Prob: 1}
		}
	}
	return l
}

// copyLabels copies labels deeply.
func copyLabels(l Labels) Labels {
	out := make(Labels, len(l))
	for q, docs := range l {
		out[q] = make(map[string]Label, len(docs))
		for d, x := range docs {
			out[q][d] = x
		}
	}
	return out
}
