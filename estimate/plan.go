package estimate

import (
	"cmp"
	"fmt"
	"math"
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
	exp    []float64   // per stratum: pairs not in the project, each of which costs its rate at most
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
// (strataBands). The top stratum is judged in full. A deeper pair is drawn
// iff its permanent random number u = prn(Seed, query, document), uniform
// on [0, 1), lies below its stratum's rate r: Poisson sampling (each pair
// drawn independently, with probability r) whose numbers are fixed per
// pair, not per design (sample coordination with permanent random numbers:
// Ohlsson, "Coordination of samples using permanent random numbers", in
// Business Survey Methods, Wiley 1995). With one Seed per project, a later
// design at rate r2 >= r1 takes every pair an earlier one took (u < r1
// implies u < r2), and over any sequence of designs a pair is in the
// project iff u < max of the rates offered to it: its inclusion
// probability is exactly that maximum, whatever the designs and runs were,
// and no record of earlier offers is needed. Pairs stay independent, so the
// estimators' variance is a plain sum over pairs.
//
// Rates: stratum s of query q gets r = min(1, c·m_s), m_s the mean discount
// 1/log2(rank+1) over the stratum's ranks (deeper ranks are less likely
// relevant, so sampled more thinly), with c the largest constant whose
// expected spend fits the budget left after the top strata: the total
// Budget (one c for every query) and, with PerQuery, each query's own
// (a c_q per query; with both, the smaller). A pair not in known is
// counted at r, a pair in known at nothing (it is in the project already).
// That is conservative: a pair an earlier design offered at e and did not
// draw has u >= e, so it is drawn now with probability (r-e)/(1-e) <= r.
// Rates depend on the population and on how many pairs of each stratum are
// in the project, never on grades; one pair's earlier draw moves its
// stratum's count by one, a negligible change in r.
//
// How Combined is recorded: Combined = max(before, r), before the pair's
// Prob in known (0 when not known). A pair not in known is drawn iff u < r
// and chosen with Combined r. A pair in known with Prob p < 1 (drawn
// before, so u < p) needs no new judgment; it is chosen with Prob and
// Combined r only when r > p, else left alone. Pairs in known with Prob 1
// cost nothing and are counted in Already, as are the other known pairs.
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
	if err := ps.err(); err != nil {
		return Plan{}, err
	}

	maxDepth := d.MaxDepth
	bands := strataBands(d.Depth, maxDepth)
	if d.Kind == KindDepth {
		maxDepth = d.Depth
		bands = bands[:1]
	}

	pools := buildPools(runs, known, bands, maxDepth)
	plan := Plan{Design: d}
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
		draw(&plan, d, runs, known[p.query], p, bands)
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

// buildPools gathers each query's population.
func buildPools(runs []NamedRun, known Labels, bands []band, maxDepth int) []*queryPool {
	qset := map[string]struct{}{}
	for _, r := range runs {
		for q := range r.Run {
			qset[q] = struct{}{}
		}
	}
	queries := sortedKeys(qset)
	pools := make([]*queryPool, 0, len(queries))
	index := map[string]int{}
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
		for _, c := range p.cands {
			s := stratumOf(bands, c.best)
			p.pop[s]++
			if _, ok := kq[c.doc]; !ok {
				p.exp[s]++
				if s == 0 {
					p.newTop++
				}
			}
		}
		pools = append(pools, p)
	}
	return pools
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

// prn is a pair's permanent random number: FNV-1a 64 of the seed, query
// and document (NUL-separated, so no two pairs share an input), finished
// with splitmix64's mixer (Steele, Lea & Flood, OOPSLA 2014) so that every
// bit depends on every input byte, then its top 53 bits as a uniform float
// in [0, 1).
func prn(seed uint64, query, doc string) float64 {
	return float64(pairHash(seed, query, doc)>>11) / (1 << 53)
}

func pairHash(seed uint64, query, doc string) uint64 {
	const prime = 1099511628211
	h := uint64(14695981039346656037)
	for i := range 8 {
		h = (h ^ (seed >> (8 * i) & 0xff)) * prime
	}
	for i := 0; i < len(query); i++ {
		h = (h ^ uint64(query[i])) * prime
	}
	h *= prime // the NUL between query and document
	for i := 0; i < len(doc); i++ {
		h = (h ^ uint64(doc[i])) * prime
	}
	return mix64(h)
}

// mix64 is splitmix64's finaliser.
func mix64(z uint64) uint64 {
	z = (z ^ z>>30) * 0xbf58476d1ce4e5b9
	z = (z ^ z>>27) * 0x94d049bb133111eb
	return z ^ z>>31
}

func draw(plan *Plan, d Design, runs []NamedRun, kq map[string]Label, p *queryPool, bands []band) {
	depth := d.Depth
	if d.Kind == KindStratified {
		depth = d.MaxDepth
	}
	for _, c := range p.cands {
		s := stratumOf(bands, c.best)
		r := p.rates[s]
		l, isKnown := kq[c.doc]
		if isKnown {
			plan.Already++
			if r <= l.Prob {
				continue // as likely as before, or more: nothing changes
			}
		} else if s > 0 && prn(d.Seed, p.query, c.doc) >= r {
			continue
		}
		ch := Choice{Query: p.query, Doc: c.doc, Stratum: s, Prob: r, Combined: r, Priority: depth + 1 - c.best}
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
