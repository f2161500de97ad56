package estimate

import (
	"cmp"
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/rankeval"
)

// DecideDraws is the number of Monte Carlo draws of the unjudged grades
// behind a Decision (with a fixed seed, so the same labels always give the
// same decision).
const DecideDraws = 2000

// Decision says whether the judgments so far settle which of two runs has
// the higher mean NDCG@K.
//
// The model of unjudged grades: every pair in either run's top K without a
// final grade (including pairs chosen but not graded yet) gets a grade
// drawn independently from the distribution of the graded documents of the
// two runs at similar ranks — rank bands 1-3, 4-10 and 11 and deeper, by
// the document's best rank in either run — smoothed with one pseudo-count
// per grade (a Dirichlet(1, ..., 1) prior), pooled over queries. Unjudged
// documents outside both top Ks count as not relevant, as in rankeval.
// Diff, Low, High and ProbBBeatsA come from DecideDraws draws of that
// model; each draw's ideal DCG of a query uses its graded documents
// (inside the runs' top K or not) plus the drawn grades, and queries whose
// ideal DCG is 0 in a draw are left out of that draw's mean, as rankeval
// leaves them out.
//
// Certain is a sufficient condition, exact but conservative for NDCG: for
// each query the largest and smallest DCG difference (each unjudged
// document at the top grade or at 0, by the sign of its weight) is divided
// by the ideal DCG least favourable to the bound (smallest when the
// difference has the bound's sign, largest otherwise; a query that could
// have no relevant document at all may also contribute 0), and the sign is
// certain when the sum of these bounds over queries keeps one sign. It
// treats a query's DCG difference and its ideal DCG as free of each other,
// so it can miss a sign that is in fact certain, never the reverse. With
// nothing unjudged it is always true.
type Decision struct {
	A string `json:"a"`
	B string `json:"b"`
	K int    `json:"k"`
	// Diff is the expected mean NDCG@K(B) - NDCG@K(A) over the queries
	// under the model.
	Diff float64 `json:"diff"`
	// Low and High bound the central interval at the design's confidence
	// of that difference under the model.
	Low  float64 `json:"low"`
	High float64 `json:"high"`
	// ProbBBeatsA is P(mean difference > 0) under the model.
	ProbBBeatsA float64 `json:"prob_b_beats_a"`
	// Settled: ProbBBeatsA >= Confidence, or P(mean difference < 0) >=
	// Confidence (draws with no difference at all count for neither run),
	// or Certain.
	Settled bool `json:"settled"`
	// Certain: no assignment of the unjudged grades could change the sign.
	Certain bool `json:"certain"`
	// Unjudged counts pairs in either run's top K without a final grade;
	// Pending those of them already chosen and waiting for a grade; Judged
	// the pairs in either run's top K with one.
	Unjudged int `json:"unjudged"`
	Pending  int `json:"pending"`
	Judged   int `json:"judged"`
	// Draws is the number of Monte Carlo draws behind the figures (1 when
	// nothing is unjudged: the figures are then exact).
	Draws int `json:"draws"`
	// More estimates how many further judgments, beyond the pending ones,
	// would settle the sign if the difference stayed where it is expected
	// now (0 when settled).
	More int `json:"more"`
	// Text says the outcome in plain words.
	Text string `json:"text"`
}

// decideDoc is one document of the union of the two runs' top Ks.
type decideDoc struct {
	id           string
	rankA, rankB int     // 0: not in that run's top K
	w            float64 // disc_B(rank) - disc_A(rank)
	band         int
	grade        int // -1: no final grade
	known        bool
}

// decideQuery is what one query brings to a decision.
type decideQuery struct {
	id string
	// hist counts the query's graded documents by grade, whether or not
	// either run has them in its top K.
	hist []int
	// diff is DCG@K(B) - DCG@K(A) over the graded documents.
	diff     float64
	docs     []decideDoc // the union of the top Ks, by id
	unjudged []int       // indexes into docs of those without a grade
	// idcgMean is the ideal DCG averaged over the draws.
	idcgMean float64
}

