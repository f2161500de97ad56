package estimate

import (
	"cmp"
	"fmt"
	"hash/fnv"
	"math"
	"math/rand/v2"
	"slices"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/rankeval"
)

// band is a range of best ranks, inclusive.
type band struct{ from, to int }

// strataBands are the strata of a stratified design (Yilmaz, Kanoulas &
// Aslam, SIGIR 2008): ranks 1..depth judged in full, then geometric bands
// depth+1..2·depth, 2·depth+1..4·depth, ... capped at maxDepth.
func strataBands(depth, maxDepth int) []band {
	bs := []band{{1, depth}}
	for lo := depth; lo < maxDepth; lo *= 2 {
		bs = append(bs, band{lo + 1, min(2*lo, maxDepth)})
	}
	return bs
}

func stratumOf(bs []band, rank int) int {
	for s, b := range bs {
		if rank <= b.to {
			return s
		}
	}
	return len(bs) - 1
}

// meanDiscount is the mean of 1/log2(rank+1) over a band's ranks: the prior
// of relevance that sets how densely a stratum is sampled.
func meanDiscount(b band) float64 {
	s := 0.0
	for r := b.from; r <= b.to; r++ {
		s += discount(r)
	}
	return s / float64(b.to-b.from+1)
}

func discount(rank int) float64 { return 1 / math.Log2(float64(rank)+1) }

// candidate is one document of a query's population.
type candidate struct {
	doc  string
	best int // best rank over the runs
	run  int // the first run (input order) that has it at best
}

// queryPool is one query's population and what sampling it costs.
type queryPool struct {
	query  string
	cands  []candidate // by best rank, then document id
	pop    []int       // population per stratum
	exp    []float64   // per stratum: sum of (1 - earlier probability) over pairs not yet certain
	newTop int         // top-stratum pairs not in the project: what the top stratum costs
	rates  []float64   // per stratum; rates[0] = 1
}

// MakePlan applies a depth or stratified design. known holds every pair
// already in the project for these queries (Grade -1 when not graded yet;
// Prob its combined inclusion probability, 1 for pairs judged in full).
// Choices are new pairs and pairs whose combined probability rises. The
// plan is deterministic for a given Seed.
//
// Stratified designs: per query the population is the union of every run's
// top MaxDepth documents, each in the stratum of its best rank over the runs
// (strataBands). The top stratum is judged in full. Deeper pairs are
// sampled independently of each other (Poisson sampling: each pair is drawn
// with its stratum's rate by its own coin). Independence makes the
// probability of a pair offered by several designs exactly
// 1 - prod(1 - p_i) and keeps the variance estimator a plain sum over pairs.
//
// Rates: stratum s of query q gets r = min(1, c·m_s), m_s the mean discount
// 1/log2(rank+1) over the stratum's ranks (deeper ranks are less likely
// relevant, so sampled more thinly), with c the largest constant whose
// expected spend fits the budget left after the top strata: the total
// Budget (one c for every query) and, with PerQuery, each query's own
// (a c_q per query; with both, the smaller). The expected spend of a
// stratum is r times the sum over its pairs not yet certain of
// (1 - earlier probability). Rates thus depend on the population and on
// earlier designs' probabilities only, never on which pairs were drawn or
// their grades, so they are fixed before any coin is thrown.
//
// How Combined is recorded: a pair not in known is drawn now with rate r;
// if drawn, Combined = 1 - (1 - e)(1 - r), e its probability under the
// earlier designs of Design.Earlier (0 when none covers it). A pair in
// known with Prob p < 1 was drawn before, so it is not drawn again and
// needs no new judgment; it is chosen with Combined = 1 - (1 - p)(1 - r),
// the probability that either design took it. Pairs in known with Prob 1
// cost nothing and are counted in Already.
//
// Depth designs judge every pair to Depth with probability 1. Priority is
// depth + 1 - best rank as in pooling (MaxDepth + 1 - best rank for a
// stratified design), so better-ranked pairs are judged first.
func MakePlan(d Design, runs []NamedRun, known Labels) (Plan, error) {
	if err := checkDesign(d); err != nil {
		return Plan{}, err
	}
	var ps Problems
	checkRuns(&ps, runs, nil, true)
	checkKnown(&ps, known)
	for _, o := range d.Earlier {
		if !(o.Rate >= 0 && o.Rate <= 1) || o.FromRank < 1 || o.ToRank < o.FromRank {
			ps.addf("earlier offer for query %q, ranks %d-%d: rate %v; rates lie in [0, 1] over ranks from 1 on", o.Query, o.FromRank, o.ToRank, o.Rate)
		}
	}
	if err := ps.err(); err != nil {
		return Plan{}, err
	}

	maxDepth := d.MaxDepth
	bands := strataBands(d.Depth, maxDepth)
	if d.Kind == KindDepth {
		maxDepth = d.Depth
		bands = bands[:1]
	}
	earlier := map[string][]Offer{}
	for _, o := range d.Earlier {
		earlier[o.Query] = append(earlier[o.Query], o)
	}

	pools, notOffered := buildPools(runs, known, earlier, bands, maxDepth)
	plan := Plan{Design: d}
	if notOffered > 0 {
		plan.Notes = append(plan.Notes, fmt.Sprintf("%d queries have pairs sampled before, but no earlier offers were given for them: pairs those designs could have drawn and did not are taken as never offered, which overweights the pairs drawn now; pass the earlier plans' offers", notOffered))
	}
	if err := checkTopBudget(d, pools); err != nil {
		return Plan{}, err
	}
	if d.Kind == KindStratified {
		allocate(d, pools, bands)
	} else {
		for _, p := range pools {
			p.rates = []float64{1}
		}
	}
	plan.Strata = summarise(pools, bands)
	if d.Kind == KindStratified {
		full := true
		for _, s := range plan.Strata {
			full = full && s.Rate == 1
		}
		if full {
			plan.Notes = append(plan.Notes, fmt.Sprintf("The budget covers every pair to rank %d: all are judged in full.", maxDepth))
		}
	}

	for _, p := range pools {
		draw(&plan, d, runs, known[p.query], earlier[p.query], p, bands)
	}
	return plan, nil
}

