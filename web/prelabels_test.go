package web

import (
	"context"
	"fmt"
	"net/http"
	"net/url"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/store"
)

// sourceGrades imports source model-x's grades of every lamp pair (all the same grade) with
// a confidence per pair, as a machine source's qrels with the fifth column.
func sourceGrades(t *testing.T, a *testApp, grade int) {
	t.Helper()
	var qrels strings.Builder
	for q := range 2 {
		for d := range 3 {
			fmt.Fprintf(&qrels, "q%d 0 q%d-d%d %d 0.%d1\n", q, q, d, grade, q*3+d)
		}
	}
	if _, err := a.store.Import(context.Background(), a.project.ID, a.lead.ID, store.ImportSpec{Kind: store.ImportQrels, Source: "model-x", SourceKind: store.SourceModel},
		[]store.ImportFile{{Name: "model-x.qrels", R: strings.NewReader(qrels.String())}}); err != nil {
		t.Fatal(err)
	}
}

// A source's grade chooses what comes first but never reaches an assessor: no page an
// assessor can open names the source, and every such page reads the same byte for byte
// whatever grade the source gave.
func TestPrelabelsNeverReachAssessors(t *testing.T) {
	a := calibrationApp(t)
	sourceGrades(t, a, 4)
	lead := a.signIn("leader")
	res := a.post(lead, fmt.Sprintf("/projects/%d/sources/prelabels", a.project.ID), url.Values{"source": {"model-x"}, "mode": {"least_sure"}, "share": {"1"}})
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("saving the setting: %d", res.StatusCode)
	}
	if page := a.page(lead, res.Header.Get("Location")); !strings.Contains(page, "6 pairs put first") || !strings.Contains(page, "least sure first") {
		t.Fatalf("the Sources page does not show the setting:\n%s", page)
	}
	c := a.signIn("a000")
	p := fmt.Sprintf("/projects/%d", a.project.ID)
	var opened []string
	look := func(path string) string {
		t.Helper()
		body := a.page(c, path)
		opened = append(opened, path)
		if strings.Contains(body, "model-x") {
			t.Fatalf("%s names the source:\n%s", path, body)
		}
		return body
	}
	for _, path := range []string{"/", "/account", "/account/tokens"} {
		look(path)
	}
	// The calibration round, then ordinary work.
	for {
		page := look(p + "/calibration")
		id := offeredPair(page)
		if id == 0 {
			break
		}
		res := a.post(c, p+"/calibration", url.Values{"pair": {fmt.Sprint(id)}, "grade": {"1"}})
		look(res.Header.Get("Location"))
	}
	// The pair on screen, then the same pair after the source's grades changed from 4 to 0.
	before := look(p + "/judge")
	pair := offeredPair(before)
	sourceGrades(t, a, 0)
	if after := look(p + "/judge"); after != before || offeredPair(after) != pair {
		t.Fatalf("the judging page changes with the source's grade")
	}
	// Judge it (the htmx fragment too), then the assessor's own pages, under both grades.
	_, frag, err := a.send(c, http.MethodPost, p+"/judge", url.Values{"pair": {fmt.Sprint(pair)}, "grade": {"2"}}, true)
	if err != nil || strings.Contains(frag, "model-x") {
		t.Fatalf("the next-pair fragment: %v\n%s", err, frag)
	}
	// The comparing screen of a project that asks for grades sends the assessor to grading,
	// naming no source on the way.
	if res, body := a.get(c, p+"/compare"); res.StatusCode != http.StatusSeeOther || !strings.HasSuffix(res.Header.Get("Location"), "/judge") ||
		strings.Contains(body, "model-x") {
		t.Fatalf("GET %s/compare in a graded project: %d to %q", p, res.StatusCode, res.Header.Get("Location"))
	}
	opened = append(opened, p+"/compare")
	mine, feedback := look(p+"/mine"), look(p+"/feedback")
	sourceGrades(t, a, 3)
	if look(p+"/mine") != mine || look(p+"/feedback") != feedback {
		t.Fatal("the assessor's own pages change with the source's grade")
	}
	// Every page of the assessor's role in the route table was opened.
	for route, role := range routeAccess {
		if role != projectJudge || !strings.HasPrefix(route, "GET ") {
			continue
		}
		path := strings.Replace(strings.TrimPrefix(route, "GET "), "{project}", fmt.Sprint(a.project.ID), 1)
		found := false
		for _, o := range opened {
			found = found || strings.SplitN(o, "?", 2)[0] == path
		}
		if !found {
			t.Errorf("assessor page %s not checked", path)
		}
	}
}
