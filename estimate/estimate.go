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
}

// Interval is an estimate with its standard error and the interval
// Est ± z·SE at Options.Level.
type Interval struct {
	Est  float64 `json:"est"`
	SE   float64 `json:"se"`
	Low  float64 `json:"low"`
	High float64 `json:"high"`
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
	return o, ps.err()
}

func gainOf(g rankeval.Gain, grade int) float64 {
	if g == rankeval.GainLinear {
		return float64(grade)
	}
	return math.Exp2(float64(grade)) - 1
}

// pairInfo is one labelled pair as the estimators see it.
type pairInfo struct {
	grade int     // -1: pending
	w     float64 // Horvitz–Thompson weight after the response adjustment; 0 when pending
	vf    float64 // (1 - pi)/pi^2 with pi = 1/w: the pair's variance factor
	v     int     // index among the pairs with vf > 0, or -1
}

// queryLabels is what the labels of one query give every run.
type queryLabels struct {
	query       string
	index       map[string]int
	pairs       []pairInfo
	nvar        int
	idcg        float64
	dIdeal      []float64 // by grade: d IDCG / d w of a pair with that grade
	rel         float64   // estimated number of relevant documents
	ndcgDefined bool
	apDefined   bool
}

// prepare weighs one query's labels. A pair's weight is 1/Prob (Horvitz &
// Thompson 1952). Pairs chosen but not yet graded are made up for within
// their (query, stratum) cell: the graded ones' weights are multiplied by
// chosen/graded in that cell (a response adjustment, which treats grading
// as a second phase of Poisson sampling at rate graded/chosen). Ideal DCG
// comes from the estimated counts per grade (see idealDCG).
func prepare(q string, docs map[string]Label, o Options) queryLabels {
	ql := queryLabels{query: q, index: make(map[string]int, len(docs)), pairs: make([]pairInfo, 0, len(docs))}
	chosen, graded := map[int]int{}, map[int]int{}
	for _, l := range docs {
		chosen[l.Stratum]++
		if l.Grade >= 0 {
			graded[l.Stratum]++
		}
	}
	counts := make([]float64, o.MaxGrade+1)
	for _, doc := range sortedKeys(docs) {
		l := docs[doc]
		p := pairInfo{grade: l.Grade, v: -1}
		if l.Grade >= 0 {
			p.w = 1 / l.Prob * float64(chosen[l.Stratum]) / float64(graded[l.Stratum])
			p.vf = p.w * (p.w - 1) // (1-pi)/pi^2 at pi = 1/w
			if p.vf < 1e-15 {
				p.vf = 0 // certain pairs add no variance (rounding of 1/1)
			}
			if p.vf > 0 {
				p.v = ql.nvar
				ql.nvar++
			}
			counts[l.Grade] += p.w
			if l.Grade >= o.Threshold {
				ql.rel += p.w
			}
		}
		ql.index[doc] = len(ql.pairs)
		ql.pairs = append(ql.pairs, p)
	}
	ql.idcg, ql.dIdeal = idealDCG(counts, o)
	ql.ndcgDefined = ql.idcg > 0
	ql.apDefined = ql.rel > 0
	return ql
}

// cumDiscount is D(x): the sum of 1/log2(r+1) for r = 1..floor(x), plus the
// fraction of the next rank's discount: linear between integers.
func cumDiscount(x float64) float64 {
	n := int(math.Floor(x))
	s := 0.0
	for r := 1; r <= n; r++ {
		s += discount(r)
	}
	return s + (x-float64(n))*discount(n+1)
}

// idealDCG is the ideal DCG@K from estimated counts per grade:
// sum_g (gain(g) - gain(g-1)) · D(min(b_g, K)), b_g the estimated number of
// documents graded g or above. With integer counts this is the DCG of the
// grades sorted best first, i.e. the ordinary ideal DCG. It also returns,
// per grade h, the derivative of the ideal DCG with respect to the weight
// of a pair graded h (the right derivative at integers).
func idealDCG(counts []float64, o Options) (float64, []float64) {
	top := len(counts) - 1
	b := 0.0
	ideal := 0.0
	slope := make([]float64, top+1) // slope[g]: d/db_g of the g-th term
	for g := top; g >= 1; g-- {
		b += counts[g]
		step := gainOf(o.Gain, g) - gainOf(o.Gain, g-1)
		x := b
		if o.K > 0 && x >= float64(o.K) {
			x = float64(o.K)
		} else {
			slope[g] = step * discount(int(math.Floor(b))+1)
		}
		ideal += step * cumDiscount(x)
	}
	d := make([]float64, top+1)
	for h := 1; h <= top; h++ {
		d[h] = d[h-1] + slope[h]
	}
	return ideal, d
}