// decideModel is the computed state behind both Decide and PlanDecide.
type decideModel struct {
	d        Design
	gain     []float64
	cumDisc  []float64   // cumDisc[i] = sum of discounts of ranks 1..i
	bands    [][]float64 // grade distribution per rank band
	queries  []decideQuery
	decision Decision
}

// decideBand places a best rank into the model's bands: 1-3, 4-10, 11+.
func decideBand(rank int) int {
	switch {
	case rank <= 3:
		return 0
	case rank <= 10:
		return 1
	}
	return 2
}

// decideDefaults fills the zero fields of a decide design and checks it.
func decideDefaults(d Design, runs []NamedRun) (Design, int, int, error) {
	if d.Kind != "" && d.Kind != KindDecide {
		return d, 0, 0, pertinent.Errorf(pertinent.Invalid, "estimate", "a %q design cannot decide between runs; use kind %q", d.Kind, KindDecide)
	}
	d.Kind = KindDecide
	if d.K < 0 {
		return d, 0, 0, pertinent.Errorf(pertinent.Invalid, "estimate", "cut-off %d is negative", d.K)
	}
	if d.K == 0 {
		d.K = 10
	}
	if d.Confidence == 0 {
		d.Confidence = 0.95
	}
	if d.Confidence <= 0.5 || d.Confidence >= 1 {
		return d, 0, 0, pertinent.Errorf(pertinent.Invalid, "estimate", "confidence %g must lie between 0.5 and 1", d.Confidence)
	}
	w, err := adaptiveWave(d)
	if err != nil {
		return d, 0, 0, err
	}
	d.Wave = w
	if err := adaptiveCheckRunNames(runs); err != nil {
		return d, 0, 0, err
	}
	if d.RunA == "" || d.RunB == "" {
		return d, 0, 0, pertinent.Errorf(pertinent.Invalid, "estimate", "a decide design needs run A and run B (runs: %s)", adaptiveRunList(runs))
	}
	if d.RunA == d.RunB {
		return d, 0, 0, pertinent.Errorf(pertinent.Invalid, "estimate", "run A and run B are both %q; a decision needs two different runs", d.RunA)
	}
	ia, ib := adaptiveRunIndex(runs, d.RunA), adaptiveRunIndex(runs, d.RunB)
	if ia < 0 {
		return d, 0, 0, pertinent.Errorf(pertinent.Invalid, "estimate", "run A %q is not among the runs (%s)", d.RunA, adaptiveRunList(runs))
	}
	if ib < 0 {
		return d, 0, 0, pertinent.Errorf(pertinent.Invalid, "estimate", "run B %q is not among the runs (%s)", d.RunB, adaptiveRunList(runs))
	}
	return d, ia, ib, nil
}

