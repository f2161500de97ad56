package web

import (
	"context"
	"encoding/json"
	"fmt"
	"html"
	"io"
	"math/rand/v2"
	"net/http"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/rankeval"
	"github.com/pertinent/pertinent/store"
)

// effectsApp is a project of 30 queries × 10 lamps graded by three of five assessors a pair,
// a003 at random and the others by the true grade, with eight kept runs of clearly growing noise.
func effectsApp(t *testing.T) *testApp {
	t.Helper()
	a := newTestApp(t, withAssessors(5), withPerPair(3))
	ctx := context.Background()
	rng := rand.New(rand.NewPCG(9, 10))
	runs := make([]strings.Builder, 8)
	err := a.store.Load(ctx, a.project.ID, func(l *store.Loader) error {
		for q := range 30 {
			qid, err := l.Query(store.Query{ExternalID: fmt.Sprintf("q%d", q), Text: fmt.Sprintf("desk lamp %d", q)})
			if err != nil {
				return err
			}
			for d := range 10 {
				ext := fmt.Sprintf("q%d-d%d", q, d)
				pid, err := addPair(l, store.PairSpec{QueryID: qid}, store.Document{ExternalID: ext, Title: "Lamp " + ext})
				if err != nil {
					return err
				}
				truth := min(int(rng.ExpFloat64()*1.2), 4)
				for i := range runs {
					fmt.Fprintf(&runs[i], "q%d Q0 %s 0 %.4f r%d\n", q, ext, float64(truth)+(0.3+0.4*float64(i))*rng.NormFloat64(), i)
				}
				for _, k := range rng.Perm(5)[:3] {
					g := truth
					if k == 3 {
						g = rng.IntN(5)
					}
					if err := l.Judgment(store.RecordedJudgment{PairID: pid, UserID: a.assessors[k].ID, Grade: &g}); err != nil {
						return err
					}
				}
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	for i := range runs {
		if _, err := a.store.KeepRun(ctx, a.project.ID, a.lead.ID, fmt.Sprintf("r%d", i), strings.NewReader(runs[i].String())); err != nil {
			t.Fatal(err)
		}
	}
	return a
}

// The page, its downloads and the API show one computation: every figure of the page equals
// the API's number, and the random grader is named on both.
func TestEffectsPageEqualsTheAPI(t *testing.T) {
	a := effectsApp(t)
	lead := a.signIn("leader")
	page := a.page(lead, fmt.Sprintf("/projects/%d/assessor-effects", a.project.ID))
	figs := figures(t, page)
	token := newToken(t, a, lead)
	res, body := a.api("GET", fmt.Sprintf("/api/v1/projects/%d/assessor-effects", a.project.ID), token, nil)
	if res.StatusCode != http.StatusOK {
		t.Fatalf("API: %d %s", res.StatusCode, body)
	}
	var e store.AssessorEffects
	if err := json.Unmarshal([]byte(body), &e); err != nil {
		t.Fatal(err)
	}
	if e.Standout != "a003" || figs["standout"] != "a003" {
		t.Errorf("standout: API %q, page %q", e.Standout, figs["standout"])
	}
	if len(e.Leniency) != 5 || len(e.Alone) != 5 || len(e.Runs) != 8 {
		t.Fatalf("API: %d leniency rows, %d effects, runs %v", len(e.Leniency), len(e.Alone), e.Runs)
	}
	for _, l := range e.Leniency {
		checkFigure(t, "effects", figs, "mean-diff:"+l.Rater, l.MeanDiff)
		checkFigure(t, "effects", figs, "mean-diff-low:"+l.Rater, l.CI.Lo)
		checkFigure(t, "effects", figs, "over:"+l.Rater, l.Over)
	}
	for name, effects := range map[string][]rankeval.AssessorEffect{"alone": e.Alone, "replaced": e.Replaced, "left-out": e.LeftOut} {
		for _, x := range effects {
			checkFigure(t, "effects", figs, name+"-tau:"+x.Assessor, agreement.Value{V: x.Order.Tau, OK: x.Order.TauDefined})
		}
	}
	// The leniency download holds the API's numbers too.
	_, csv := a.get(lead, fmt.Sprintf("/projects/%d/assessor-effects?format=csv&table=leniency", a.project.ID))
	if !strings.HasPrefix(csv, "assessor,pairs,mean_diff,") || !strings.Contains(csv, "a003,") {
		t.Errorf("leniency download:\n%s", csv)
	}
}

// The Sources page shows each source's provenance, the caution, and the API's numbers; a
// qrels file sent through the import page carries the source's kind and provenance.
func TestSourcesPageEqualsTheAPI(t *testing.T) {
	a := effectsApp(t)
	lead := a.signIn("leader")
	var qrels strings.Builder
	for q := range 30 {
		for d := range 10 {
			fmt.Fprintf(&qrels, "q%d 0 q%d-d%d %d\n", q, q, d, (q+d)%5)
		}
	}
	res := a.postImport(lead, a.project.ID, map[string]string{"kind": "qrels", "source": "grader-llm", "source_kind": "model",
		"source_about": "model=ridge-9\nprompt_sha256=" + strings.Repeat("0f", 32)}, "llm.qrels", qrels.String())
	if done := a.importDone(lead, res); !strings.Contains(done, "grader-llm") {
		t.Fatalf("import report:\n%s", done)
	}
	bad := a.postImport(lead, a.project.ID, map[string]string{"kind": "qrels", "source": "other", "source_kind": "model", "source_about": "model=x\nno value"}, "x.qrels", "q1 0 q1-d1 2\n")
	if b, _ := io.ReadAll(bad.Body); bad.StatusCode != http.StatusBadRequest || !strings.Contains(string(b), "provenance line 2: write KEY=VALUE") {
		t.Errorf("a provenance line without =: %d\n%s", bad.StatusCode, b)
	}
	page := a.page(lead, fmt.Sprintf("/projects/%d/sources", a.project.ID))
	token := newToken(t, a, lead)
	_, body := a.api("GET", fmt.Sprintf("/api/v1/projects/%d/sources", a.project.ID), token, nil)
	var c store.SourceComparison
	if err := json.Unmarshal([]byte(body), &c); err != nil || len(c.Sources) != 1 {
		t.Fatalf("API: %v %s", err, body)
	}
	f := c.Sources[0]
	if f.Kind != store.SourceModel || f.About["model"] != "ridge-9" || f.Report.N != 300 || f.Order == nil {
		t.Fatalf("API: %+v", f)
	}
	figs := figures(t, page)
	checkFigure(t, "sources", figs, "source-kappa:grader-llm", f.Report.KappaLinear.Kappa)
	checkFigure(t, "sources", figs, "source-kappa-low:grader-llm", f.Report.KappaLinear.CI.Lo)
	checkFigure(t, "sources", figs, "source-above:grader-llm", f.Report.Above)
	checkFigure(t, "sources", figs, "source-tau:grader-llm", agreement.Value{V: f.Order.Tau, OK: f.Order.TauDefined})
	for g, r := range f.Report.Grades {
		checkFigure(t, "sources", figs, fmt.Sprintf("recall:grader-llm:%d", g), r.Recall)
	}
	for _, want := range []string{"not a substitute for people", "circular", "ridge-9", "prompt_sha256", html.EscapeString(f.Report.Summary)} {
		if !strings.Contains(page, want) {
			t.Errorf("the Sources page lacks %q", want)
		}
	}
	// The source is not an assessor: the effects leave it out.
	e, err := a.store.AssessorEffects(context.Background(), a.project.ID)
	if err != nil {
		t.Fatal(err)
	}
	for _, l := range e.Leniency {
		if l.Rater == "grader-llm" {
			t.Error("the source is counted among the assessors")
		}
	}
}
