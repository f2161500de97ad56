package estimate

import (
	"math"

	"github.com/pertinent/pertinent/rankeval"
)

// Options fix the measures an estimate reports. K, Gain, Threshold and
// MaxGrade are as in rankeval.Options.
type Options struct {
	K         int           `json:"k"` // cut-off of NDCG@K and AP@K; 0 means the whole ranking
	Gain      rankeval.Gain `json:"gain"`
	Threshold int           `json:"threshold"` // grade >= Threshold is relevant for AP; 0 means 1
	MaxGrade  int           `json:"max_grade"` // top of the scale; 0 means the highest grade among the labels
	// Persistence is RBP's p (Moffat & Zobel, TOIS 2008); 0 means 0.8.
	Persistence float64 `json:"persistence"`
	// Level of every interval; 0 means 0.95.
	Level float64 `json:"level"`
	// RBPDepth is the deepest rank RBP reads (the design's MaxDepth);
	// 0 means the whole ranking.
	RBPDepth int `json:"rbp_depth,omitempty"`
	// Replicates of the bootstrap behind every SE and interval (see
	// Estimate); 0 means 200, an odd count is rounded up (replicates come
	// in mirrored pairs).
	Replicates int `json:"replicates,omitempty"`
	// Seed of the bootstrap's multipliers; 0 means a fixed constant, so
	// the same labels always give the same figures.
	Seed uint64 `json:"seed,omitempty"`
}

// Interval is a bias-corrected estimate with its bootstrap standard error
// and the interval Est ± t·SE at Options.Level, t Student's quantile at DF
// degrees of freedom (see Estimate).
type Interval struct {
	Est  float64 `json:"est"`
	SE   float64 `json:"se"`
	Low  float64 `json:"low"`
	High float64 `json:"high"`
	// DF is Satterthwaite's degrees of freedom of the variance behind SE;
	// 0 when they are beyond counting (1e8 or more, or nothing varies) and
	// the quantile is the normal one.
	DF float64 `json:"df,omitempty"`
}

// QueryEstimate holds one run's estimates on one query.
type QueryEstimate struct {
	Query       string   `json:"query"`
	NDCG        Interval `json:"ndcg"`
	NDCGDefined bool     `json:"ndcg_defined"` // false: no graded pair above 0
	AP          Interval `json:"ap"`
	APDefined   bool     `json:"ap_defined"` // false: no graded pair at or above the threshold
	// JudgedAtK is the share of the top K (or fewer, if fewer retrieved)
	// with a final grade.
	JudgedAtK float64 `json:"judged_at_k"`
	// RBP counts the graded ranks only; RBPResidual is the most that the
	// ungraded ranks and the ranks beyond the ranking could add.
	RBP         float64 `json:"rbp"`
	RBPResidual float64 `json:"rbp_residual"`
}

// RunEstimate holds one run's estimates: per query and the means (NDCG and
// AP over the queries where each is defined, the rest over all queries).
type RunEstimate struct {
	Run         string          `json:"run"`
	PerQuery    []QueryEstimate `json:"per_query"`
	NDCG        Interval        `json:"ndcg"`
	AP          Interval        `json:"ap"`
	NDCGQueries int             `json:"ndcg_queries"`
	APQueries   int             `json:"ap_queries"`
	JudgedAtK   float64         `json:"judged_at_k"`
	RBP         float64         `json:"rbp"`
	RBPResidual float64         `json:"rbp_residual"`
}

// Difference is run B's mean minus run A's on one measure, with the
// probability that B's true mean is above A's.
type Difference struct {
	A           string   `json:"a"`
	B           string   `json:"b"`
	Metric      string   `json:"metric"` // "ndcg" or "ap"
	Diff        Interval `json:"diff"`   // B - A
	ProbBBeatsA float64  `json:"prob_b_beats_a"`
	Queries     int      `json:"queries"`
}

