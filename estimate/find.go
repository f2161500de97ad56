package estimate

import (
	"cmp"
	"fmt"
	"math/rand/v2"
	"slices"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/pertinent/pertinent"
)

// PlanFind returns the next wave for a find design: the documents most
// likely to be relevant, with grade >= threshold counting as relevant (a
// find). Per query it runs one of two methods over the runs' rankings
// (to d.Depth when set, else in full):
//
//   - FindMoveToFront (Cormack, Palmer & Clarke, SIGIR 1998): the runs
//     stand in a priority list, first in the order given; the run at the
//     front gives its next document not yet seen; a non-relevant one sends
//     it to the back, a relevant one keeps it in front.
//   - FindBandit (Losada, Parapar & Barreiro, IPM 2017): the runs are arms;
//     each pull draws from Beta(1 + relevant, 1 + non-relevant) of every
//     run's graded documents in its ranking so far (Thompson sampling,
//     repeatable through d.Seed) and takes the next unjudged document of
//     the run with the highest draw.
//
// What is known replays the method: graded pairs as they come in each
// run's ranking. Pairs without a grade yet (Grade -1, and those chosen
// earlier in the same wave) are skipped as not known, so a wave is a
// simulation that expects nothing of them. The wave goes round the
// queries one pair at a time, those with the fewest pairs released so far
// first (ties by id), so several assessors have work. Choices are not a
// probability sample: Stratum -1, Prob 1.
func PlanFind(d Design, runs []NamedRun, known Labels, threshold int) (Plan, error) {
	if d.Kind != "" && d.Kind != KindFind {
		return Plan{}, pertinent.Errorf(pertinent.Invalid, "estimate", "a %q design does not find documents; use kind %q", d.Kind, KindFind)
	}
	d.Kind = KindFind
	if d.Method != FindBandit && d.Method != FindMoveToFront {
		return Plan{}, pertinent.Errorf(pertinent.Invalid, "estimate", "unknown find method %q (%q or %q)", d.Method, FindBandit, FindMoveToFront)
	}
	if threshold < 1 {
		return Plan{}, pertinent.Errorf(pertinent.Invalid, "estimate", "relevance threshold %d; grades start at 0 (not relevant), so it must be at least 1", threshold)
	}
	if d.Depth < 0 {
		return Plan{}, pertinent.Errorf(pertinent.Invalid, "estimate", "depth %d is negative", d.Depth)
	}
	if len(runs) == 0 {
		return Plan{}, pertinent.Errorf(pertinent.Invalid, "estimate", "a find design needs at least one run")
	}
	if err := adaptiveCheckRunNames(runs); err != nil {
		return Plan{}, err
	}
	wave, err := adaptiveWave(d)
	if err != nil {
		return Plan{}, err
	}
	d.Wave = wave
	plan := Plan{Design: d}

	var finders []*finder
	for _, q := range adaptiveQueries(runs...) {
		f, err := newFinder(d, runs, known, q, threshold)
		if err != nil {
			return Plan{}, err
		}
		plan.Already += f.released
		finders = append(finders, f)
	}
	slices.SortStableFunc(finders, func(a, b *finder) int { return cmp.Compare(a.released, b.released) })
	for len(plan.Choices) < wave && len(finders) > 0 {
		live := finders[:0]
		for _, f := range finders {
			if len(plan.Choices) == wave {
				live = append(live, f)
				continue
			}
			c, ok := f.next()
			if !ok {
				continue
			}
			plan.Choices = append(plan.Choices, c)
			live = append(live, f)
		}
		finders = live
	}
	for i := range plan.Choices {
		plan.Choices[i].Priority = len(plan.Choices) - i
	}
	if len(plan.Choices) < wave {
		plan.Notes = append(plan.Notes, fmt.Sprintf("Only %d pairs were left to release; every document of the runs is judged or waiting for a grade.", len(plan.Choices)))
	}
	return plan, nil
}

// finder runs one query's method. A document's state is graded (its
// grade), pending (chosen, no grade yet), or open.
type finder struct {
	method    string
	query     string
	names     []string
	ranks     [][]string // each run's ranking of the query
	grade     map[string]int
	pending   map[string]bool
	threshold int
	released  int // pairs of the query already known (graded or pending)

	// Per run: position in its ranking, and the graded documents passed.
	ptr      []int
	rel, non []int
	order    []int           // move-to-front: runs, front first
	seen     map[string]bool // move-to-front: documents already taken by some run
	rng      *rand.Rand      // bandit
}

