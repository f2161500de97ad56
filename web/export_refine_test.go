package web

import (
	"context"
	"fmt"
	"net/http"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/store"
)

// The Export page's checkbox and the API's refine_by_preferences parameter refine the
// SVMlight labels by the preference answers: three documents, all graded 4, that both
// assessors order d0 > d1 > d2 get the labels 6, 5, 4 (export.RefineRule: grade 4 plus the
// place within the grade). Without it they are all 4. Refinement with qrels is refused.
func TestExportRefinedByPreferencesFromPageAndAPI(t *testing.T) {
	a := preferenceApp(t, withPairs(1, 3), withAssessors(2), withPerPair(2))
	ctx := context.Background()
	for idle := 0; idle < 2; {
		idle = 0
		for _, u := range a.assessors {
			v, err := a.store.NextComparison(ctx, a.project.ID, u.ID)
			if err != nil {
				idle++
				continue
			}
			outcome := "right"
			if v.Left.ExternalID < v.Right.ExternalID {
				outcome = "left"
			}
			if _, err := a.store.AnswerComparison(ctx, store.PreferenceSubmission{ComparisonID: v.ComparisonID, ProjectID: a.project.ID,
				UserID: u.ID, LeftDoc: v.Left.ID, Outcome: outcome}); err != nil {
				t.Fatal(err)
			}
		}
	}
	lead := a.signIn(a.lead.Username)
	_, page := a.get(lead, fmt.Sprintf("/projects/%d/export?refine_by_preferences=on", a.project.ID))
	if !strings.Contains(page, `name="refine_by_preferences" aria-describedby="refine-help" checked`) || !strings.Contains(page, "--refine-by-preferences --out DIR") {
		t.Errorf("the Export page does not offer the refinement, or does not keep it ticked")
	}
	const refined = "6 qid:1 # q0-d0\n5 qid:1 # q0-d1\n4 qid:1 # q0-d2\n"
	res, body := a.get(lead, fmt.Sprintf("/projects/%d/export.zip?format=svmlight&refine_by_preferences=on", a.project.ID))
	files := unzip(t, []byte(body))
	if res.StatusCode != http.StatusOK || files["all.svm"] != refined || !strings.Contains(files["manifest.json"], `"label_refinement": {`) {
		t.Fatalf("page download: %d\n%s\n%s", res.StatusCode, files["all.svm"], files["manifest.json"])
	}
	token, _, err := a.store.CreateAPIToken(ctx, a.lead.ID, "trainer")
	if err != nil {
		t.Fatal(err)
	}
	_, body = a.api("GET", fmt.Sprintf("/api/v1/projects/%d/export?format=svmlight&refine_by_preferences=1", a.project.ID), token, nil)
	if got := unzip(t, []byte(body)); got["all.svm"] != refined || got["manifest.json"] == "" {
		t.Errorf("API download:\n%s", got["all.svm"])
	}
	_, body = a.api("GET", fmt.Sprintf("/api/v1/projects/%d/export?format=svmlight", a.project.ID), token, nil)
	if got := unzip(t, []byte(body)); got["all.svm"] != "4 qid:1 # q0-d0\n4 qid:1 # q0-d1\n4 qid:1 # q0-d2\n" || strings.Contains(got["manifest.json"], "label_refinement") {
		t.Errorf("API download without refinement:\n%s", got["all.svm"])
	}
	// A project that asks for grades has nothing to refine by: its Export page does not offer it.
	g := newTestApp(t)
	if _, page := g.get(g.signIn(g.lead.Username), fmt.Sprintf("/projects/%d/export", g.project.ID)); !strings.Contains(page, `name="format"`) ||
		strings.Contains(page, "refine_by_preferences") {
		t.Errorf("a graded project's Export page offers the refinement")
	}
	if res, body := a.api("GET", fmt.Sprintf("/api/v1/projects/%d/export?format=qrels&refine_by_preferences=1", a.project.ID), token, nil); res.StatusCode != http.StatusBadRequest ||
		!strings.Contains(body, "SVMlight") {
		t.Errorf("qrels with refinement: %d %s", res.StatusCode, body)
	}
}