// Report is everything Estimate reads from the labels.
type Report struct {
	Options Options       `json:"options"`
	Runs    []RunEstimate `json:"runs"`
	// Differences holds, for every pair of runs in input order (A before
	// B), the NDCG then the AP difference.
	Differences []Difference `json:"differences"`
	Sampled     int          `json:"sampled"` // labelled pairs chosen with probability below 1
	Judged      int          `json:"judged"`  // labelled pairs with a final grade
	Pending     int          `json:"pending"` // chosen, not yet graded
}

const (
	defaultReplicates = 200
	// defaultBootSeed is "pertinen" in ASCII: any fixed number would do.
	defaultBootSeed = 0x70657274696e656e
)

func (o Options) withDefaults(labels Labels) (Options, error) {
	if o.Threshold == 0 {
		o.Threshold = 1
	}
	if o.MaxGrade == 0 {
		o.MaxGrade = o.Threshold
		for _, docs := range labels {
			for _, l := range docs {
				o.MaxGrade = max(o.MaxGrade, l.Grade)
			}
		}
	}
	if o.Persistence == 0 {
		o.Persistence = 0.8
	}
	if o.Level == 0 {
		o.Level = 0.95
	}
	var ps Problems
	if o.K < 0 {
		ps.addf("cut-off %d is negative; use 0 for the whole ranking", o.K)
	}
	if o.Gain != rankeval.GainExponential && o.Gain != rankeval.GainLinear {
		ps.addf("unknown gain %d; use exponential or linear", int(o.Gain))
	}
	if o.Threshold < 1 {
		ps.addf("relevance threshold %d; grades start at 0 (not relevant), so it must be at least 1", o.Threshold)
	}
	if o.MaxGrade < o.Threshold {
		ps.addf("top grade %d is below the relevance threshold %d", o.MaxGrade, o.Threshold)
	}
	if !(o.Persistence > 0 && o.Persistence < 1) {
		ps.addf("persistence %v; RBP's p lies strictly between 0 and 1", o.Persistence)
	}
	if !(o.Level > 0 && o.Level < 1) {
		ps.addf("interval level %v; it lies strictly between 0 and 1 (e.g. 0.95)", o.Level)
	}
	if o.RBPDepth < 0 {
		ps.addf("RBP depth %d is negative; use 0 for the whole ranking", o.RBPDepth)
	}
	switch {
	case o.Replicates < 0:
		ps.addf("%d bootstrap replicates; use a positive count, or 0 for the default (%d)", o.Replicates, defaultReplicates)
	case o.Replicates == 0:
		o.Replicates = defaultReplicates
	case o.Replicates%2 == 1:
		o.Replicates++
	}
	if o.Seed == 0 {
		o.Seed = defaultBootSeed
	}
	return o, ps.err()
}

func gainOf(g rankeval.Gain, grade int) float64 {
	if g == rankeval.GainLinear {
		return float64(grade)
	}
	return math.Exp2(float64(grade)) - 1
}

// labelled is one query's labels as the estimators see them.
type labelled struct {
	query string
	index map[string]int // document -> label
	grade []int          // -1: pending
	w     []float64      // Horvitz–Thompson weight after the response adjustment; 0 when pending
	// vary lists the graded labels with pi = 1/w < 1, whose weight moves
	// over the replicates; scale holds sqrt(1 - pi) for each, and signs
	// their Rademacher signs, words per label (see multipliers).
	vary []int
	// varyGain and varyRel are the varying labels graded above 0 and at
	// or above the relevance threshold: those the ideal DCG and R read.
	varyGain, varyRel []int
	scale             []float64
	signs             []uint64
	words             int
	ndcgDefined       bool
	apDefined         bool
}