// newDecideModel gathers the queries, fits the grade model and computes
// the decision.
func newDecideModel(d Design, runs []NamedRun, known Labels, gain rankeval.Gain, maxGrade int) (*decideModel, error) {
	d, ia, ib, err := decideDefaults(d, runs)
	if err != nil {
		return nil, err
	}
	g, err := adaptiveGains(gain, maxGrade)
	if err != nil {
		return nil, err
	}
	if err := adaptiveCheckKnown(known, maxGrade); err != nil {
		return nil, err
	}
	m := &decideModel{d: d, gain: g, cumDisc: make([]float64, d.K+1)}
	for i := 1; i <= d.K; i++ {
		m.cumDisc[i] = m.cumDisc[i-1] + adaptiveDiscount(i)
	}
	// Every query of either run or of the labels counts, as rankeval
	// evaluates every query of the qrels.
	qset := map[string]bool{}
	for _, q := range adaptiveQueries(runs[ia], runs[ib]) {
		qset[q] = true
	}
	for q := range known {
		qset[q] = true
	}
	qids := make([]string, 0, len(qset))
	for q := range qset {
		qids = append(qids, q)
	}
	slices.Sort(qids)

	counts := make([][]float64, 3)
	for b := range counts {
		counts[b] = make([]float64, maxGrade+1)
	}
	for _, q := range qids {
		ra, err := adaptiveRanked(runs[ia], q)
		if err != nil {
			return nil, err
		}
		rb, err := adaptiveRanked(runs[ib], q)
		if err != nil {
			return nil, err
		}
		dq := decideQuery{id: q, hist: make([]int, maxGrade+1)}
		for _, l := range known[q] {
			if l.Grade >= 0 {
				dq.hist[l.Grade]++
			}
		}
		// The model learns from every graded document of the two runs,
		// at any depth, banded by its best rank.
		best := map[string]int{}
		for _, r := range [][]string{ra, rb} {
			for i, doc := range r {
				if b, ok := best[doc]; !ok || i+1 < b {
					best[doc] = i + 1
				}
			}
		}
		for doc, rank := range best {
			if l, ok := adaptiveLabel(known, q, doc); ok && l.Grade >= 0 {
				counts[decideBand(rank)][l.Grade]++
			}
		}
		rankIn := func(r []string) map[string]int {
			out := map[string]int{}
			for i := 0; i < d.K && i < len(r); i++ {
				out[r[i]] = i + 1
			}
			return out
		}
		inA, inB := rankIn(ra), rankIn(rb)
		docs := make([]decideDoc, 0, len(inA)+len(inB))
		for doc := range inA {
			docs = append(docs, decideDoc{id: doc})
		}
		for doc := range inB {
			if inA[doc] == 0 {
				docs = append(docs, decideDoc{id: doc})
			}
		}
		slices.SortFunc(docs, func(x, y decideDoc) int { return cmp.Compare(x.id, y.id) })
		for i := range docs {
			doc := &docs[i]
			doc.rankA, doc.rankB = inA[doc.id], inB[doc.id]
			if doc.rankB > 0 {
				doc.w += adaptiveDiscount(doc.rankB)
			}
			if doc.rankA > 0 {
				doc.w -= adaptiveDiscount(doc.rankA)
			}
			doc.band = decideBand(best[doc.id])
			l, ok := adaptiveLabel(known, q, doc.id)
			doc.known = ok
			doc.grade = -1
			if ok {
				doc.grade = l.Grade
			}
			if doc.grade >= 0 {
				dq.diff += g[doc.grade] * doc.w
				m.decision.Judged++
			} else {
				dq.unjudged = append(dq.unjudged, i)
				m.decision.Unjudged++
				if ok {
					m.decision.Pending++
				}
			}
		}
		dq.docs = docs
		m.queries = append(m.queries, dq)
	}
	m.bands = make([][]float64, 3)
	for b, c := range counts {
		total := 0.0
		for _, n := range c {
			total += n + 1
		}
		m.bands[b] = make([]float64, len(c))
		for gr, n := range c {
			m.bands[b][gr] = (n + 1) / total
		}
	}
	m.decide()
	return m, nil
}

// idcg is the ideal DCG@K of a query whose grades are counted in hist.
func (m *decideModel) idcg(hist []int) float64 {
	s, pos := 0.0, 0
	for gr := len(hist) - 1; gr > 0 && pos < m.d.K; gr-- {
		take := min(hist[gr], m.d.K-pos)
		s += m.gain[gr] * (m.cumDisc[pos+take] - m.cumDisc[pos])
		pos += take
	}
	return s
}

