package estimate

import (
	"fmt"
	"hash/fnv"
	"math"
	"slices"
	"strings"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/rankeval"
)

// adaptiveDefaultWave is how many pairs an adaptive design releases per call when
// the design does not say.
const adaptiveDefaultWave = 20

// adaptiveWave returns the wave size of d, or an error for a negative one.
func adaptiveWave(d Design) (int, error) {
	switch {
	case d.Wave < 0:
		return 0, pertinent.Errorf(pertinent.Invalid, "estimate", "wave %d is negative", d.Wave)
	case d.Wave == 0:
		return adaptiveDefaultWave, nil
	}
	return d.Wave, nil
}

// adaptiveRunIndex finds a run by name.
func adaptiveRunIndex(runs []NamedRun, name string) int {
	return slices.IndexFunc(runs, func(r NamedRun) bool { return r.Name == name })
}

// adaptiveRunList names the runs for an error message.
func adaptiveRunList(runs []NamedRun) string {
	names := make([]string, len(runs))
	for i, r := range runs {
		names[i] = fmt.Sprintf("%q", r.Name)
	}
	if len(names) == 0 {
		return "none"
	}
	return strings.Join(names, ", ")
}

// adaptiveCheckRunNames refuses unnamed and repeated runs, which would make the
// choices' reasons ambiguous.
func adaptiveCheckRunNames(runs []NamedRun) error {
	seen := make(map[string]bool, len(runs))
	for _, r := range runs {
		if r.Name == "" {
			return pertinent.Errorf(pertinent.Invalid, "estimate", "a run has no name")
		}
		if seen[r.Name] {
			return pertinent.Errorf(pertinent.Invalid, "estimate", "two runs are named %q", r.Name)
		}
		seen[r.Name] = true
	}
	return nil
}

// adaptiveRanked returns the document ids of one query of a run in
// rankeval.Rank order, refusing what rankeval refuses (a repeated
// document, a NaN score).
func adaptiveRanked(run NamedRun, qid string) ([]string, error) {
	ranked := rankeval.Rank(run.Run[qid])
	ids := make([]string, len(ranked))
	seen := make(map[string]bool, len(ranked))
	for i, d := range ranked {
		if math.IsNaN(d.Score) {
			return nil, pertinent.Errorf(pertinent.Invalid, "estimate", "run %q query %q document %q: score is NaN", run.Name, qid, d.DocID)
		}
		if seen[d.DocID] {
			return nil, pertinent.Errorf(pertinent.Invalid, "estimate", "run %q query %q: document %q retrieved twice", run.Name, qid, d.DocID)
		}
		seen[d.DocID] = true
		ids[i] = d.DocID
	}
	return ids, nil
}

// adaptiveGains returns the gain of each grade 0..maxGrade, as rankeval computes
// it.
func adaptiveGains(g rankeval.Gain, maxGrade int) ([]float64, error) {
	if g != rankeval.GainExponential && g != rankeval.GainLinear {
		return nil, pertinent.Errorf(pertinent.Invalid, "estimate", "unknown gain %d", int(g))
	}
	if maxGrade < 1 {
		return nil, pertinent.Errorf(pertinent.Invalid, "estimate", "top grade %d; a scale needs at least grades 0 and 1", maxGrade)
	}
	out := make([]float64, maxGrade+1)
	for i := range out {
		if g == rankeval.GainLinear {
			out[i] = float64(i)
		} else {
			out[i] = math.Exp2(float64(i)) - 1
		}
	}
	return out, nil
}

// adaptiveDiscount is 1/log2(rank+1), rank from 1, as in rankeval.
func adaptiveDiscount(rank int) float64 { return 1 / math.Log2(float64(rank)+1) }

// adaptiveCheckKnown refuses grades off the scale; -1 marks a pair chosen but not
// graded yet.
func adaptiveCheckKnown(known Labels, maxGrade int) error {
	for q, docs := range known {
		for doc, l := range docs {
			if l.Grade < -1 || l.Grade > maxGrade {
				return pertinent.Errorf(pertinent.Invalid, "estimate", "query %q document %q: grade %d outside -1..%d", q, doc, l.Grade, maxGrade)
			}
		}
	}
	return nil
}

// adaptiveLabel returns the label of a pair and whether the pair is known.
func adaptiveLabel(known Labels, q, doc string) (Label, bool) {
	l, ok := known[q][doc]
	return l, ok
}

// adaptiveQuerySeed mixes a design's seed with a query id, so that each query's
// random choices stay the same whatever other queries there are.
func adaptiveQuerySeed(q string) uint64 {
	h := fnv.New64a()
	h.Write([]byte(q))
	return h.Sum64()
}

// adaptiveQueries returns the sorted ids of the queries of the given runs.
func adaptiveQueries(runs ...NamedRun) []string {
	set := map[string]bool{}
	for _, r := range runs {
		for q := range r.Run {
			set[q] = true
		}
	}
	out := make([]string, 0, len(set))
	for q := range set {
		out = append(out, q)
	}
	slices.Sort(out)
	return out
}
