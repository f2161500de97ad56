package rankeval

import (
	"math"
	"math/rand/v2"

	"github.com/pertinent/pertinent"
)

// Metric names a per-query measure of a Summary.
type Metric string

// Metrics that can be compared.
const (
	MetricNDCG      Metric = "ndcg"
	MetricERR       Metric = "err"
	MetricPrecision Metric = "precision"
	MetricAP        Metric = "ap"
	MetricJudged    Metric = "judged"
)

// Values returns the per-query values of m, in query order, leaving out
// queries where m is undefined.
func (s Summary) Values(m Metric) (queries []string, values []float64, err error) {
	for _, q := range s.PerQuery {
		var v float64
		switch m {
		case MetricNDCG:
			if !q.NDCGDefined {
				continue
			}
			v = q.NDCG
		case MetricERR:
			v = q.ERR
		case MetricPrecision:
			v = q.Precision
		case MetricAP:
			if !q.APDefined {
				continue
			}
			v = q.AP
		case MetricJudged:
			v = q.Judged
		default:
			return nil, nil, pertinent.Errorf(pertinent.Invalid, "rankeval", "unknown metric %q", m)
		}
		queries = append(queries, q.Query)
		values = append(values, v)
	}
	return queries, values, nil
}

// Comparison of two runs on one measure, query by query.
type Comparison struct {
	Metric   Metric    `json:"metric"`
	Queries  []string  `json:"queries"`
	A        []float64 `json:"a"`
	B        []float64 `json:"b"`
	Diff     []float64 `json:"diff"` // B - A
	MeanA    float64   `json:"mean_a"`
	MeanB    float64   `json:"mean_b"`
	MeanDiff float64   `json:"mean_diff"`
	// RandomisationP is the two-sided p-value of the paired randomisation
	// (sign-flip) test; see RandomisationTest.
	RandomisationP float64 `json:"randomisation_p"`
	Permutations   int     `json:"permutations"`
	Seed           uint64  `json:"seed"`
	// T, DF and TTestP are Student's paired t-test, two-sided.
	T      float64 `json:"t"`
	DF     int     `json:"df"`
	TTestP float64 `json:"ttest_p"`
}

// Compare pairs the per-query values of two evaluations made with the same
// options over the same qrels.
func Compare(a, b Summary, m Metric, permutations int, seed uint64) (Comparison, error) {
	if a.Options != b.Options {
		return Comparison{}, pertinent.Errorf(pertinent.Invalid, "rankeval", "runs evaluated with different options (%+v, %+v)", a.Options, b.Options)
	}
	qa, va, err := a.Values(m)
	if err != nil {
		return Comparison{}, err
	}
	qb, vb, _ := b.Values(m)
	if len(qa) != len(qb) {
		return Comparison{}, pertinent.Errorf(pertinent.Invalid, "rankeval", "runs evaluated over different qrels (%d and %d queries)", len(qa), len(qb))
	}
	for i := range qa {
		if qa[i] != qb[i] {
			return Comparison{}, pertinent.Errorf(pertinent.Invalid, "rankeval", "runs evaluated over different qrels (query %q vs %q)", qa[i], qb[i])
		}
	}
	if len(qa) < 2 {
		return Comparison{}, pertinent.Errorf(pertinent.Invalid, "rankeval", "%d queries with %s defined; a paired test needs at least 2", len(qa), m)
	}
	if permutations < 1 {
		return Comparison{}, pertinent.Errorf(pertinent.Invalid, "rankeval", "%d permutations", permutations)
	}
	c := Comparison{Metric: m, Queries: qa, A: va, B: vb, Diff: make([]float64, len(qa)), Permutations: permutations, Seed: seed}
	for i := range qa {
		c.Diff[i] = vb[i] - va[i]
	}
	c.MeanA, c.MeanB, c.MeanDiff = mean(va), mean(vb), mean(c.Diff)
	c.RandomisationP = RandomisationTest(c.Diff, permutations, seed)
	c.T, c.DF, c.TTestP = PairedTTest(c.Diff)
	return c, nil
}

func mean(xs []float64) float64 {
	s := 0.0
	for _, x := range xs {
		s += x
	}
	return s / float64(len(xs))
}

// RandomisationTest is the two-sided paired randomisation test on
// per-query differences d: under the null hypothesis each difference is
// as likely to have either sign, so each of n trials flips every sign with
// probability 1/2 (a seeded generator) and counts trials whose |mean| is
// at least the observed |mean|. The p-value is (count + 1) / (n + 1), so
// it is never 0 (Phipson & Smyth 2010, Stat. Appl. Genet. Mol. Biol. 9(1)).
func RandomisationTest(d []float64, n int, seed uint64) float64 {
	if len(d) == 0 || n < 1 {
		return 1
	}
	obs := 0.0
	for _, x := range d {
		obs += x
	}
	obs = math.Abs(obs)
	// sums are compared, not means (same order); a hair of slack keeps a
	// trial equal to the observation from losing to rounding.
	limit := obs - 1e-12*math.Max(1, obs)
	r := rand.New(rand.NewPCG(seed, 0x72616e6b6576616c))
	count := 0
	for range n {
		s := 0.0
		var bits uint64
		for i, x := range d {
			if i%64 == 0 {
				bits = r.Uint64()
			}
			if bits&1 == 1 {
				s -= x
			} else {
				s += x
			}
			bits >>= 1
		}
		if math.Abs(s) >= limit {
			count++
		}
	}
	return float64(count+1) / float64(n+1)
}

// PairedTTest is Student's paired t-test on differences d, two-sided:
// t = mean / (sd / sqrt(n)) with n-1 degrees of freedom. With fewer than
// two differences p is NaN; when all differences are equal, p is 1 if they
// are 0 and 0 otherwise (t is then ±Inf).
func PairedTTest(d []float64) (t float64, df int, p float64) {
	n := len(d)
	if n < 2 {
		return math.NaN(), n - 1, math.NaN()
	}
	m := mean(d)
	ss := 0.0
	for _, x := range d {
		ss += (x - m) * (x - m)
	}
	df = n - 1
	sd := math.Sqrt(ss / float64(df))
	if sd == 0 {
		if m == 0 {
			return 0, df, 1
		}
		return math.Inf(int(math.Copysign(1, m))), df, 0
	}
	t = m / (sd / math.Sqrt(float64(n)))
	return t, df, studentTTwoSided(t, float64(df))
}