// label weighs one query's labels. A pair's weight is 1/Prob (Horvitz &
// Thompson 1952). Pairs chosen but not yet graded are made up for within
// their (query, stratum) cell: the graded ones' weights are multiplied by
// chosen/graded in that cell (a response adjustment, which treats grading
// as a second phase of Poisson sampling at rate graded/chosen, so a graded
// pair counts as drawn with pi = 1/w).
func label(q string, docs map[string]Label, o Options) *labelled {
	ql := &labelled{query: q, index: make(map[string]int, len(docs)), words: (o.Replicates/2 + 63) / 64}
	chosen, graded := map[int]int{}, map[int]int{}
	for _, l := range docs {
		chosen[l.Stratum]++
		if l.Grade >= 0 {
			graded[l.Stratum]++
		}
	}
	for _, doc := range sortedKeys(docs) {
		l := docs[doc]
		w := 0.0
		if l.Grade >= 0 {
			w = 1 / l.Prob * float64(chosen[l.Stratum]) / float64(graded[l.Stratum])
			if w > 1 {
				at := len(ql.grade)
				ql.vary = append(ql.vary, at)
				if l.Grade > 0 {
					ql.varyGain = append(ql.varyGain, at)
				}
				if l.Grade >= o.Threshold {
					ql.varyRel = append(ql.varyRel, at)
				}
				ql.scale = append(ql.scale, math.Sqrt(1-1/w))
				h := pairHash(o.Seed, q, doc)
				for k := range ql.words {
					ql.signs = append(ql.signs, mix64(h+uint64(k+1)*0x9e3779b97f4a7c15))
				}
			}
			ql.ndcgDefined = ql.ndcgDefined || l.Grade > 0
			ql.apDefined = ql.apDefined || l.Grade >= o.Threshold
		}
		ql.index[doc] = len(ql.grade)
		ql.grade = append(ql.grade, l.Grade)
		ql.w = append(ql.w, w)
	}
	return ql
}

// multipliers writes replicate b's weights into wb (which holds w on
// entry and leaves the certain labels alone). Each varying label gets
// m = 1 + sqrt(1 - pi)·e with e = ±1 at even odds: m >= 0, E m = 1 and
// Var m = 1 - pi, so over the replicates Var(m·y/pi) = (1 - pi)·y²/pi²,
// the pair's term of the Horvitz–Thompson variance estimator under
// Poisson sampling. This is the generalised bootstrap for Poisson samples
// (Beaumont & Patak, "On the generalized bootstrap for sample surveys with
// special attention to Poisson sampling", International Statistical Review
// 80(1), 2012; cited from memory), with Rademacher multipliers. Replicates
// 2j and 2j+1 use e and -e (mirrored, antithetic): the linear part of the
// estimate cancels exactly in each pair's mean, so the mean over replicates,
// which sets the bias correction, carries no first-order Monte Carlo
// noise. Signs come from a hash of the pair, not from a stream, so a
// pair's multipliers do not depend on which other pairs are labelled.
func (ql *labelled) multipliers(b int, wb []float64) {
	j := b / 2
	word, bit := j/64, uint(j%64)
	for v, at := range ql.vary {
		e := 1.0
		if (ql.signs[v*ql.words+word]>>bit)&1 == 1 {
			e = -1
		}
		if b%2 == 1 {
			e = -e
		}
		wb[at] = ql.w[at] * (1 + ql.scale[v]*e)
	}
}

// cumTable holds D(n), the sum of 1/log2(r+1) for r = 1..n, grown on
// demand.
type cumTable []float64

// at is D(x) for real x >= 0: D(floor(x)) plus the fraction of the next
// rank's discount, linear between integers.
func (c *cumTable) at(x float64) float64 {
	n := int(math.Floor(x))
	if len(*c) == 0 {
		*c = append(*c, 0)
	}
	for len(*c) <= n+1 {
		*c = append(*c, (*c)[len(*c)-1]+discount(len(*c)))
	}
	if f := x - float64(n); f > 0 {
		return (*c)[n] + f*discount(n+1)
	}
	return (*c)[n]
}

// ideal is the ideal DCG@K from the weighted counts per grade:
// sum_g (gain(g) - gain(g-1)) · D(min(b_g, K)), b_g the weighted number of
// labels graded g or above. With integer counts this is the DCG of the
// grades sorted best first, i.e. the ordinary ideal DCG.
func (ql *labelled) ideal(wb, counts []float64, o Options, cum *cumTable) float64 {
	clear(counts)
	for i, g := range ql.grade {
		if g > 0 {
			counts[g] += wb[i]
		}
	}
	b, ideal := 0.0, 0.0
	for g := len(counts) - 1; g >= 1; g-- {
		b += counts[g]
		x := b
		if o.K > 0 && x > float64(o.K) {
			x = float64(o.K)
		}
		ideal += (gainOf(o.Gain, g) - gainOf(o.Gain, g-1)) * cum.at(x)
	}
	return ideal
}

