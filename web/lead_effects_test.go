package web

import (
	"context"
	"encoding/json"
	"fmt"
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