// Estimate reads estimated scores with intervals from the labels.
//
// Per query and run, with weights w (prepare): DCG@K = sum over the run's
// top K of w·gain·discount; NDCG = DCG / ideal DCG (idealDCG). AP follows
// statAP and infAP (Aslam, Pavlu & Yilmaz, SIGIR 2006; Yilmaz & Aslam, CIKM
// 2006): AP = (1/R) sum over relevant i in the top K of (1/i)(1 + sum over
// relevant j above i of 1), with w_i for the single terms, w_i·w_j for the
// pair terms (sampling is independent, so pi_ij = pi_i·pi_j) and R the
// weighted count of relevant pairs. Documents without a final grade count as
// not relevant. With every Prob 1 both equal rankeval.Evaluate exactly.
//
// Variance is by linearisation under Poisson sampling: an estimate theta(w)
// has V = sum over graded pairs of (1 - pi_i)/pi_i^2 · (d theta/d w_i)^2, the
// derivatives taken at the sample weights. The mean over queries and the
// difference B - A use the same per-pair derivatives (the difference of the
// two runs' derivatives, so documents both runs retrieve are accounted for
// once). Queries sample independently, so their variances add.
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

	z := zFor(o.Level)
	nr := len(runs)
	type sums struct{ ndcg, ndcgV, ap, apV, judged, rbp, resid float64 }
	acc := make([]sums, nr)
	npairs := nr * (nr - 1) / 2
	diffV := make([][2]float64, npairs) // per pair of runs: NDCG, AP
	rep.Runs = make([]RunEstimate, nr)
	for i, r := range runs {
		rep.Runs[i].Run = r.Name
	}
	queries := sortedKeys(labels)
	nNDCG, nAP := 0, 0
	var dN, dA []float64
	for _, q := range queries {
		ql := prepare(q, labels[q], o)
		dN = resize(dN, nr*ql.nvar)
		dA = resize(dA, nr*ql.nvar)
		for i, r := range runs {
			qe := scoreQuery(&ql, r.Run[q], o, dN[i*ql.nvar:(i+1)*ql.nvar], dA[i*ql.nvar:(i+1)*ql.nvar])
			vN := variance(&ql, dN[i*ql.nvar:(i+1)*ql.nvar])
			vA := variance(&ql, dA[i*ql.nvar:(i+1)*ql.nvar])
			if qe.NDCGDefined {
				qe.NDCG = interval(qe.NDCG.Est, vN, z)
				acc[i].ndcg += qe.NDCG.Est
				acc[i].ndcgV += vN
			}
			if qe.APDefined {
				qe.AP = interval(qe.AP.Est, vA, z)
				acc[i].ap += qe.AP.Est
				acc[i].apV += vA
			}
			acc[i].judged += qe.JudgedAtK
			acc[i].rbp += qe.RBP
			acc[i].resid += qe.RBPResidual
			rep.Runs[i].PerQuery = append(rep.Runs[i].PerQuery, qe)
		}
		if ql.ndcgDefined {
			nNDCG++
		}
		if ql.apDefined {
			nAP++
		}
		if ql.nvar == 0 {
			continue
		}
		k := 0
		for a := range nr {
			for b := a + 1; b < nr; b++ {
				if ql.ndcgDefined {
					diffV[k][0] += diffVariance(&ql, dN[a*ql.nvar:(a+1)*ql.nvar], dN[b*ql.nvar:(b+1)*ql.nvar])
				}
				if ql.apDefined {
					diffV[k][1] += diffVariance(&ql, dA[a*ql.nvar:(a+1)*ql.nvar], dA[b*ql.nvar:(b+1)*ql.nvar])
				}
				k++
			}
		}
	}
	for i := range rep.Runs {
		re := &rep.Runs[i]
		re.NDCGQueries, re.APQueries = nNDCG, nAP
		if nNDCG > 0 {
			n := float64(nNDCG)
			re.NDCG = interval(acc[i].ndcg/n, acc[i].ndcgV/(n*n), z)
		}
		if nAP > 0 {
			n := float64(nAP)
			re.AP = interval(acc[i].ap/n, acc[i].apV/(n*n), z)
		}
		if n := float64(len(queries)); n > 0 {
			re.JudgedAtK = acc[i].judged / n
			re.RBP = acc[i].rbp / n
			re.RBPResidual = acc[i].resid / n
		}
	}
	k := 0
	for a := range nr {
		for b := a + 1; b < nr; b++ {
			A, B := rep.Runs[a], rep.Runs[b]
			rep.Differences = append(rep.Differences,
				difference(A.Run, B.Run, "ndcg", A.NDCG.Est, B.NDCG.Est, diffV[k][0], nNDCG, z),
				difference(A.Run, B.Run, "ap", A.AP.Est, B.AP.Est, diffV[k][1], nAP, z))
			k++
		}
	}
	return rep, nil
}

func resize(s []float64, n int) []float64 {
	if cap(s) < n {
		return make([]float64, n)
	}
	s = s[:n]
	clear(s)
	return s
}

func interval(est, v, z float64) Interval {
	se := math.Sqrt(max(0, v))
	return Interval{Est: est, SE: se, Low: est - z*se, High: est + z*se}
}