// idealRates writes into s, for each grade g, the rate at which the ideal
// DCG moves with the weight of a label graded g: the sum over g' = 1..g of
// (gain(g') - gain(g'-1))·D'(b_g'), D' the slope of D capped at K (the next
// rank's discount below K, 0 from K on).
func (ql *labelled) idealRates(w, counts, s []float64, o Options) {
	clear(counts)
	for i, g := range ql.grade {
		if g > 0 {
			counts[g] += w[i]
		}
	}
	b := 0.0
	for g := len(counts) - 1; g >= 1; g-- {
		b += counts[g]
		d := 0.0
		if o.K == 0 || b < float64(o.K) {
			d = discount(int(math.Floor(b)) + 1)
		}
		s[g] = (gainOf(o.Gain, g) - gainOf(o.Gain, g-1)) * d
	}
	s[0] = 0
	for g := 1; g < len(s); g++ {
		s[g] += s[g-1]
	}
}

// relevant is the weighted number of relevant labels, R.
func (ql *labelled) relevant(wb []float64, threshold int) float64 {
	r := 0.0
	for i, g := range ql.grade {
		if g >= threshold {
			r += wb[i]
		}
	}
	return r
}

// term is one label's place in one run's sums: its index and coefficient.
type term struct {
	at int
	c  float64
}

// runTerms is what one run contributes on one query: the graded labels in
// its top K with gain·discount, the relevant ones with their rank, and the
// figures that need no weights.
type runTerms struct {
	gain      []term // c: gain(grade) / log2(rank + 1)
	rel       []term // c: 1/rank, in rank order
	judgedAtK float64
	rbp       float64
	resid     float64
}

func (t *runTerms) dcg(wb []float64) float64 {
	s := 0.0
	for _, x := range t.gain {
		s += wb[x.at] * x.c
	}
	return s
}

// apNum is the AP numerator sum over relevant i of w_i (1 + sum over
// relevant j above i of w_j) / rank_i.
func (t *runTerms) apNum(wb []float64) float64 {
	num, above := 0.0, 0.0
	for _, x := range t.rel {
		w := wb[x.at]
		num += w * (1 + above) * x.c
		above += w
	}
	return num
}

// terms lays out one run on one query (ranked by rankeval.Rank), reusing
// t's slices.
func (ql *labelled) terms(docs []rankeval.ScoredDoc, o Options, t *runTerms) {
	t.gain, t.rel = t.gain[:0], t.rel[:0]
	t.judgedAtK, t.rbp, t.resid = 0, 0, 0
	ranked := rankeval.Rank(docs)
	k := len(ranked)
	if o.K > 0 && o.K < k {
		k = o.K
	}
	n := len(ranked)
	if o.RBPDepth > 0 && o.RBPDepth < n {
		n = o.RBPDepth
	}
	judged := 0
	at := 1 - o.Persistence // RBP's (1-p) p^(i-1)
	for i, d := range ranked[:max(k, n)] {
		l, ok := ql.index[d.DocID]
		g := -1
		if ok {
			g = ql.grade[l]
		}
		if i < k && g >= 0 {
			judged++
			t.gain = append(t.gain, term{l, gainOf(o.Gain, g) * discount(i+1)})
			if g >= o.Threshold {
				t.rel = append(t.rel, term{l, 1 / float64(i+1)})
			}
		}
		if i < n {
			// RBP with gain grade/MaxGrade over ranks 1..n.
			if g >= 0 {
				t.rbp += at * float64(g) / float64(o.MaxGrade)
			} else {
				t.resid += at
			}
			at *= o.Persistence
		}
	}
	if k > 0 {
		t.judgedAtK = float64(judged) / float64(k)
	}
	t.resid += math.Pow(o.Persistence, float64(n))
}

// moments gathers a quantity's deviations from its point estimate over
// the replicates.
type moments struct{ sum, sq float64 }

func (m *moments) add(d float64) { m.sum += d; m.sq += d * d }