func checkDesign(d Design) error {
	switch d.Kind {
	case KindDepth, KindStratified:
	case KindDecide, KindFind:
		return pertinent.Errorf(pertinent.Invalid, "", "a %s design chooses pairs as grades come back; use PlanDecide or PlanFind for it", d.Kind)
	default:
		return pertinent.Errorf(pertinent.Invalid, "", "unknown design %q; use depth or stratified here, PlanDecide or PlanFind for the adaptive ones", d.Kind)
	}
	var ps Problems
	if d.Depth < 1 {
		ps.addf("depth %d: set the depth (ranks judged in full) to at least 1", d.Depth)
	}
	if d.Budget < 0 || d.PerQuery < 0 {
		ps.addf("budget %d, per query %d: budgets cannot be negative (0 means no limit)", d.Budget, d.PerQuery)
	}
	if d.Kind == KindStratified {
		if d.MaxDepth <= d.Depth {
			ps.addf("max depth %d: set the deepest rank to sample above the depth %d", d.MaxDepth, d.Depth)
		}
		if d.Budget == 0 && d.PerQuery == 0 {
			ps.addf("a stratified design needs a budget: set the total budget or the budget per query")
		}
	}
	return ps.err()
}

func checkKnown(ps *Problems, known Labels) {
	qs := sortedKeys(known)
	for _, q := range qs {
		docs := known[q]
		for _, doc := range sortedKeys(docs) {
			if p := docs[doc].Prob; !(p > 0 && p <= 1) {
				ps.addf("query %q, document %q: probability %v; probabilities lie in (0, 1]", q, doc, p)
			}
		}
	}
}

func sortedKeys[V any](m map[string]V) []string {
	ks := make([]string, 0, len(m))
	for k := range m {
		ks = append(ks, k)
	}
	slices.Sort(ks)
	return ks
}

// earlierProb is the probability that earlier designs drew a pair of best
// rank r that is not in the project.
func earlierProb(offers []Offer, r int) float64 {
	miss := 1.0
	for _, o := range offers {
		if r >= o.FromRank && r <= o.ToRank {
			miss *= 1 - o.Rate
		}
	}
	return 1 - miss
}

