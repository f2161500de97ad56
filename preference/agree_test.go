package preference

import (
	"math"
	"slices"
	"testing"
)

func pj(q, l, r string, o Outcome, a string) Judgment {
	return Judgment{Query: q, Left: l, Right: r, Outcome: o, Assessor: a}
}

// Krippendorff, "Computing Krippendorff's Alpha-Reliability" (2011), section A: binary data,
// two observers, ten units, α = 0.095 (1 − 19·8/(2·14·6) = 1 − 152/168). Values 0 and 1 are
// read here as the first or the second document better.
func TestAlphaKrippendorffBinaryExample(t *testing.T) {
	a := []int{0, 1, 0, 0, 0, 0, 0, 0, 1, 0}
	b := []int{1, 1, 1, 0, 0, 1, 0, 0, 0, 0}
	out := map[int]Outcome{0: LeftBetter, 1: RightBetter}
	var js []Judgment
	for u := range a {
		l, r := string(rune('a'+u)), string(rune('A'+u)) // "A" < "a": the pair's orientation is (r, l)
		js = append(js, pj("q", r, l, out[a[u]], "A"), pj("q", r, l, out[b[u]], "B"))
	}
	got, err := MeasureAgreement(js)
	if err != nil {
		t.Fatal(err)
	}
	if !got.Alpha.Alpha.OK || math.Abs(got.Alpha.Alpha.V-(1-152.0/168)) > 1e-12 {
		t.Errorf("alpha %v, want %.6f (0.095 in the source)", got.Alpha.Alpha, 1-152.0/168)
	}
	if got.Comparisons != 10 || got.Unanimous != 6 || got.Alpha.PairableValues != 20 {
		t.Errorf("%+v", got)
	}
}

// A three-outcome example worked by hand (categories 0 first better, 1 second, 2 same):
//
//	pair ab: 0 0 0      pair ac: 0 0 2      pair ad: 1 1 (and one neither, left out)
//	pair ae: 2 1 0      pair bc: 0 (one answer: not pairable)
//
// Coincidences o_ck = Σ (c,k pairs in a unit)/(m−1): o00 = 3 + 1 = 4, o11 = 2, o02 = o20 =
// 1 + ½, o01 = o10 = ½, o12 = o21 = ½, o22 = 0. Margins n0 = 6, n1 = 3, n2 = 2, n = 11.
// Observed Σ_{c≠k} o_ck = 5; expected Σ_{c≠k} n_c n_k = 2(18 + 12 + 6) = 72.
// α = 1 − (n − 1)·5/72 = 1 − 50/72 = 22/72. Unanimous: ab, ad (2 of 4); pairwise agreement:
// (1 + 2/6 + 1 + 0)/4 = 7/12.
func TestAlphaThreeOutcomesByHand(t *testing.T) {
	js := []Judgment{
		pj("q", "a", "b", LeftBetter, "x"), pj("q", "a", "b", LeftBetter, "y"), pj("q", "b", "a", RightBetter, "z"),
		pj("q", "a", "c", LeftBetter, "x"), pj("q", "c", "a", RightBetter, "y"), pj("q", "c", "a", Same, "z"),
		pj("q", "a", "d", RightBetter, "x"), pj("q", "d", "a", LeftBetter, "y"), pj("q", "a", "d", NeitherRelevant, "z"),
		pj("q", "a", "e", Same, "x"), pj("q", "a", "e", RightBetter, "y"), pj("q", "e", "a", RightBetter, "z"),
		pj("q", "b", "c", LeftBetter, "x"),
	}
	got, err := MeasureAgreement(js)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(got.Alpha.Alpha.V-22.0/72) > 1e-12 || got.Alpha.PairableValues != 11 || got.Alpha.PairableUnits != 4 {
		t.Errorf("alpha %+v, want %.6f over 11 values in 4 units", got.Alpha, 22.0/72)
	}
	if got.Comparisons != 4 || got.Unanimous != 2 || got.UnanimousShare.V != 0.5 ||
		math.Abs(got.Pairwise.V-7.0/12) > 1e-12 {
		t.Errorf("%+v", got)
	}
	// The same pair names in another query are another unit.
	var twice []Judgment
	for _, j := range js {
		twice = append(twice, j)
		j.Query = "r"
		twice = append(twice, j)
	}
	got2, _ := MeasureAgreement(twice)
	if got2.Comparisons != 8 || got2.Alpha.PairableValues != 22 {
		t.Errorf("two queries: %+v", got2)
	}
	none, _ := MeasureAgreement(js[12:])
	if none.UnanimousShare.OK || none.Pairwise.OK || none.Alpha.Alpha.OK {
		t.Errorf("one judgment: %+v", none)
	}
}