// decide runs the Monte Carlo draws and the bounds, and fills m.decision.
func (m *decideModel) decide() {
	d := &m.decision
	d.A, d.B, d.K = m.d.RunA, m.d.RunB, m.d.K
	draws := DecideDraws
	if d.Unjudged == 0 {
		draws = 1
	}
	d.Draws = draws
	rng := rand.New(rand.NewPCG(m.d.Seed, 0x6465636964650001))
	// Cumulative grade distributions per band, for drawing.
	cum := make([][]float64, len(m.bands))
	for b, p := range m.bands {
		cum[b] = make([]float64, len(p))
		s := 0.0
		for gr, v := range p {
			s += v
			cum[b][gr] = s
		}
		cum[b][len(p)-1] = 1
	}
	values := make([]float64, draws)
	hist := make([]int, len(m.gain))
	idcgSum := make([]float64, len(m.queries))
	for k := range draws {
		sum, defined := 0.0, 0
		for qi := range m.queries {
			q := &m.queries[qi]
			copy(hist, q.hist)
			diff := q.diff
			for _, di := range q.unjudged {
				doc := &q.docs[di]
				u := rng.Float64()
				gr, _ := slices.BinarySearch(cum[doc.band], u)
				gr = min(gr, len(hist)-1)
				hist[gr]++
				diff += m.gain[gr] * doc.w
			}
			ideal := m.idcg(hist)
			idcgSum[qi] += ideal
			if ideal > 0 {
				sum += diff / ideal
				defined++
			}
		}
		if defined > 0 {
			values[k] = sum / float64(defined)
		}
	}
	above, below, total := 0, 0, 0.0
	for _, v := range values {
		total += v
		if v > 0 {
			above++
		} else if v < 0 {
			below++
		}
	}
	for qi := range m.queries {
		m.queries[qi].idcgMean = idcgSum[qi] / float64(draws)
	}
	d.Diff = total / float64(draws)
	if draws == 1 {
		d.Diff = values[0]
	}
	slices.Sort(values)
	c := m.d.Confidence
	d.Low, d.High = adaptiveQuantile(values, (1-c)/2), adaptiveQuantile(values, (1+c)/2)
	d.ProbBBeatsA = float64(above) / float64(draws)
	probA := float64(below) / float64(draws)
	d.Certain = d.Unjudged == 0 || m.certainSign() != 0
	d.Settled = d.Certain || d.ProbBBeatsA >= c || probA >= c
	if !d.Settled {
		d.More = m.moreNeeded(values)
	}
	d.Text = m.text(probA)
}

// certainSign returns +1 or -1 when no assignment of the unjudged grades
// can change the sign of the mean NDCG difference, else 0.
func (m *decideModel) certainSign() int {
	const eps = 1e-12 // below this a bound is rounding, not a sign
	top := m.gain[len(m.gain)-1]
	// The smallest positive ideal DCG: a single grade-1 document at rank 1.
	smallest := m.gain[1] * adaptiveDiscount(1)
	hist := make([]int, len(m.gain))
	upper, lower := 0.0, 0.0
	for _, q := range m.queries {
		hi, lo := q.diff, q.diff
		copy(hist, q.hist)
		for _, di := range q.unjudged {
			w := q.docs[di].w
			if w > 0 {
				hi += top * w
			} else {
				lo += top * w
			}
			hist[len(hist)-1]++
		}
		iMin, iMax := m.idcg(q.hist), m.idcg(hist)
		if iMax == 0 {
			continue // never any relevant document: always left out
		}
		maybeUndefined := iMin == 0
		if maybeUndefined {
			iMin = smallest
		}
		ub := hi / iMax
		if hi > 0 {
			ub = hi / iMin
		}
		lb := lo / iMax
		if lo < 0 {
			lb = lo / iMin
		}
		if maybeUndefined {
			ub, lb = max(ub, 0), min(lb, 0)
		}
		upper += ub
		lower += lb
	}
	switch {
	case lower > eps:
		return 1
	case upper < -eps:
		return -1
	}
	return 0
}

// priority is how much a pair's grade can move the mean NDCG difference:
// its weight over its query's expected ideal DCG.
func (m *decideModel) priority(q *decideQuery, doc *decideDoc) float64 {
	ideal := q.idcgMean
	if ideal <= 0 {
		ideal = m.gain[1] * adaptiveDiscount(1)
	}
	return math.Abs(doc.w) / ideal
}

// decideCandidate is an unjudged pair with its priority.
type decideCandidate struct {
	q   *decideQuery
	doc *decideDoc
	p   float64
}

// decideCandidates returns the unjudged pairs, pending ones too, best first
// (ties by query, then document id).
func (m *decideModel) decideCandidates() []decideCandidate {
	var out []decideCandidate
	for qi := range m.queries {
		q := &m.queries[qi]
		for _, di := range q.unjudged {
			doc := &q.docs[di]
			out = append(out, decideCandidate{q, doc, m.priority(q, doc)})
		}
	}
	slices.SortStableFunc(out, func(x, y decideCandidate) int {
		if c := cmp.Compare(y.p, x.p); c != 0 {
			return c
		}
		if c := cmp.Compare(x.q.id, y.q.id); c != 0 {
			return c
		}
		return cmp.Compare(x.doc.id, y.doc.id)
	})
	return out
}

