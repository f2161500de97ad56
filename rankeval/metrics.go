package rankeval

import (
	"fmt"
	"math"
	"slices"

	"github.com/pertinent/pertinent"
)

// Gain turns a grade into the gain of DCG.
type Gain int

const (
	// GainExponential is 2^g - 1 (Burges et al. 2005; common practice in
	// learning to rank).
	GainExponential Gain = iota
	// GainLinear is g itself (Jarvelin & Kekalainen 2002; sklearn's
	// ndcg_score).
	GainLinear
)

func (g Gain) String() string {
	switch g {
	case GainExponential:
		return "exponential (2^g-1)"
	case GainLinear:
		return "linear (g)"
	}
	return fmt.Sprintf("Gain(%d)", int(g))
}

func (g Gain) of(grade int) float64 {
	if g == GainLinear {
		return float64(grade)
	}
	return math.Exp2(float64(grade)) - 1
}

// Options fix the cut-off and the grade conventions of an evaluation.
type Options struct {
	K         int  `json:"k"`         // cut-off rank; 0 means the whole ranking
	Gain      Gain `json:"gain"`      // gain of NDCG
	Threshold int  `json:"threshold"` // grade >= Threshold is relevant for P@k and AP; at least 1
	MaxGrade  int  `json:"max_grade"` // top of the scale (ERR's 2^max); every grade must be <= it
	// AverageTies makes NDCG average the gains of documents with equal
	// scores over their positions (McSherry & Najork 2008, as sklearn's
	// ndcg_score does by default) instead of breaking ties by id. Other
	// measures always break ties by id.
	AverageTies bool `json:"average_ties"`
}

func (o Options) validate() error {
	if o.K < 0 {
		return pertinent.Errorf(pertinent.Invalid, "rankeval", "cut-off %d is negative", o.K)
	}
	if o.Gain != GainExponential && o.Gain != GainLinear {
		return pertinent.Errorf(pertinent.Invalid, "rankeval", "unknown gain %d", int(o.Gain))
	}
	if o.Threshold < 1 {
		return pertinent.Errorf(pertinent.Invalid, "rankeval", "relevance threshold %d; grades start at 0 (not relevant), so it must be at least 1", o.Threshold)
	}
	if o.MaxGrade < o.Threshold {
		return pertinent.Errorf(pertinent.Invalid, "rankeval", "top grade %d is below the relevance threshold %d", o.MaxGrade, o.Threshold)
	}
	return nil
}

// discount is 1/log2(rank+1), rank from 1 (Jarvelin & Kekalainen 2002 with
// log base 2 from the first rank on, as Burges et al. 2005).
func discount(rank int) float64 { return 1 / math.Log2(float64(rank)+1) }

// cut is the number of ranks that count.
func (o Options) cut(n int) int {
	if o.K > 0 && o.K < n {
		return o.K
	}
	return n
}

// dcg of grades in rank order, cut at k.
func dcg(grades []int, k int, g Gain) float64 {
	s := 0.0
	for i := 0; i < k && i < len(grades); i++ {
		s += g.of(grades[i]) * discount(i+1)
	}
	return s
}

// tieAveragedDCG follows McSherry & Najork (2008): documents with equal
// scores share the mean gain of their group at each of the group's
// positions; positions past k are not counted.
func tieAveragedDCG(ranked []ScoredDoc, grades []int, k int, g Gain) float64 {
	s := 0.0
	for i := 0; i < len(ranked) && i < k; {
		j := i
		sum := 0.0
		for j < len(ranked) && ranked[j].Score == ranked[i].Score {
			sum += g.of(grades[j])
			j++
		}
		disc := 0.0
		for r := i; r < j && r < k; r++ {
			disc += discount(r + 1)
		}
		s += sum / float64(j-i) * disc
		i = j
	}
	return s
}

// expectedRR is Expected Reciprocal Rank (Chapelle, Metzler, Zhang & Grinspan
// 2009, eq. 4 with R(g) = (2^g - 1) / 2^gmax):
// ERR = sum_r 1/r * R_r * prod_{i<r} (1 - R_i).
func expectedRR(grades []int, k, maxGrade int) float64 {
	s, stay := 0.0, 1.0
	top := math.Exp2(float64(maxGrade))
	for i := 0; i < k && i < len(grades); i++ {
		r := (math.Exp2(float64(grades[i])) - 1) / top
		s += stay * r / float64(i+1)
		stay *= 1 - r
	}
	return s
}

// precision is relevant-in-top-k / k (Manning, Raghavan & Schuetze 2008,
// ch. 8.4). A ranking shorter than k still divides by k; without a cut-off
// the ranking's length is used.
func precision(grades []int, o Options) float64 {
	den := o.K
	if den == 0 {
		den = len(grades)
	}
	if den == 0 {
		return 0
	}
	n := 0
	for i := 0; i < o.cut(len(grades)); i++ {
		if grades[i] >= o.Threshold {
			n++
		}
	}
	return float64(n) / float64(den)
}

// averagePrecision is the mean of the precision at the rank of each
// relevant document retrieved within the cut-off, over all relevant
// documents of the query in the qrels (Manning et al. 2008, ch. 8.4);
// relevant documents not retrieved contribute 0.
func averagePrecision(grades []int, relevant int, o Options) float64 {
	hits, s := 0, 0.0
	for i := 0; i < o.cut(len(grades)); i++ {
		if grades[i] >= o.Threshold {
			hits++
			s += float64(hits) / float64(i+1)
		}
	}
	return s / float64(relevant)
}