// A hand-built set: a > b, b > c, c > a by majority (one pair shown reversed, one decided 2
// to 1), d beats all three, and e ties a, which breaks no order. One circle; d and e are in
// none.
func TestIntransitive(t *testing.T) {
	js := []Judgment{
		pj("q", "a", "b", LeftBetter, "x"), pj("q", "a", "b", LeftBetter, "y"), pj("q", "a", "b", RightBetter, "z"),
		pj("q", "c", "b", RightBetter, "x"),
		pj("q", "c", "a", LeftBetter, "x"),
		pj("q", "d", "a", LeftBetter, "x"), pj("q", "b", "d", RightBetter, "x"), pj("q", "d", "c", LeftBetter, "x"),
		pj("q", "a", "e", LeftBetter, "x"), pj("q", "a", "e", RightBetter, "y"),
		pj("q", "e", "c", LeftBetter, "x"),
	}
	got, err := Intransitive("q", js)
	if err != nil {
		t.Fatal(err)
	}
	// e ties a, beats c: e > c > a, e = a: no circle through e.
	if want := []Triple{{"a", "b", "c"}}; !slices.Equal(got, want) {
		t.Errorf("%v, want %v", got, want)
	}
	// A third answer turns the tie into a > e, which closes a > e > c > a.
	got, _ = Intransitive("q", append(js, pj("q", "a", "e", LeftBetter, "z")))
	if want := []Triple{{"a", "b", "c"}, {"a", "e", "c"}}; !slices.Equal(got, want) {
		t.Errorf("%v, want %v", got, want)
	}
	fit, _ := FitBradleyTerry("q", nil, js, FitOptions{})
	if !slices.Equal(fit.Intransitive, []Triple{{"a", "b", "c"}}) {
		t.Errorf("fit reports %v", fit.Intransitive)
	}
}

// A run ranking c, a, b (d unranked) against judgments of two queries.
func TestRunAgreement(t *testing.T) {
	js := []Judgment{
		pj("q", "a", "b", LeftBetter, "x"), pj("q", "a", "b", LeftBetter, "y"), // agree ×2
		pj("q", "b", "c", LeftBetter, "x"),  // disagree
		pj("q", "c", "a", Same, "x"),        // no preference
		pj("q", "d", "a", RightBetter, "x"), // a ranked, d not: agree
		pj("q", "d", "e", LeftBetter, "x"),  // neither ranked
		pj("r", "a", "b", RightBetter, "x"), // query r ranks b first: agree
		pj("r", "a", "b", NeitherRelevant, "y"),
	}
	ranking := map[string][]string{"q": {"c", "a", "b"}, "r": {"b", "a"}}
	got, err := MeasureRunAgreement(js, ranking)
	if err != nil {
		t.Fatal(err)
	}
	want := RunAgreement{Agree: 4, Disagree: 1, NoPreference: 2, Unranked: 1}
	if got.Agree != want.Agree || got.Disagree != want.Disagree || got.NoPreference != want.NoPreference ||
		got.Unranked != want.Unranked || math.Abs(got.Share.V-0.8) > 1e-15 {
		t.Errorf("%+v, want %+v and share 0.8", got, want)
	}
	empty, _ := MeasureRunAgreement(js[3:4], ranking)
	if empty.Share.OK {
		t.Errorf("share defined without a preference: %+v", empty)
	}
	if _, err := MeasureRunAgreement([]Judgment{pj("q", "a", "b", 9, "x")}, ranking); err == nil {
		t.Error("an unknown outcome accepted")
	}
}