// moreNeeded estimates the judgments, beyond those pending, after which
// the model's spread would be small enough for the expected difference to
// settle. Each unjudged pair adds about var(gain) * (w / ideal DCG)^2 / n^2
// to the variance of the mean; these are scaled to the spread of the draws,
// the pending pairs are taken out first, then the rest in the order they
// would be released.
func (m *decideModel) moreNeeded(sorted []float64) int {
	mean, sd := adaptiveMeanSD(sorted)
	c := m.decideCandidates()
	pending, open := []decideCandidate{}, []decideCandidate{}
	for _, x := range c {
		if x.doc.known {
			pending = append(pending, x)
		} else {
			open = append(open, x)
		}
	}
	if len(open) == 0 {
		return 0
	}
	vars := make([]float64, len(m.bands))
	for b, p := range m.bands {
		e, e2 := 0.0, 0.0
		for gr, v := range p {
			e += v * m.gain[gr]
			e2 += v * m.gain[gr] * m.gain[gr]
		}
		vars[b] = e2 - e*e
	}
	contrib := func(x decideCandidate) float64 { return vars[x.doc.band] * x.p * x.p }
	total := 0.0
	for _, x := range c {
		total += contrib(x)
	}
	if total == 0 || mean == 0 {
		return len(open)
	}
	scale := sd * sd / total
	z := math.Sqrt2 * math.Erfinv(2*m.d.Confidence-1)
	rest := total
	for _, x := range pending {
		rest -= contrib(x)
	}
	for i, x := range open {
		if z*math.Sqrt(max(rest, 0)*scale) <= math.Abs(mean) {
			return i
		}
		rest -= contrib(x)
	}
	return len(open)
}

// text says the decision in plain words.
func (m *decideModel) text(probA float64) string {
	d := &m.decision
	switch {
	case d.Certain && d.Unjudged == 0 && d.Diff == 0:
		return fmt.Sprintf("%s and %s tie on NDCG@%d over every judged pair: settled.", d.A, d.B, d.K)
	case d.Certain && d.Unjudged == 0:
		w, l := d.B, d.A
		if d.Diff < 0 {
			w, l = l, w
		}
		return fmt.Sprintf("%s beats %s on NDCG@%d by %.4f with every pair judged: settled.", w, l, d.K, math.Abs(d.Diff))
	case d.Certain:
		w, l := d.B, d.A
		if m.certainSign() < 0 {
			w, l = l, w
		}
		return fmt.Sprintf("%s beats %s on NDCG@%d whatever the %d unjudged grades: settled.", w, l, d.K, d.Unjudged)
	case d.Settled && d.ProbBBeatsA >= m.d.Confidence:
		return fmt.Sprintf("%s beats %s (p = %.2f): settled.", d.B, d.A, d.ProbBBeatsA)
	case d.Settled:
		return fmt.Sprintf("%s beats %s (p = %.2f): settled.", d.A, d.B, probA)
	}
	open := d.Unjudged - d.Pending
	wait := ""
	if d.Pending > 0 {
		wait = fmt.Sprintf(" beyond the %d waiting for grades", d.Pending)
	}
	switch {
	case open == 0 && d.Pending == 0:
		return fmt.Sprintf("Not settled (p = %.2f), and nothing is left to judge: too close to call at %.0f%%.", d.ProbBBeatsA, 100*m.d.Confidence)
	case open == 0:
		return fmt.Sprintf("Not settled yet (p = %.2f); waiting for %d grades, with nothing more to release.", d.ProbBBeatsA, d.Pending)
	case d.More >= open:
		return fmt.Sprintf("Not settled yet (p = %.2f); it may take all %d remaining judgments%s.", d.ProbBBeatsA, open, wait)
	}
	return fmt.Sprintf("Not settled yet (p = %.2f); about %d more judgments%s.", d.ProbBBeatsA, max(d.More, 1), wait)
}