// interval turns a point estimate and its replicates' deviations into the
// bias-corrected estimate point - mean deviation and its SE, over n
// replicates, and the interval at level with Student's t at the corrected
// figure's degrees of freedom (see lin).
//
// The replicates' spread, sqrt(mean of squared deviations from their
// mean), is the SE of the point estimate. The divisor is n, not n - 1:
// with mirrored replicates the linear part of the deviations has mean 0 by
// construction, so no degree of freedom is spent on it. The correction
// moves with the sample too, and at this collection's settings made the
// corrected estimate 3-5% more variable than the point one; the SE is
// therefore scaled by the ratio of the linearised SEs of the corrected and
// the plain estimate, sqrt(V(g - h) / V(g)).
func interval(point float64, m moments, n int, level float64, l lin) Interval {
	bias := m.sum / float64(n)
	se := math.Sqrt(max(0, m.sq/float64(n)-bias*bias))
	if l.plain.v > 0 {
		se *= math.Sqrt(l.corrected.v / l.plain.v)
	}
	est := point - bias
	df := l.corrected.df()
	q := tQuantile(level, df)
	iv := Interval{Est: est, SE: se, Low: est - q*se, High: est + q*se}
	if df < largeDF {
		iv.DF = df
	}
	return iv
}

// Estimate reads estimated scores with intervals from the labels.
//
// Point estimates, per query and run, with weights w (label): DCG@K = sum
// over the run's top K of w·gain·discount; NDCG = DCG / ideal DCG (ideal,
// from the weighted counts per grade). AP follows statAP and infAP (Aslam,
// Pavlu & Yilmaz, SIGIR 2006; Yilmaz & Aslam, CIKM 2006): AP = (1/R) sum
// over relevant i in the top K of (w_i/i)(1 + sum over relevant j above i
// of w_j), w_i·w_j standing for 1/pi_ij since pairs are sampled
// independently, and R the weighted count of relevant labels. Documents
// without a final grade count as not relevant. The weighted sums are
// Horvitz–Thompson estimates, unbiased; NDCG and AP, ratios of them (and
// the ideal DCG, concave in the counts), are not.
//
// Intervals: a bootstrap of the Poisson sample (multipliers), R =
// Options.Replicates replicates, each reweighing every sampled graded pair
// by its multiplier m and recomputing, per query, the counts per grade, the
// ideal DCG, R and every run's DCG and AP numerator, then NDCG and AP, their
// means over the queries and the differences B - A — all with the same
// multipliers, so documents several runs retrieve, and the ideal DCG all
// runs share, move every run's figure together. Queries are sampled
// independently, and so are their multipliers. For each figure theta with
// point estimate theta_hat and replicates theta*_b: Est = 2·theta_hat -
// mean(theta*), which removes the first-order bias of the ratios and of
// the ideal DCG; SE = the spread of theta*_b about their mean, scaled by
// how much the correction adds to it (see interval); the interval is Est ±
// t·SE, t Student's quantile at the Satterthwaite degrees of freedom of
// the linearised variance (see spread), the normal one when many pairs
// share it; ProbBBeatsA = the t distribution function at Diff.Est /
// Diff.SE. The rates behind those linearised variances are exact
// derivatives of each figure in each weight. The multipliers come
// from Options.Seed (a fixed constant by default), so the same labels
// always give the same figures. With every Prob 1 no pair is sampled, every
// replicate is the point estimate, Est equals rankeval.Evaluate exactly and
// every SE is 0.
//
// Means are over the queries where each figure is defined (NDCG: a graded
// pair above 0; AP: one at or above the threshold), the same for every run.
//
// RBP (Moffat & Zobel, TOIS 2008) uses gain grade/MaxGrade over the ranking
// to RBPDepth: the base counts graded ranks, the residual is
// (1-p)·sum over ungraded ranks of p^(i-1) plus p^n for what lies beyond.
func Estimate(runs []NamedRun, labels Labels, o Options) (Report, error) {
	o, err := o.withDefaults(labels)
	if err != nil {
		return Report{}, err
	}
	var ps Problems
	checkRuns(&ps, runs, nil, true)
	rep := Report{Options: o}
	for _, q := range sortedKeys(labels) {
		for _, doc := range sortedKeys(labels[q]) {
			l := labels[q][doc]
			if !(l.Prob > 0 && l.Prob <= 1) {
				ps.addf("query %q, document %q: probability %v; probabilities lie in (0, 1]", q, doc, l.Prob)
			}
			if l.Grade < -1 || l.Grade > o.MaxGrade {
				ps.addf("query %q, document %q: grade %d outside 0..%d (-1: not graded yet)", q, doc, l.Grade, o.MaxGrade)
			}
			if l.Prob < 1 {
				rep.Sampled++
			}
			if l.Grade >= 0 {
				rep.Judged++
			} else {
				rep.Pending++
			}
		}
	}
	if err := ps.err(); err != nil {
		return Report{}, err
	}

	nr, nb := len(runs), o.Replicates
	rep.Runs = make([]RunEstimate, nr)
	for i, r := range runs {
		rep.Runs[i].Run = r.Name
		rep.Runs[i].PerQuery = make([]QueryEstimate, 0, len(labels))
	}
	// Per run: the sums over queries of the point estimates, and per
	// replicate the sums of the deviations from them.
	type sums struct{ ndcg, ap, judged, rbp, resid float64 }
	acc := make([]sums, nr)
	devN, devA := make([]float64, nr*nb), make([]float64, nr*nb)
	// Buffers reused from query to query.
	var (
		cum    cumTable
		counts = make([]float64, o.MaxGrade+1)
		terms  = make([]runTerms, nr)
		dcg0   = make([]float64, nr)
		num0   = make([]float64, nr)
		pN     = make([]float64, nr)
		pA     = make([]float64, nr)
		mN     = make([]moments, nr)
		mA     = make([]moments, nr)
		wb     []float64
		// Each figure's rate in every label's weight (run i's at
		// [i*len(labels of the query):]) at the sample's weights (g) and
		// the bias correction's (h); the ideal DCG's rates per grade; a
		// replicate's figures; and the linearised variances: per query and
		// run, summed over queries per run, and per pair of runs.
		gN, gA, hN, hA []float64
		mb             []float64 // a replicate's multipliers, 1 for the certain labels
		ideal          = make([]float64, o.MaxGrade+1)
		pbN, pbA       = make([]float64, nr), make([]float64, nr)
		lN, lA         = make([]lin, nr), make([]lin, nr)
		totN, totA     = make([]lin, nr), make([]lin, nr)
		pairN          = make([]lin, nr*(nr-1)/2)
		pairA          = make([]lin, nr*(nr-1)/2)
	)
	queries := sortedKeys(labels)
	nNDCG, nAP := 0, 0
	for _, q := range queries {
		ql := label(q, labels[q], o)
		idcg := ql.ideal(ql.w, counts, o, &cum)
		rel := ql.relevant(ql.w, o.Threshold)
		for i, r := range runs {
			ql.terms(r.Run[q], o, &terms[i])
			dcg0[i], num0[i] = terms[i].dcg(ql.w), terms[i].apNum(ql.w)
			pN[i], pA[i] = 0, 0
			if ql.ndcgDefined {
				pN[i] = dcg0[i] / idcg
			}
			if ql.apDefined {
				pA[i] = num0[i] / rel
			}
			mN[i], mA[i] = moments{}, moments{}
			lN[i], lA[i] = lin{}, lin{}
		}
		if len(ql.vary) > 0 && (ql.ndcgDefined || ql.apDefined) {
			n := len(terms) * len(ql.grade)
			gN, gA, hN, hA = zeroed(gN, n), zeroed(gA, n), zeroed(hN, n), zeroed(hA, n)
			mb = ones(mb, len(ql.grade))
			ql.addRates(ql.w, mb, terms, pN, pA, idcg, rel, ideal, counts, gN, gA, o)
			wb = append(wb[:0], ql.w...)
			for b := range nb {
				ql.multipliers(b, wb)
				idcgB := ql.ideal(wb, counts, o, &cum)
				relB := ql.relevant(wb, o.Threshold)
				for i := range terms {
					t := &terms[i]
					if ql.ndcgDefined {
						pbN[i] = t.dcg(wb) / idcgB
						d := pbN[i] - pN[i]
						mN[i].add(d)
						devN[i*nb+b] += d
					}
					if ql.apDefined {
						pbA[i] = t.apNum(wb) / relB
						d := pbA[i] - pA[i]
						mA[i].add(d)
						devA[i*nb+b] += d
					}
				}
				for _, at := range ql.vary {
					mb[at] = wb[at] / ql.w[at]
				}
				ql.addRates(wb, mb, terms, pbN, pbA, idcgB, relB, ideal, counts, hN, hA, o)
			}
			ql.lins(gN, hN, nb, lN, totN, pairN)
			ql.lins(gA, hA, nb, lA, totA, pairA)
		}
		for i := range runs {
			t := &terms[i]
			qe := QueryEstimate{Query: q, NDCGDefined: ql.ndcgDefined, APDefined: ql.apDefined,
				JudgedAtK: t.judgedAtK, RBP: t.rbp, RBPResidual: t.resid}
			if ql.ndcgDefined {
				qe.NDCG = interval(pN[i], mN[i], nb, o.Level, lN[i])
				acc[i].ndcg += pN[i]
			}
			if ql.apDefined {
				qe.AP = interval(pA[i], mA[i], nb, o.Level, lA[i])
				acc[i].ap += pA[i]
			}
			acc[i].judged += t.judgedAtK
			acc[i].rbp += t.rbp
			acc[i].resid += t.resid
			rep.Runs[i].PerQuery = append(rep.Runs[i].PerQuery, qe)
		}
		if ql.ndcgDefined {
			nNDCG++
		}
		if ql.apDefined {
			nAP++
		}
	}
	// mean is a run's mean over n queries with its replicate moments.
	mean := func(sum float64, dev []float64, n int, l lin) Interval {
		var m moments
		for _, d := range dev {
			m.add(d / float64(n))
		}
		return interval(sum/float64(n), m, nb, o.Level, l)
	}
	for i := range rep.Runs {
		re := &rep.Runs[i]
		re.NDCGQueries, re.APQueries = nNDCG, nAP
		if nNDCG > 0 {
			re.NDCG = mean(acc[i].ndcg, devN[i*nb:(i+1)*nb], nNDCG, totN[i])
		}
		if nAP > 0 {
			re.AP = mean(acc[i].ap, devA[i*nb:(i+1)*nb], nAP, totA[i])
		}
		if n := float64(len(queries)); n > 0 {
			re.JudgedAtK = acc[i].judged / n
			re.RBP = acc[i].rbp / n
			re.RBPResidual = acc[i].resid / n
		}
	}
	diff := func(a, b int, metric string, sumA, sumB float64, dev []float64, n int, l lin) Difference {
		d := Difference{A: runs[a].Name, B: runs[b].Name, Metric: metric, Queries: n}
		if n == 0 {
			d.ProbBBeatsA = 0.5
			return d
		}
		var m moments
		da, db := dev[a*nb:(a+1)*nb], dev[b*nb:(b+1)*nb]
		for r := range nb {
			m.add((db[r] - da[r]) / float64(n))
		}
		d.Diff = interval((sumB-sumA)/float64(n), m, nb, o.Level, l)

		switch {
		case d.Diff.SE > 0:
			d.ProbBBeatsA = tCDF(d.Diff.Est/d.Diff.SE, l.corrected.df())
		case d.Diff.Est > 0:
			d.ProbBBeatsA = 1
		case d.Diff.Est < 0:
			d.ProbBBeatsA = 0
		default:
			d.ProbBBeatsA = 0.5
		}
		return d
	}
	pair := 0
	for a := range nr {
		for b := a + 1; b < nr; b++ {
			rep.Differences = append(rep.Differences,
				diff(a, b, "ndcg", acc[a].ndcg, acc[b].ndcg, devN, nNDCG, pairN[pair]),
				diff(a, b, "ap", acc[a].ap, acc[b].ap, devA, nAP, pairA[pair]))
			pair++
		}
	}
	return rep, nil
}