func newFinder(d Design, runs []NamedRun, known Labels, q string, threshold int) (*finder, error) {
	f := &finder{
		method: d.Method, query: q, threshold: threshold,
		grade: map[string]int{}, pending: map[string]bool{}, seen: map[string]bool{},
		rng: rand.New(rand.NewPCG(d.Seed, adaptiveQuerySeed(q))),
	}
	inRuns := map[string]bool{}
	for _, r := range runs {
		if _, ok := r.Run[q]; !ok {
			continue
		}
		ids, err := adaptiveRanked(r, q)
		if err != nil {
			return nil, err
		}
		if d.Depth > 0 && len(ids) > d.Depth {
			ids = ids[:d.Depth]
		}
		for _, doc := range ids {
			inRuns[doc] = true
		}
		f.order = append(f.order, len(f.names))
		f.names = append(f.names, r.Name)
		f.ranks = append(f.ranks, ids)
	}
	f.ptr = make([]int, len(f.names))
	f.rel = make([]int, len(f.names))
	f.non = make([]int, len(f.names))
	for doc, l := range known[q] {
		switch {
		case l.Grade >= 0:
			f.grade[doc] = l.Grade
		default:
			f.pending[doc] = true
		}
		if inRuns[doc] {
			f.released++
		}
	}
	return f, nil
}

// step moves run r past its next document, counting it if graded.
func (f *finder) step(r int) string {
	doc := f.ranks[r][f.ptr[r]]
	f.ptr[r]++
	if g, ok := f.grade[doc]; ok {
		if g >= f.threshold {
			f.rel[r]++
		} else {
			f.non[r]++
		}
	}
	return doc
}

// next returns the query's next choice, or false when every document of
// the runs is graded or pending.
func (f *finder) next() (Choice, bool) {
	var r int
	var doc string
	var ok bool
	if f.method == FindMoveToFront {
		r, doc, ok = f.nextMoveToFront()
	} else {
		r, doc, ok = f.nextBandit()
	}
	if !ok {
		return Choice{}, false
	}
	f.pending[doc] = true
	return Choice{
		Query: f.query, Doc: doc, Stratum: -1, Prob: 1, Combined: 1,
		Reason: fmt.Sprintf("next of run %s for query %s (%s)", f.names[r], f.query, f.record(r)),
	}, true
}

// record says what a run has found so far.
func (f *finder) record(r int) string {
	n := f.rel[r] + f.non[r]
	if n == 0 {
		return fmt.Sprintf("run %s has no judged documents yet", f.names[r])
	}
	return fmt.Sprintf("run %s found %d relevant of %d so far", f.names[r], f.rel[r], n)
}

// nextMoveToFront replays and extends the priority list: the front run
// takes its next document no run has taken; a graded one is feedback
// (non-relevant: to the back), a pending one is passed over, an open one
// is the choice and the run stays in front.
func (f *finder) nextMoveToFront() (int, string, bool) {
	for len(f.order) > 0 {
		r := f.order[0]
		if f.ptr[r] == len(f.ranks[r]) {
			f.order = f.order[1:]
			continue
		}
		doc := f.step(r)
		if f.seen[doc] {
			continue
		}
		f.seen[doc] = true
		if g, ok := f.grade[doc]; ok {
			if g < f.threshold {
				f.order = append(f.order[1:], r)
			}
			continue
		}
		if f.pending[doc] {
			continue
		}
		return r, doc, true
	}
	return 0, "", false
}

// nextBandit moves every run past its graded and pending documents, then
// pulls the arm with the highest Beta draw (ties: the run given first).
func (f *finder) nextBandit() (int, string, bool) {
	best, bestDraw := -1, -1.0
	for r := range f.ranks {
		for f.ptr[r] < len(f.ranks[r]) {
			doc := f.ranks[r][f.ptr[r]]
			if _, graded := f.grade[doc]; !graded && !f.pending[doc] {
				break
			}
			f.step(r)
		}
		if f.ptr[r] == len(f.ranks[r]) {
			continue
		}
		beta := distuv.Beta{Alpha: float64(1 + f.rel[r]), Beta: float64(1 + f.non[r]), Src: f.rng}
		if v := beta.Rand(); v > bestDraw {
			best, bestDraw = r, v
		}
	}
	if best < 0 {
		return 0, "", false
	}
	return best, f.ranks[best][f.ptr[best]], true
}