func variance(ql *queryLabels, d []float64) float64 {
	v := 0.0
	for _, p := range ql.pairs {
		if p.v >= 0 {
			v += p.vf * d[p.v] * d[p.v]
		}
	}
	return v
}

func diffVariance(ql *queryLabels, da, db []float64) float64 {
	v := 0.0
	for _, p := range ql.pairs {
		if p.v >= 0 {
			x := db[p.v] - da[p.v]
			v += p.vf * x * x
		}
	}
	return v
}

func difference(a, b, metric string, estA, estB, v float64, queries int, z float64) Difference {
	d := Difference{A: a, B: b, Metric: metric, Queries: queries}
	if queries == 0 {
		d.ProbBBeatsA = 0.5
		return d
	}
	n := float64(queries)
	d.Diff = interval(estB-estA, v/(n*n), z)
	switch {
	case d.Diff.SE > 0:
		d.ProbBBeatsA = phi(d.Diff.Est / d.Diff.SE)
	case d.Diff.Est > 0:
		d.ProbBBeatsA = 1
	case d.Diff.Est < 0:
		d.ProbBBeatsA = 0
	default:
		d.ProbBBeatsA = 0.5
	}
	return d
}

// scoreQuery estimates one run on one query and writes the derivatives of
// its NDCG and AP with respect to each variable pair's weight into dN, dA
// (zeroed by the caller).
func scoreQuery(ql *queryLabels, docs []rankeval.ScoredDoc, o Options, dN, dA []float64) QueryEstimate {
	qe := QueryEstimate{Query: ql.query, NDCGDefined: ql.ndcgDefined, APDefined: ql.apDefined}
	ranked := rankeval.Rank(docs)
	k := len(ranked)
	if o.K > 0 && o.K < k {
		k = o.K
	}
	// idx[i] is the label of rank i+1 (or -1).
	idx := make([]int, len(ranked))
	for i, d := range ranked {
		if at, ok := ql.index[d.DocID]; ok {
			idx[i] = at
		} else {
			idx[i] = -1
		}
	}
	judged := 0
	dcg := 0.0
	for i := range k {
		if idx[i] < 0 {
			continue
		}
		p := ql.pairs[idx[i]]
		if p.grade < 0 {
			continue
		}
		judged++
		dcg += p.w * gainOf(o.Gain, p.grade) * discount(i+1)
	}
	if k > 0 {
		qe.JudgedAtK = float64(judged) / float64(k)
	}
	if ql.ndcgDefined {
		I := ql.idcg
		qe.NDCG.Est = dcg / I
		for _, p := range ql.pairs {
			if p.v >= 0 {
				dN[p.v] = -dcg * ql.dIdeal[p.grade] / (I * I)
			}
		}
		for i := range k {
			if idx[i] >= 0 {
				if p := ql.pairs[idx[i]]; p.v >= 0 {
					dN[p.v] += gainOf(o.Gain, p.grade) * discount(i+1) / I
				}
			}
		}
	}
	if ql.apDefined {
		R := ql.rel
		// wx[i]: weight of rank i+1 if it is relevant, else 0.
		wx := make([]float64, k)
		for i := range k {
			if idx[i] >= 0 {
				if p := ql.pairs[idx[i]]; p.grade >= o.Threshold {
					wx[i] = p.w
				}
			}
		}
		num, above := 0.0, 0.0
		for i := range k {
			num += wx[i] * (1 + above) / float64(i+1)
			above += wx[i]
		}
		qe.AP.Est = num / R
		for _, p := range ql.pairs {
			if p.v >= 0 && p.grade >= o.Threshold {
				dA[p.v] = -num / (R * R)
			}
		}
		// d num / d w_i = x_i ((1 + sum_{j<i} w_j x_j)/i + sum_{j>i} w_j x_j / j).
		after := 0.0
		aboveAt := make([]float64, k)
		above = 0
		for i := range k {
			aboveAt[i] = above
			above += wx[i]
		}
		for i := k - 1; i >= 0; i-- {
			if idx[i] >= 0 {
				if p := ql.pairs[idx[i]]; p.v >= 0 && p.grade >= o.Threshold {
					dA[p.v] += ((1+aboveAt[i])/float64(i+1) + after) / R
				}
			}
			after += wx[i] / float64(i+1)
		}
	}
	// RBP with gain grade/MaxGrade over ranks 1..n.
	n := len(ranked)
	if o.RBPDepth > 0 && o.RBPDepth < n {
		n = o.RBPDepth
	}
	p := o.Persistence
	at := 1 - p // (1-p) p^(i-1)
	for i := range n {
		graded := idx[i] >= 0 && ql.pairs[idx[i]].grade >= 0
		if graded {
			qe.RBP += at * float64(ql.pairs[idx[i]].grade) / float64(o.MaxGrade)
		} else {
			qe.RBPResidual += at
		}
		at *= p
	}
	qe.RBPResidual += math.Pow(p, float64(n))
	return qe
}