// addRates adds to gN and gA (run i's at [i*L:(i+1)*L] for the query's
// L labels), for every run, m_l times NDCG's and AP's rate in each label's
// weight at weights w, where the runs' figures are pN and pA, the ideal DCG
// idcg and the relevant count rel. With m all 1 and gN, gA zeroed this
// writes the rates at w. With a replicate's weights and multipliers it adds
// that replicate's share of the rates of the replicates' mean: f(w·m)
// moves with w_l at m_l times its rate there. Undefined figures get no
// rates. Of the ideal DCG's and R's parts only the varying labels' are
// written: the others' entries are never read.
func (ql *labelled) addRates(w, m []float64, terms []runTerms, pN, pA []float64, idcg, rel float64, ideal, counts, gN, gA []float64, o Options) {
	L := len(ql.grade)
	if ql.ndcgDefined {
		ql.idealRates(w, counts, ideal, o)
	}
	for i := range terms {
		t := &terms[i]
		if ql.ndcgDefined {
			g, inv := gN[i*L:(i+1)*L], 1/idcg
			for _, x := range t.gain {
				g[x.at] += m[x.at] * x.c * inv
			}
			c := pN[i] * inv
			for _, at := range ql.varyGain {
				g[at] -= m[at] * c * ideal[ql.grade[at]]
			}
		}
		if ql.apDefined {
			// d(AP numerator)/dw_l = (1 + the weights of the relevant
			// above l)/rank_l + the sum of w_j/rank_j over the relevant
			// below it.
			g, inv := gA[i*L:(i+1)*L], 1/rel
			tail := 0.0
			for _, x := range t.rel {
				tail += w[x.at] * x.c
			}
			above := 0.0
			for _, x := range t.rel {
				wx := w[x.at]
				tail -= wx * x.c
				g[x.at] += m[x.at] * ((1+above)*x.c + tail) * inv
				above += wx
			}
			c := pA[i] * inv
			for _, at := range ql.varyRel {
				g[at] -= m[at] * c
			}
		}
	}
}

