package estimate

import (
	"cmp"
	"fmt"
	"math"
	"slices"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/rankeval"
)

// maxProblems is how many problems an error lists before counting the rest.
const maxProblems = 20

// Problems is the error of invalid input: every problem found, each saying
// what to change. List holds the first ones; More counts the rest.
type Problems struct {
	List []string `json:"list"`
	More int      `json:"more"`
}

func (p *Problems) Error() string {
	lines := slices.Clone(p.List)
	if p.More > 0 {
		lines = append(lines, fmt.Sprintf("and %d more", p.More))
	}
	return strings.Join(lines, "\n")
}

func (p *Problems) addf(format string, args ...any) {
	if len(p.List) < maxProblems {
		p.List = append(p.List, fmt.Sprintf(format, args...))
		return
	}
	p.More++
}

// err is the problems as the one error type users are shown, or nil when there are none.
func (p *Problems) err() error {
	if len(p.List) == 0 {
		return nil
	}
	return &pertinent.Error{Code: pertinent.Invalid, Message: p.Error()}
}

// CheckRuns validates runs for planning: at least one run, distinct names,
// no document twice within one run and query, finite scores, and no ties in
// score within a run's query unless breakTies (then ties are ordered by
// rankeval.Rank, by document id). Queries a run has that are not in queries
// are problems too; a nil queries accepts every query. Every problem is
// reported at once.
func CheckRuns(runs []NamedRun, queries map[string]bool, breakTies bool) error {
	var ps Problems
	checkRuns(&ps, runs, queries, breakTies)
	return ps.err()
}

func checkRuns(ps *Problems, runs []NamedRun, queries map[string]bool, breakTies bool) {
	if len(runs) == 0 {
		ps.addf("no runs given; add at least one run")
		return
	}
	names := make(map[string]int, len(runs))
	for i, r := range runs {
		if r.Name == "" {
			ps.addf("run %d has no name; give every run a name", i+1)
			continue
		}
		names[r.Name]++
		if names[r.Name] == 2 {
			ps.addf("two runs are named %q; give each run its own name", r.Name)
		}
	}
	seen := map[string]int{}
	for _, r := range runs {
		qids := make([]string, 0, len(r.Run))
		for q := range r.Run {
			qids = append(qids, q)
		}
		slices.Sort(qids)
		for _, q := range qids {
			if queries != nil && !queries[q] {
				ps.addf("run %q has query %q, which is not among the project's queries; remove it from the run or add the query to the project", r.Name, q)
				continue
			}
			docs := r.Run[q]
			clear(seen)
			var dups []string
			for _, d := range docs {
				seen[d.DocID]++
				if seen[d.DocID] == 2 {
					dups = append(dups, d.DocID)
				}
				if math.IsNaN(d.Score) || math.IsInf(d.Score, 0) {
					ps.addf("run %q, query %q: document %q has score %v; give it a finite score", r.Name, q, d.DocID, d.Score)
				}
			}
			slices.Sort(dups)
			for _, d := range dups {
				ps.addf("run %q, query %q: document %q appears %d times; keep it once", r.Name, q, d, seen[d])
			}
			if !breakTies {
				reportTies(ps, r.Name, q, docs)
			}
		}
	}
}

// reportTies names each group of documents sharing a score, best score first.
func reportTies(ps *Problems, run, query string, docs []rankeval.ScoredDoc) {
	ranked := rankeval.Rank(docs)
	for i := 0; i < len(ranked); {
		j := i + 1
		for j < len(ranked) && ranked[j].Score == ranked[i].Score {
			j++
		}
		if j-i > 1 && !math.IsNaN(ranked[i].Score) {
			ids := make([]string, 0, j-i)
			for _, d := range ranked[i:j] {
				ids = append(ids, strconv.Quote(d.DocID))
			}
			slices.SortFunc(ids, cmp.Compare)
			ids = slices.Compact(ids)
			if len(ids) > 1 {
				ps.addf("run %q, query %q: documents %s have the same score %s; give distinct scores, or tick \"break ties by document id\"",
					run, query, joinAnd(ids), strconv.FormatFloat(ranked[i].Score, 'g', -1, 64))
			}
		}
		i = j
	}
}

// joinAnd writes `a`, `a and b`, `a, b and c`.
func joinAnd(xs []string) string {
	if len(xs) <= 1 {
		return strings.Join(xs, "")
	}
	return strings.Join(xs[:len(xs)-1], ", ") + " and " + xs[len(xs)-1]
}
