package rankeval

import (
	"math"
	"testing"
)

func near(a, b, tol float64) bool { return math.Abs(a-b) <= tol }

// handQrels and handRun: query "q1" is the worked example below; "q2" is
// missing from the run; "q3" has no relevant document; "zz" is only in
// the run.
func handQrels() Qrels {
	return Qrels{
		"q1": {"d1": 3, "d2": 2, "d3": 0, "d4": 1, "d5": 2},
		"q2": {"e1": 4},
		"q3": {"f1": 0, "f2": 0},
	}
}

func handRun() Run {
	return Run{
		// ranked: d3 (grade 0), d1 (3), d6 (unjudged), d2 (2), d4 (1)
		"q1": {{"d2", 2}, {"d6", 3}, {"d4", 1}, {"d3", 5}, {"d1", 4}},
		"q3": {{"f1", 1}, {"x", 2}},
		"zz": {{"d1", 1}},
	}
}

// Worked example for q1, computed by hand from the definitions.
// Grades in rank order: 0, 3, 0(unjudged), 2, 1. Discounts 1/log2(r+1):
// 1, 0.6309298, 0.5, 0.4306766, 0.3868528.
//
// NDCG, exponential gain 2^g-1 (Burges et al. 2005; Jarvelin & Kekalainen
// 2002 for DCG/NDCG): gains 0, 7, 0, 3, 1.
//
//	DCG@5  = 7*0.6309298 + 3*0.4306766 + 1*0.3868528 = 6.0953908
//	ideal grades 3,2,2,1,0 -> gains 7,3,3,1,0:
//	IDCG@5 = 7 + 3*0.6309298 + 3*0.5 + 1*0.4306766 = 10.8234658
//	NDCG@5 = 0.5631644
//	DCG@3 = 4.4165083, IDCG@3 = 7 + 1.8927893 + 1.5 = 10.3927893, NDCG@3 = 0.4249589
//
// NDCG@5, linear gain: DCG = 3*0.6309298 + 2*0.4306766 + 1*0.3868528 =
// 3.1409952; IDCG = 3 + 2*0.6309298 + 2*0.5 + 0.4306766 = 5.6925361;
// NDCG = 0.5517743.
//
// ERR (Chapelle et al. 2009), top grade 4: R = (2^g-1)/16 = 0, 7/16, 0,
// 3/16, 1/16.
//
//	ERR@5 = (1/2)(7/16) + (1/4)(3/16)(9/16) + (1/5)(1/16)(9/16)(13/16)
//	      = 0.21875 + 0.0263671875 + 0.005712890625 = 0.250830078125
//	ERR@3 = 0.21875
//
// Threshold 2 (relevant: d1, d2, d5; R = 3), definitions of Manning,
// Raghavan & Schuetze (2008) ch. 8.4: relevant at ranks 2 and 4.
//
//	P@3 = 1/3, P@5 = 2/5
//	AP@5 = (1/2 + 2/4) / 3 = 1/3 (d5 not retrieved adds 0)
//	AP@3 = (1/2) / 3 = 1/6
//
// judged@5 = 4/5 (d6 unjudged), judged@3 = 2/3.
func TestWorkedExample(t *testing.T) {
	cases := []struct {
		o                                 Options
		ndcg, err, p, ap, judged, meanERR float64
	}{
		{Options{K: 5, Gain: GainExponential, Threshold: 2, MaxGrade: 4}, 0.5631644113, 0.250830078125, 2.0 / 5, 1.0 / 3, 4.0 / 5, 0},
		{Options{K: 3, Gain: GainExponential, Threshold: 2, MaxGrade: 4}, 0.4249588983, 0.21875, 1.0 / 3, 1.0 / 6, 2.0 / 3, 0},
		{Options{K: 5, Gain: GainLinear, Threshold: 2, MaxGrade: 4}, 0.5517743143, 0.250830078125, 2.0 / 5, 1.0 / 3, 4.0 / 5, 0},
		{Options{K: 0, Gain: GainExponential, Threshold: 2, MaxGrade: 4}, 0.5631644113, 0.250830078125, 2.0 / 5, 1.0 / 3, 4.0 / 5, 0},
	}
	for _, c := range cases {
		s, err := Evaluate(handQrels(), handRun(), c.o)
		if err != nil {
			t.Fatal(err)
		}
		q1 := s.PerQuery[0]
		if q1.Query != "q1" || !near(q1.NDCG, c.ndcg, 1e-9) || !near(q1.ERR, c.err, 1e-12) ||
			!near(q1.Precision, c.p, 1e-12) || !near(q1.AP, c.ap, 1e-12) || !near(q1.Judged, c.judged, 1e-12) {
			t.Errorf("%+v: q1 = %+v", c.o, q1)
		}
		// q2 is missing from the run: every measure 0, NDCG and AP defined.
		q2 := s.PerQuery[1]
		if q2.InRun || q2.NDCG != 0 || !q2.NDCGDefined || !q2.APDefined || q2.ERR != 0 || q2.Judged != 0 {
			t.Errorf("q2 = %+v", q2)
		}
		// q3 has no relevant document: NDCG and AP undefined, left out.
		q3 := s.PerQuery[2]
		if q3.NDCGDefined || q3.APDefined || q3.Judged != 0.5 || q3.Retrieved != 2 {
			t.Errorf("q3 = %+v", q3)
		}
		if s.Queries != 3 || s.NDCGQueries != 2 || s.APQueries != 2 || s.MissingFromRun != 1 || s.RunOnly != 1 {
			t.Errorf("counts %+v", s)
		}
		if !near(s.NDCG, c.ndcg/2, 1e-9) || !near(s.MAP, c.ap/2, 1e-12) || !near(s.ERR, c.err/3, 1e-12) ||
			!near(s.Precision, c.p/3, 1e-12) || !near(s.Judged, (c.judged+0+0.5)/3, 1e-12) {
			t.Errorf("%+v: means %+v", c.o, s)
		}
	}
}