// buildPools gathers each query's population; notOffered counts queries
// with pairs sampled before (0 < Prob < 1) but no earlier offers.
func buildPools(runs []NamedRun, known Labels, earlier map[string][]Offer, bands []band, maxDepth int) ([]*queryPool, int) {
	qset := map[string]struct{}{}
	for _, r := range runs {
		for q := range r.Run {
			qset[q] = struct{}{}
		}
	}
	queries := sortedKeys(qset)
	pools := make([]*queryPool, 0, len(queries))
	index := map[string]int{}
	notOffered := 0
	for _, q := range queries {
		clear(index)
		p := &queryPool{query: q, pop: make([]int, len(bands)), exp: make([]float64, len(bands))}
		for ri, r := range runs {
			docs, ok := r.Run[q]
			if !ok {
				continue
			}
			ranked := rankeval.Rank(docs)
			for i, sd := range ranked[:min(len(ranked), maxDepth)] {
				if at, ok := index[sd.DocID]; ok {
					if i+1 < p.cands[at].best {
						p.cands[at].best, p.cands[at].run = i+1, ri
					}
					continue
				}
				index[sd.DocID] = len(p.cands)
				p.cands = append(p.cands, candidate{doc: sd.DocID, best: i + 1, run: ri})
			}
		}
		slices.SortFunc(p.cands, func(a, b candidate) int {
			if c := cmp.Compare(a.best, b.best); c != 0 {
				return c
			}
			return cmp.Compare(a.doc, b.doc)
		})
		kq := known[q]
		sampledBefore := false
		for _, c := range p.cands {
			s := stratumOf(bands, c.best)
			p.pop[s]++
			before := 0.0
			if l, ok := kq[c.doc]; ok {
				before = l.Prob
				sampledBefore = sampledBefore || l.Prob < 1
			} else {
				before = earlierProb(earlier[q], c.best)
				if s == 0 {
					p.newTop++
				}
			}
			if before < 1 {
				p.exp[s] += 1 - before
			}
		}
		if sampledBefore && len(earlier[q]) == 0 {
			notOffered++
		}
		pools = append(pools, p)
	}
	return pools, notOffered
}

func checkTopBudget(d Design, pools []*queryPool) error {
	what := fmt.Sprintf("the top stratum (ranks 1-%d of every run)", d.Depth)
	if d.Kind == KindDepth {
		what = fmt.Sprintf("the depth-%d pool", d.Depth)
	}
	var ps Problems
	if d.PerQuery > 0 {
		for _, p := range pools {
			if p.newTop > d.PerQuery {
				ps.addf("query %q: %s needs %d judgments and the budget per query is %d; raise the budget or lower the depth", p.query, what, p.newTop, d.PerQuery)
			}
		}
	}
	if d.Budget > 0 {
		n := 0
		for _, p := range pools {
			n += p.newTop
		}
		if n > d.Budget {
			ps.addf("%s needs %d judgments and the budget is %d; raise the budget or lower the depth", what, n, d.Budget)
		}
	}
	return ps.err()
}

// allocate sets every query's stratum rates (see MakePlan).
func allocate(d Design, pools []*queryPool, bands []band) {
	m := make([]float64, len(bands))
	minM := math.Inf(1)
	for s := 1; s < len(bands); s++ {
		m[s] = meanDiscount(bands[s])
		minM = min(minM, m[s])
	}
	cmax := 1 / minM // every rate 1
	spend := func(p *queryPool, c float64) float64 {
		t := 0.0
		for s := 1; s < len(bands); s++ {
			t += min(1, c*m[s]) * p.exp[s]
		}
		return t
	}
	// The expected cost of the top stratum, not its count of new pairs,
	// comes off the budget: the count depends on earlier draws.
	topExp := func(p *queryPool) float64 { return p.exp[0] }

	caps := make([]float64, len(pools))
	for i, p := range pools {
		caps[i] = cmax
		if d.PerQuery > 0 {
			left := max(0, float64(d.PerQuery)-topExp(p))
			caps[i] = solve(func(c float64) float64 { return spend(p, c) }, left, cmax)
		}
	}
	c := cmax
	if d.Budget > 0 {
		left := float64(d.Budget)
		for _, p := range pools {
			left -= topExp(p)
		}
		c = solve(func(c float64) float64 {
			t := 0.0
			for i, p := range pools {
				t += spend(p, min(c, caps[i]))
			}
			return t
		}, max(0, left), cmax)
	}
	for i, p := range pools {
		p.rates = make([]float64, len(bands))
		p.rates[0] = 1
		ci := min(c, caps[i])
		for s := 1; s < len(bands); s++ {
			p.rates[s] = min(1, ci*m[s])
		}
	}
}