// adaptiveQuantile of sorted values by linear interpolation between order
// statistics (Hyndman & Fan type 7, numpy's default).
func adaptiveQuantile(sorted []float64, p float64) float64 {
	if len(sorted) == 0 {
		return 0
	}
	h := p * float64(len(sorted)-1)
	lo := int(math.Floor(h))
	if lo >= len(sorted)-1 {
		return sorted[len(sorted)-1]
	}
	return sorted[lo] + (h-float64(lo))*(sorted[lo+1]-sorted[lo])
}

func adaptiveMeanSD(v []float64) (float64, float64) {
	if len(v) == 0 {
		return 0, 0
	}
	s := 0.0
	for _, x := range v {
		s += x
	}
	mean := s / float64(len(v))
	ss := 0.0
	for _, x := range v {
		ss += (x - mean) * (x - mean)
	}
	return mean, math.Sqrt(ss / float64(len(v)))
}

// Decide says whether the judgments so far settle the sign of mean
// NDCG@K(B) - NDCG@K(A) between d.RunA and d.RunB (see Decision for the
// model).
func Decide(d Design, runs []NamedRun, known Labels, gain rankeval.Gain, maxGrade int) (Decision, error) {
	m, err := newDecideModel(d, runs, known, gain, maxGrade)
	if err != nil {
		return Decision{}, err
	}
	return m.decision, nil
}

// PlanDecide returns the next wave for a decide design between d.RunA and
// d.RunB at cut-off d.K (default 10), metric NDCG@K with the given gain:
// the unjudged pairs of either run's top K whose grade can move the mean
// difference most — weight disc_B(rank) - disc_A(rank) over the query's
// expected ideal DCG (Carterette, Allan & Sitaraman, SIGIR 2006) — best
// first, ties by query then document id. known holds every pair already in
// the project for these queries (Grade -1: chosen, not graded yet); known
// pairs are never returned. The wave is empty when the decision is
// settled; the decision's text is the plan's first note.
func PlanDecide(d Design, runs []NamedRun, known Labels, gain rankeval.Gain, maxGrade int) (Plan, error) {
	m, err := newDecideModel(d, runs, known, gain, maxGrade)
	if err != nil {
		return Plan{}, err
	}
	dec := m.decision
	plan := Plan{Design: m.d, Already: dec.Judged + dec.Pending, Notes: []string{dec.Text}}
	if dec.Settled {
		return plan, nil
	}
	for _, x := range m.decideCandidates() {
		if len(plan.Choices) == m.d.Wave {
			break
		}
		if x.doc.known {
			continue
		}
		plan.Choices = append(plan.Choices, Choice{
			Query: x.q.id, Doc: x.doc.id, Stratum: -1, Prob: 1, Combined: 1,
			Reason: m.reason(x),
		})
	}
	for i := range plan.Choices {
		plan.Choices[i].Priority = len(plan.Choices) - i
	}
	if len(plan.Choices) == 0 && dec.Pending > 0 {
		plan.Notes = append(plan.Notes, fmt.Sprintf("Nothing more to release until the %d pending grades come back.", dec.Pending))
	}
	return plan, nil
}

// reason says in plain words why a pair matters to the decision.
func (m *decideModel) reason(x decideCandidate) string {
	where := func(name string, rank int) string {
		if rank == 0 {
			return fmt.Sprintf("not in %s's top %d", name, m.d.K)
		}
		return fmt.Sprintf("rank %d in %s", rank, name)
	}
	if x.doc.w == 0 {
		return fmt.Sprintf("query %s: %s and %s; its grade changes only the query's ideal DCG", x.q.id,
			where(m.d.RunA, x.doc.rankA), where(m.d.RunB, x.doc.rankB))
	}
	better := m.d.RunB
	if x.doc.w < 0 {
		better = m.d.RunA
	}
	return fmt.Sprintf("query %s: %s, %s; each unit of gain moves the query's NDCG difference about %.3f towards %s",
		x.q.id, where(m.d.RunA, x.doc.rankA), where(m.d.RunB, x.doc.rankB), x.p, better)
}
