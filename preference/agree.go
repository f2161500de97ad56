package preference

import (
	"github.com/pertinent/pertinent/agreement"
)

// Agreement is how far assessors agree on their preferences, over the pairs that two or more
// assessors answered with a preference or "about the same"; "neither relevant" answers
// are left out, as a "cannot judge" is in graded agreement.
type Agreement struct {
	// Comparisons counts the pairs with two or more such answers; Unanimous those whose
	// answers are all alike, and UnanimousShare their share.
	Comparisons    int             `json:"comparisons"`
	Unanimous      int             `json:"unanimous"`
	UnanimousShare agreement.Value `json:"unanimous_share"`
	// Pairwise is the share of agreeing pairs of assessors within a comparison, averaged over
	// comparisons (the observed agreement of Fleiss' kappa).
	Pairwise agreement.Value `json:"pairwise"`
	// Alpha is Krippendorff's alpha, nominal, over the three outcomes first better, second
	// better, about the same, with each pair read in one orientation.
	Alpha agreement.AlphaResult `json:"alpha"`
}

// MeasureAgreement measures agreement over judgments of any number of queries.
//
// Alpha is package agreement's, which takes a generic table of units by raters with
// categories 0..K−1: a unit is a query's pair (in the orientation of its smaller document
// id, so the same opinion shown either way round is one category), a rater an assessor and
// the three outcomes the categories 0, 1, 2. Nominal alpha needs no order among them.
func MeasureAgreement(judgments []Judgment) (Agreement, error) {
	d := agreement.NewData(3)
	var out Agreement
	var pairwise float64
	for q, js := range ByQuery(judgments) {
		t, err := tallies(q, js, true)
		if err != nil {
			return Agreement{}, err
		}
		for _, p := range t.sortedPairs() {
			var counts [3]int
			n := 0
			for assessor, o := range t.answers[p] {
				c := category(o)
				if c < 0 {
					continue
				}
				counts[c]++
				n++
				if err := d.Add(q+"\x00"+p.A+"\x00"+p.B, assessor, c); err != nil {
					return Agreement{}, err
				}
			}
			if n < 2 {
				continue
			}
			out.Comparisons++
			var agreeing int
			for _, c := range counts {
				agreeing += c * (c - 1)
				if c == n {
					out.Unanimous++
				}
			}
			pairwise += float64(agreeing) / float64(n*(n-1))
		}
	}
	if out.Comparisons == 0 {
		why := agreement.Value{Why: "no pair has two or more preference judgments"}
		out.UnanimousShare, out.Pairwise = why, why
	} else {
		out.UnanimousShare = agreement.Value{V: float64(out.Unanimous) / float64(out.Comparisons), OK: true}
		out.Pairwise = agreement.Value{V: pairwise / float64(out.Comparisons), OK: true}
	}
	out.Alpha = agreement.Alpha(d, agreement.Nominal)
	return out, nil
}

// category is an outcome's category for alpha, or -1 for neither relevant.
func category(o Outcome) int {
	switch o {
	case LeftBetter:
		return 0
	case RightBetter:
		return 1
	case Same:
		return 2
	}
	return -1
}

// RunAgreement is how often a run orders documents the way assessors preferred them.
type RunAgreement struct {
	// Agree and Disagree count the judgments with a preference (left or right better) whose
	// order the run keeps or reverses; Share is Agree / (Agree + Disagree), so a pair counts
	// as often as it was judged.
	Agree    int             `json:"agree"`
	Disagree int             `json:"disagree"`
	Share    agreement.Value `json:"share"`
	// NoPreference counts judgments of about the same or neither relevant; Unranked those of
	// pairs the run ranks neither document of. Both are left out of Share.
	NoPreference int `json:"no_preference"`
	Unranked     int `json:"unranked"`
}

// MeasureRunAgreement compares judgments of any number of queries with a run's rankings:
// for each query, its documents best first. A document the run ranks stands above one it
// does not rank (it was retrieved, the other not).
func MeasureRunAgreement(judgments []Judgment, ranking map[string][]string) (RunAgreement, error) {
	var out RunAgreement
	for q, js := range ByQuery(judgments) {
		t, err := tallies(q, js, true)
		if err != nil {
			return RunAgreement{}, err
		}
		rank := map[string]int{}
		for i, d := range ranking[q] {
			if _, ok := rank[d]; !ok {
				rank[d] = i
			}
		}
		for _, p := range t.pairs {
			v := t.votes[p]
			out.NoPreference += v.Same + v.Neither
			ra, okA := rank[p.A]
			rb, okB := rank[p.B]
			switch {
			case !okA && !okB:
				out.Unranked += v.A + v.B
				continue
			case !okA:
				ra = len(ranking[q])
			case !okB:
				rb = len(ranking[q])
			}
			if ra < rb {
				out.Agree += v.A
				out.Disagree += v.B
			} else {
				out.Agree += v.B
				out.Disagree += v.A
			}
		}
	}
	if n := out.Agree + out.Disagree; n > 0 {
		out.Share = agreement.Value{V: float64(out.Agree) / float64(n), OK: true}
	} else {
		out.Share = agreement.Value{Why: "no judged preference is between documents the run ranks"}
	}
	return out, nil
}