// solve returns the largest c in [0, cmax] with f(c) <= target, for f
// non-decreasing (bisection; f is piecewise linear).
func solve(f func(float64) float64, target, cmax float64) float64 {
	if f(cmax) <= target {
		return cmax
	}
	lo, hi := 0.0, cmax
	for range 100 {
		mid := (lo + hi) / 2
		if f(mid) <= target {
			lo = mid
		} else {
			hi = mid
		}
	}
	return lo
}

func summarise(pools []*queryPool, bands []band) []Stratum {
	out := make([]Stratum, len(bands))
	exps := make([]float64, len(bands))
	for s, b := range bands {
		out[s] = Stratum{Index: s, FromRank: b.from, ToRank: b.to}
	}
	for _, p := range pools {
		for s := range bands {
			out[s].Pairs += p.pop[s]
			exps[s] += p.exp[s]
			if s == 0 {
				out[s].Expected += float64(p.newTop)
			} else {
				out[s].Expected += p.rates[s] * p.exp[s]
			}
		}
	}
	for s := range out {
		switch {
		case s == 0:
			out[s].Rate = 1
		case exps[s] > 0:
			// The pair-weighted mean: the one rate when only a total budget applies.
			out[s].Rate = out[s].Expected / exps[s]
		default:
			for _, p := range pools {
				out[s].Rate = max(out[s].Rate, p.rates[s])
			}
		}
	}
	return out
}

// stream gives each query its own random stream, so a query's draws do not
// depend on the other queries; the known pairs are mixed in so that a later
// design over the same query draws afresh even with the same seed.
func stream(seed uint64, query string, known map[string]Label) *rand.Rand {
	h := fnv.New64a()
	h.Write([]byte(query))
	k := uint64(len(known)) * 0x9e3779b97f4a7c15
	return rand.New(rand.NewPCG(seed, h.Sum64()^k))
}

func draw(plan *Plan, d Design, runs []NamedRun, kq map[string]Label, offers []Offer, p *queryPool, bands []band) {
	rng := stream(d.Seed, p.query, kq)
	depth := d.Depth
	if d.Kind == KindStratified {
		depth = d.MaxDepth
	}
	for s := 1; s < len(bands); s++ {
		if r := p.rates[s]; r > 0 && r < 1 {
			plan.Offers = append(plan.Offers, Offer{Query: p.query, FromRank: bands[s].from, ToRank: bands[s].to, Rate: r})
		}
	}
	for _, c := range p.cands {
		s := stratumOf(bands, c.best)
		r := p.rates[s]
		l, isKnown := kq[c.doc]
		var u float64
		if s > 0 {
			u = rng.Float64() // drawn for every deeper pair, so streams stay aligned
		}
		if isKnown {
			plan.Already++
			if l.Prob >= 1 || r == 0 {
				continue
			}
		} else if s > 0 && u >= r {
			continue
		}
		before := l.Prob
		if !isKnown {
			before = earlierProb(offers, c.best)
		}
		ch := Choice{Query: p.query, Doc: c.doc, Stratum: s, Prob: r, Priority: depth + 1 - c.best}
		ch.Combined = before + (1-before)*r // 1 - (1-before)(1-r), exact when before is 0
		switch {
		case d.Kind == KindDepth:
			ch.Reason = fmt.Sprintf("rank %d in %s, in the depth-%d pool", c.best, runs[c.run].Name, d.Depth)
		case s == 0:
			ch.Reason = fmt.Sprintf("rank %d in %s, judged in full", c.best, runs[c.run].Name)
		default:
			ch.Reason = fmt.Sprintf("ranks %d-%d, sampled at rate %.3g", bands[s].from, bands[s].to, r)
		}
		if isKnown {
			if ch.Combined >= 1 {
				ch.Reason += "; chosen before, now certain"
			} else {
				ch.Reason += fmt.Sprintf("; chosen before, probability now %.3g", ch.Combined)
			}
		}
		plan.Choices = append(plan.Choices, ch)
	}
}
