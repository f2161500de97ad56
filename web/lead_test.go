package web

import (
	"context"
	"net/http"
	"net/url"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/store"
)

// seedLead gives the Kettles project a third assessor, a gold pair, grades on every pair
// (some disagreeing), one "disturbing" flag and one "cannot judge: broken".
func seedLead(t *testing.T, a *testApp) {
	t.Helper()
	ctx := context.Background()
	dee, err := a.store.CreateUser(ctx, "dee", "Dee", store.RoleAssessor, testPassword)
	if err != nil {
		t.Fatal(err)
	}
	a.users["dee"] = dee
	if err := a.store.SetMember(ctx, a.project.ID, dee.ID, store.RoleAssessor, a.users["root"].ID); err != nil {
		t.Fatal(err)
	}
	grades := map[string][]int{ // per pair, -1 = disturbing, -2 = broken
		"amir": {0, 2, 3, 4, 1, 2},
		"bea":  {0, 3, 3, 2, 1, -1},
		"dee":  {1, 2, 3, 4, -2, 0},
	}
	base := time.Now().Add(-200 * time.Hour) // every judgment in the past
	err = a.store.Load(ctx, a.project.ID, func(l *store.Loader) error {
		// The first pair becomes a gold pair with grade 0.
		qid, err := l.Query(store.Query{ExternalID: "k1", Text: "quiet electric kettle"})
		if err != nil {
			return err
		}
		zero := 0
		doc := store.Document{ExternalID: "quiet electric kettlea", Title: "Kettle model A", Body: "A kettle."}
		if _, err := addPair(l, store.PairSpec{QueryID: qid, GoldGrade: &zero}, doc); err != nil {
			return err
		}
		n := 0
		for _, who := range []string{"amir", "bea", "dee"} {
			for i, g := range grades[who] {
				n++
				j := store.RecordedJudgment{PairID: a.pairs[i], UserID: a.users[who].ID, TimeSpentMs: 1000 * n,
					At: base.Add(time.Duration(n) * 7 * time.Hour).UTC().Format("2006-01-02T15:04:05.000Z")}
				switch g {
				case -1:
					j.CannotJudge = "disturbing"
				case -2:
					j.CannotJudge = "broken"
				default:
					j.Grade = &g
				}
				if err := l.Judgment(j); err != nil {
					return err
				}
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
}

var (
	figureRE    = regexp.MustCompile(`data-figure="([^"]+)" data-value="([^"]*)"`)
	undefinedRE = regexp.MustCompile(`data-figure="([^"]+)" data-undefined="([^"]*)"`)
)

// figures reads every data-figure of a page: exact values, and "undefined: why" for the rest.
func figures(t *testing.T, body string) map[string]string {
	t.Helper()
	out := map[string]string{}
	for _, m := range figureRE.FindAllStringSubmatch(body, -1) {
		out[m[1]] = m[2]
	}
	for _, m := range undefinedRE.FindAllStringSubmatch(body, -1) {
		out[m[1]] = "undefined: " + m[2]
	}
	if strings.Contains(body, "NaN") {
		t.Error("a page shows NaN")
	}
	return out
}

func checkFigure(t *testing.T, page string, figs map[string]string, name string, want agreement.Value) {
	t.Helper()
	got, ok := figs[name]
	if !ok {
		t.Errorf("%s: no figure %q", page, name)
		return
	}
	if !want.OK {
		if !strings.HasPrefix(got, "undefined: ") {
			t.Errorf("%s: %s = %s, want undefined (%s)", page, name, got, want.Why)
		}
		return
	}
	if got != strconv.FormatFloat(want.V, 'g', -1, 64) {
		t.Errorf("%s: %s = %s, want %v", page, name, got, want.V)
	}
}

func (a *testApp) page(c *http.Client, path string) string {
	a.t.Helper()
	res, body := a.get(c, path)
	if res.StatusCode != http.StatusOK {
		a.t.Fatalf("GET %s: %d", path, res.StatusCode)
	}
	return body
}

// The pages show exactly the agreement package's numbers on the same judgments.
func TestLeadPagesShowTheAgreementPackagesNumbers(t *testing.T) {
	a := newTestApp(t)
	seedLead(t, a)
	ctx := context.Background()
	data, gold, err := a.store.AgreementData(ctx, a.project.ID)
	if err != nil {
		t.Fatal(err)
	}
	rep := agreement.Compute(data, agreement.Options{Gold: gold})
	boot := agreement.Bootstrap(data, agreement.BootstrapOptions{Replicates: store.BootstrapReplicates(data.Judgments()), Seed: store.BootstrapSeed})
	c := a.signIn("lena")
	base := "/projects/" + strconv.FormatInt(a.project.ID, 10)

	ov := figures(t, a.page(c, base+"/overview"))
	checkFigure(t, "overview", ov, "fleiss-kappa", rep.FleissKappa)
	checkFigure(t, "overview", ov, "fleiss-kappa-lo", rep.Fleiss.CI.Lo)
	checkFigure(t, "overview", ov, "fleiss-kappa-hi", rep.Fleiss.CI.Hi)
	checkFigure(t, "overview", ov, "alpha-ordinal", rep.KrippendorffAlpha.Ordinal)
	checkFigure(t, "overview", ov, "alpha-ordinal-lo", boot.Alpha.Ordinal.Lo)
	checkFigure(t, "overview", ov, "alpha-ordinal-hi", boot.Alpha.Ordinal.Hi)
	checkFigure(t, "overview", ov, "mean-kappa", rep.MeanQuadraticKappa)
	checkFigure(t, "overview", ov, "mean-kappa-lo", boot.MeanQuadraticKappa.Lo)
	checkFigure(t, "overview", ov, "mean-kappa-hi", boot.MeanQuadraticKappa.Hi)
	if !rep.FleissKappa.OK || !rep.KrippendorffAlpha.Ordinal.OK {
		t.Fatalf("the seeded data should give defined kappa and alpha: %+v", rep.Undefined)
	}
	for name, want := range map[string]string{"flagged": "1", "judgments": "18", "cannot-judge": "2", "pairs": "5", "time-median": "9500"} {
		if ov[name] != want {
			t.Errorf("overview %s = %q, want %s", name, ov[name], want)
		}
	}

	as := figures(t, a.page(c, base+"/assessors"))
	stats, _ := agreement.RaterFigures(data, gold)
	if len(stats) != 3 {
		t.Fatalf("%d raters", len(stats))
	}
	for _, s := range stats {
		checkFigure(t, "assessors", as, "mean-kappa:"+s.Rater, s.MeanKappaQuadratic)
		checkFigure(t, "assessors", as, "consensus-agreement:"+s.Rater, s.ConsensusAgreement)
		checkFigure(t, "assessors", as, "consensus-mae:"+s.Rater, s.ConsensusMAE)
		checkFigure(t, "assessors", as, "gold-accuracy:"+s.Rater, s.GoldAccuracy)
		checkFigure(t, "assessors", as, "gold-mae:"+s.Rater, s.GoldMAE)
		if !s.GoldAccuracy.OK {
			t.Errorf("%s graded the gold pair; accuracy should be defined", s.Rater)
		}
		// Six judgments each: too few for drift, which must say so rather than show a number.
		if got := as["drift:"+s.Rater]; !strings.HasPrefix(got, "undefined: needs more than 50") {
			t.Errorf("drift of %s: %q", s.Rater, got)
		}
	}

	ag := figures(t, a.page(c, base+"/agreement"))
	for _, m := range agreement.Metrics {
		checkFigure(t, "agreement", ag, "alpha-"+m.String(), rep.KrippendorffAlpha.Get(m))
	}
	for _, p := range rep.Cohen {
		checkFigure(t, "agreement", ag, "cohen-quadratic:"+p.A+"|"+p.B, p.KappaQuadratic)
		checkFigure(t, "agreement", ag, "cohen:"+p.A+"|"+p.B, p.Kappa)
	}
	for _, g := range rep.Fleiss.PerGrade {
		checkFigure(t, "agreement", ag, "fleiss-grade:"+strconv.Itoa(g.Grade), g.Kappa)
	}
	// Per-query alpha equals alpha computed on that query's pairs alone (pairs 0-2 are k1).
	k1 := agreement.NewData(5)
	err = a.store.Ratings(ctx, a.project.ID, func(r store.Rating) error {
		for _, p := range a.pairs[:3] {
			if r.PairID == p {
				return k1.AddID(r.PairID, r.UserID, r.Grade)
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	checkFigure(t, "agreement", ag, "query-alpha:k1", agreement.Alphas(k1).Ordinal)

	// The queue: flagged pair first, then the gold miss, then spreads; agreeing pairs absent.
	_, q := a.get(c, base+"/queue")
	order := regexp.MustCompile(`data-pair="(\d+)"`).FindAllStringSubmatch(q, -1)
	var got []string
	for _, m := range order {
		got = append(got, m[1])
	}
	id := func(i int) string { return strconv.FormatInt(a.pairs[i], 10) }
	want := []string{id(5), id(0), id(3), id(1)}
	if strings.Join(got, ",") != strings.Join(want, ",") {
		t.Errorf("queue order %v, want %v (flagged, gold miss, spread 2, spread 1)", got, want)
	}
	// CSV of the same table.
	res, csvBody := a.get(c, base+"/queue?format=csv")
	if ct := res.Header.Get("Content-Type"); !strings.HasPrefix(ct, "text/csv") || !strings.HasPrefix(csvBody, "pair,query,") || strings.Count(csvBody, "\n") != 5 {
		t.Errorf("queue CSV: %s\n%s", ct, csvBody)
	}
	res, csvBody = a.get(c, base+"/assessors?format=csv")
	if res.StatusCode != 200 || strings.Count(csvBody, "\n") != 4 || !strings.Contains(csvBody, "dee,6,") {
		t.Errorf("assessors CSV:\n%s", csvBody)
	}
}

// Every lead page refuses assessors (403) and admits the lead and the admin.
func TestLeadPagesRefuseAssessors(t *testing.T) {
	a := newTestApp(t)
	seedLead(t, a)
	base := "/projects/" + strconv.FormatInt(a.project.ID, 10)
	pair := strconv.FormatInt(a.pairs[1], 10)
	paths := []string{"/overview", "/overview?format=csv", "/assessors", "/assessors?format=csv",
		"/assessors/" + strconv.FormatInt(a.users["amir"].ID, 10), "/agreement", "/agreement?format=csv&table=queries",
		"/queue", "/queue?format=csv", "/pairs/" + pair + "/adjudicate"}
	amir, lena, root := a.signIn("amir"), a.signIn("lena"), a.signIn("root")
	for _, p := range paths {
		if res, _ := a.get(amir, base+p); res.StatusCode != http.StatusForbidden {
			t.Errorf("assessor GET %s: %d, want 403", p, res.StatusCode)
		}
		for _, c := range []*http.Client{lena, root} {
			if res, _ := a.get(c, base+p); res.StatusCode != http.StatusOK {
				t.Errorf("lead/admin GET %s: %d, want 200", p, res.StatusCode)
			}
		}
	}
	res := a.post(amir, base+"/pairs/"+pair+"/adjudicate", url.Values{"grade": {"4"}})
	if res.StatusCode != http.StatusForbidden {
		t.Errorf("assessor POST adjudicate: %d, want 403", res.StatusCode)
	}
	if h, _ := a.store.Adjudications(context.Background(), a.pairs[1]); len(h) != 0 {
		t.Error("an assessor's adjudication was stored")
	}
	if res, _ := a.get(lena, base+"/feedback"); res.StatusCode != http.StatusForbidden {
		t.Errorf("feedback is the assessors' page; lead got %d", res.StatusCode)
	}
}

// Adjudicating through the plain form stores the final grade, removes the pair from the
// queue, and shows the assessors who differ the rationale, never a colleague's identity.
func TestAdjudicateByFormAndFeedback(t *testing.T) {
	a := newTestApp(t)
	seedLead(t, a)
	base := "/projects/" + strconv.FormatInt(a.project.ID, 10)
	lena := a.signIn("lena")
	pair := a.pairs[3] // amir 4, bea 2, dee 4
	page := a.page(lena, base+"/pairs/"+strconv.FormatInt(pair, 10)+"/adjudicate")
	for _, want := range []string{"amir", "bea", "dee", `data-estimate="median">4`, `data-estimate="majority">4`, `data-estimate="mean">3.33`} {
		if !strings.Contains(page, want) {
			t.Errorf("adjudication page lacks %q", want)
		}
	}
	res := a.post(lena, base+"/pairs/"+strconv.FormatInt(pair, 10)+"/adjudicate",
		url.Values{"grade": {"4"}, "rationale": {"the model list matches exactly"}, "next": {base + "/queue"}})
	if res.StatusCode != http.StatusSeeOther || res.Header.Get("Location") != base+"/queue" {
		t.Fatalf("adjudicate: %d %s", res.StatusCode, res.Header.Get("Location"))
	}
	if _, q := a.get(lena, base+"/queue"); strings.Contains(q, `data-pair="`+strconv.FormatInt(pair, 10)+`"`) {
		t.Error("adjudicated pair still in the queue")
	}
	bea := a.signIn("bea")
	fb := a.page(bea, base+"/feedback")
	if !strings.Contains(fb, "the model list matches exactly") || !strings.Contains(fb, `data-pair="`+strconv.FormatInt(pair, 10)+`"`) {
		t.Error("bea's feedback lacks the differing pair and its rationale")
	}
	for _, other := range []string{"amir", "Amir", "dee", "Dee"} {
		if strings.Contains(strings.ReplaceAll(fb, "Bea", ""), other) {
			t.Errorf("bea's feedback names %s", other)
		}
	}
	if fb := a.page(a.signIn("amir"), base+"/feedback"); strings.Contains(fb, "the model list matches exactly") {
		t.Error("amir agreed with the final grade and should have no feedback for it")
	}
	// A grade off the scale is refused with the form shown again.
	if res := a.post(lena, base+"/pairs/"+strconv.FormatInt(pair, 10)+"/adjudicate", url.Values{"grade": {"9"}}); res.StatusCode != http.StatusBadRequest {
		t.Errorf("grade 9: %d, want 400", res.StatusCode)
	}
}