// ones is buf resized to n and filled with 1.
func ones(buf []float64, n int) []float64 {
	buf = zeroed(buf, n)
	for i := range buf {
		buf[i] = 1
	}
	return buf
}

// zeroed is buf resized to n and cleared.
func zeroed(buf []float64, n int) []float64 {
	if cap(buf) < n {
		return make([]float64, n)
	}
	buf = buf[:n]
	clear(buf)
	return buf
}

// lin holds one figure's linearised variances, of the point estimate (at
// rates g) and of the bias-corrected one: Est = 2·f(w) - mean_b f(w·m_b)
// moves with w_l at g_l - h_l, h_l = mean_b m_l·g_l(w·m_b) - g_l(w) the rate
// of the bias estimate.
type lin struct{ plain, corrected spread }

func (l *lin) addAll(o lin) { l.plain.addAll(o.plain); l.corrected.addAll(o.corrected) }

// lins turns rates g and the replicates' sums h (as biasRates leaves them,
// over n replicates) into each run's lin on this query, added to per and
// to tot, and each pair of runs' (B - A, pairs in the order of
// Report.Differences), added to pairs. Only the varying labels count: the
// others' weights are certain.
func (ql *labelled) lins(g, h []float64, n int, per, tot, pairs []lin) {
	L := len(ql.grade)
	for k := range h {
		h[k] = h[k]/float64(n) - g[k]
	}
	nr := len(per)
	for i := range nr {
		for _, at := range ql.vary {
			x, y := g[i*L+at], h[i*L+at]
			per[i].plain.add(ql.w[at], x)
			per[i].corrected.add(ql.w[at], x-y)
		}
		tot[i].addAll(per[i])
	}
	k := 0
	for a := range nr {
		for b := a + 1; b < nr; b++ {
			for _, at := range ql.vary {
				x := g[b*L+at] - g[a*L+at]
				y := h[b*L+at] - h[a*L+at]
				pairs[k].plain.add(ql.w[at], x)
				pairs[k].corrected.add(ql.w[at], x-y)
			}
			k++
		}
	}
}