func TestRankBreaksTiesByDocIDDescending(t *testing.T) {
	got := Rank([]ScoredDoc{{"a", 1}, {"c", 2}, {"b", 1}, {"d", 0.5}})
	want := []string{"c", "b", "a", "d"}
	for i, d := range got {
		if d.DocID != want[i] {
			t.Fatalf("rank %d: %s, want %s", i+1, d.DocID, want[i])
		}
	}
}

// Two documents tied at the top, grades 3 and 0, linear gain. Broken by id
// (b before a): DCG = 0*1 + 3*0.6309298 -> NDCG 0.6309298. Averaged over
// the tie (McSherry & Najork 2008): 1.5*(1 + 0.6309298) / 3 = 0.8154649.
func TestAverageTies(t *testing.T) {
	q := Qrels{"q": {"a": 3, "b": 0}}
	r := Run{"q": {{"a", 1}, {"b", 1}}}
	o := Options{Gain: GainLinear, Threshold: 1, MaxGrade: 4}
	s, _ := Evaluate(q, r, o)
	if !near(s.NDCG, 0.6309297536, 1e-9) {
		t.Errorf("ties broken by id: %v", s.NDCG)
	}
	o.AverageTies = true
	s, _ = Evaluate(q, r, o)
	if !near(s.NDCG, 0.8154648768, 1e-9) {
		t.Errorf("ties averaged: %v", s.NDCG)
	}
}

func TestEvaluateRejects(t *testing.T) {
	ok := Options{K: 10, Threshold: 1, MaxGrade: 4}
	bad := []struct {
		q Qrels
		r Run
		o Options
	}{
		{handQrels(), handRun(), Options{Threshold: 0, MaxGrade: 4}},
		{handQrels(), handRun(), Options{Threshold: 1, MaxGrade: 0}},
		{handQrels(), handRun(), Options{K: -1, Threshold: 1, MaxGrade: 4}},
		{handQrels(), handRun(), Options{Gain: 7, Threshold: 1, MaxGrade: 4}},
		{Qrels{"q": {"d": 5}}, Run{}, ok},
		{Qrels{"q": {"d": -1}}, Run{}, ok},
		{Qrels{"q": {"d": 1}}, Run{"q": {{"d", 1}, {"d", 2}}}, ok},
		{Qrels{"q": {"d": 1}}, Run{"q": {{"d", math.NaN()}}}, ok},
	}
	for i, c := range bad {
		if _, err := Evaluate(c.q, c.r, c.o); err == nil {
			t.Errorf("case %d accepted", i)
		}
	}
}