// QueryScores are the measures of one query.
type QueryScores struct {
	Query       string  `json:"query"`
	InRun       bool    `json:"in_run"`
	Retrieved   int     `json:"retrieved"`
	NDCG        float64 `json:"ndcg"`
	NDCGDefined bool    `json:"ndcg_defined"` // false: no document graded above 0
	ERR         float64 `json:"err"`
	Precision   float64 `json:"precision"`
	AP          float64 `json:"ap"`
	APDefined   bool    `json:"ap_defined"` // false: no document at or above the threshold
	Judged      float64 `json:"judged"`     // share of the top k (or fewer, if fewer retrieved) with a final grade
}

// Summary is an evaluation of one run.
type Summary struct {
	Options   Options       `json:"options"`
	Gain      string        `json:"gain"`
	PerQuery  []QueryScores `json:"per_query"` // every query of the qrels, by id
	Queries   int           `json:"queries"`
	NDCG      float64       `json:"ndcg"`      // mean over NDCGQueries
	ERR       float64       `json:"err"`       // mean over all queries
	Precision float64       `json:"precision"` // mean over all queries
	MAP       float64       `json:"map"`       // mean over APQueries
	Judged    float64       `json:"judged"`    // mean over all queries
	// NDCGQueries and APQueries count the queries where each is defined;
	// the rest are left out of that mean.
	NDCGQueries    int `json:"ndcg_queries"`
	APQueries      int `json:"ap_queries"`
	MissingFromRun int `json:"missing_from_run"` // qrels queries the run lacks (scored 0)
	RunOnly        int `json:"run_only"`         // run queries without qrels (ignored)
}

// Evaluate scores a run against qrels.
func Evaluate(q Qrels, run Run, o Options) (Summary, error) {
	if err := o.validate(); err != nil {
		return Summary{}, err
	}
	sum := Summary{Options: o, Gain: o.Gain.String()}
	queries := make([]string, 0, len(q))
	for qid, docs := range q {
		for d, g := range docs {
			if g < 0 || g > o.MaxGrade {
				return Summary{}, pertinent.Errorf(pertinent.Invalid, "rankeval", "query %q document %q: grade %d outside 0..%d", qid, d, g, o.MaxGrade)
			}
		}
		queries = append(queries, qid)
	}
	slices.Sort(queries)
	for qid := range run {
		if _, ok := q[qid]; !ok {
			sum.RunOnly++
		}
	}
	for _, qid := range queries {
		s, err := evalQuery(qid, q[qid], run[qid], o)
		if err != nil {
			return Summary{}, err
		}
		if _, ok := run[qid]; !ok {
			sum.MissingFromRun++
		}
		sum.PerQuery = append(sum.PerQuery, s)
		sum.ERR += s.ERR
		sum.Precision += s.Precision
		sum.Judged += s.Judged
		if s.NDCGDefined {
			sum.NDCG += s.NDCG
			sum.NDCGQueries++
		}
		if s.APDefined {
			sum.MAP += s.AP
			sum.APQueries++
		}
	}
	sum.Queries = len(queries)
	if n := float64(sum.Queries); n > 0 {
		sum.ERR /= n
		sum.Precision /= n
		sum.Judged /= n
	}
	if sum.NDCGQueries > 0 {
		sum.NDCG /= float64(sum.NDCGQueries)
	}
	if sum.APQueries > 0 {
		sum.MAP /= float64(sum.APQueries)
	}
	return sum, nil
}

func evalQuery(qid string, judged map[string]int, docs []ScoredDoc, o Options) (QueryScores, error) {
	s := QueryScores{Query: qid, InRun: docs != nil, Retrieved: len(docs)}
	ranked := Rank(docs)
	grades := make([]int, len(ranked))
	nJudged := 0
	k := o.cut(len(ranked))
	seen := make(map[string]struct{}, len(ranked))
	for i, d := range ranked {
		if _, dup := seen[d.DocID]; dup {
			return s, pertinent.Errorf(pertinent.Invalid, "rankeval", "query %q: document %q retrieved twice", qid, d.DocID)
		}
		seen[d.DocID] = struct{}{}
		if math.IsNaN(d.Score) {
			return s, pertinent.Errorf(pertinent.Invalid, "rankeval", "query %q document %q: score is NaN", qid, d.DocID)
		}
		g, ok := judged[d.DocID]
		grades[i] = g // 0 when unjudged: not relevant
		if ok && i < k {
			nJudged++
		}
	}
	if k > 0 {
		s.Judged = float64(nJudged) / float64(k)
	}
	ideal := make([]int, 0, len(judged))
	relevant := 0
	for _, g := range judged {
		ideal = append(ideal, g)
		if g >= o.Threshold {
			relevant++
		}
	}
	slices.Sort(ideal)
	slices.Reverse(ideal)
	if idcg := dcg(ideal, o.cut(len(ideal)), o.Gain); idcg > 0 {
		s.NDCGDefined = true
		var d float64
		if o.AverageTies {
			d = tieAveragedDCG(ranked, grades, k, o.Gain)
		} else {
			d = dcg(grades, k, o.Gain)
		}
		s.NDCG = d / idcg
	}
	s.ERR = expectedRR(grades, k, o.MaxGrade)
	s.Precision = precision(grades, o)
	if relevant > 0 {
		s.APDefined = true
		s.AP = averagePrecision(grades, relevant, o)
	}
	return s, nil
}
