package web

import (
	"context"
	"encoding/json"
	"fmt"
	"net/http"
	"net/url"
	"strings"
	"testing"

	"golang.org/x/net/html"

	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/store"
)

// calibrationApp is a lamp project (2 queries × 3 lamps, one judgment a pair, assessors a000
// and a001) with a calibration round of five lamps on q0, one of each grade 0..4, whose
// reasons read "Why grade N".
func calibrationApp(t *testing.T) *testApp {
	t.Helper()
	a := newTestApp(t, withPairs(2, 3), withAssessors(2), withPerPair(1))
	ctx := context.Background()
	var docs, cal strings.Builder
	docs.WriteString("doc_id,title,body\n")
	cal.WriteString("query_id,doc_id,grade,reason\n")
	for g := range 5 {
		fmt.Fprintf(&docs, "cal-%d,Calibration lamp %d,A lamp described for calibration %d.\n", g, g, g)
		fmt.Fprintf(&cal, "q0,cal-%d,%d,Why grade %d\n", g, g, g)
	}
	for _, f := range []struct {
		kind store.ImportKind
		body string
	}{{store.ImportDocuments, docs.String()}, {store.ImportCalibration, cal.String()}} {
		if _, err := a.store.Import(ctx, a.project.ID, a.lead.ID, store.ImportSpec{Kind: f.kind},
			[]store.ImportFile{{Name: string(f.kind) + ".csv", R: strings.NewReader(f.body)}}); err != nil {
			t.Fatal(err)
		}
	}
	return a
}

// A new assessor is sent to the round first; each answer is followed by the known grade and
// its reason, never shown before; then ordinary judging starts. Plain forms throughout.
func TestCalibrationRoundBeforeJudging(t *testing.T) {
	a := calibrationApp(t)
	c := a.signIn("a000")
	calPath := fmt.Sprintf("/projects/%d/calibration", a.project.ID)
	res, _ := a.get(c, a.judgePath())
	if res.StatusCode != http.StatusSeeOther || res.Header.Get("Location") != calPath {
		t.Fatalf("judging page for a new assessor: %d to %q, want 303 to %s", res.StatusCode, res.Header.Get("Location"), calPath)
	}
	var answered []int64
	for i := 1; i <= 5; i++ {
		page := a.page(c, calPath)
		id := offeredPair(page)
		if id == 0 || !strings.Contains(page, fmt.Sprintf("Pair %d of 5", i)) {
			t.Fatalf("calibration pair %d not offered:\n%s", i, page)
		}
		if strings.Contains(page, "Why grade") || strings.Contains(page, `id="known-grade"`) {
			t.Fatalf("the known grade or its reason shows before the answer:\n%s", page)
		}
		res := a.post(c, calPath, url.Values{"pair": {fmt.Sprint(id)}, "grade": {"2"}})
		want := fmt.Sprintf("%s?answered=%d", calPath, id)
		if res.StatusCode != http.StatusSeeOther || res.Header.Get("Location") != want {
			t.Fatalf("answer: %d to %q, want 303 to %s", res.StatusCode, res.Header.Get("Location"), want)
		}
		fb := a.page(c, want)
		n := parseHTML(t, fb)
		known, reason := textOf(findByID(n, "known-grade")), textOf(findByID(n, "known-reason"))
		if !strings.HasPrefix(reason, "Why grade ") || !strings.HasPrefix(known, strings.TrimPrefix(reason, "Why grade ")) {
			t.Fatalf("feedback: known %q, reason %q", known, reason)
		}
		if got := textOf(findByID(n, "your-answer")); !strings.HasPrefix(got, "2") {
			t.Fatalf("your answer shown as %q", got)
		}
		if (i == 5) != (findByID(n, "round-done") != nil) {
			t.Fatalf("pair %d: the end of the round shown wrongly:\n%s", i, fb)
		}
		answered = append(answered, id)
	}
	// Ordinary work follows, on the project's own pairs.
	page := a.page(c, a.judgePath())
	if id := offeredPair(page); id == 0 || !strings.Contains(page, "Lamp 0-") && !strings.Contains(page, "Lamp 1-") {
		t.Fatalf("no ordinary pair after the round:\n%s", page)
	}
	// Another assessor cannot read a000's feedback, and has the round still to take.
	other := a.signIn("a001")
	if res, _ := a.get(other, fmt.Sprintf("%s?answered=%d", calPath, answered[0])); res.StatusCode != http.StatusNotFound {
		t.Fatalf("another assessor's feedback: %d, want 404", res.StatusCode)
	}
	if res, _ := a.get(other, a.judgePath()); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("a001 was not sent to the round: %d", res.StatusCode)
	}
	// The lead's page and the API show one computation.
	lead := a.signIn("leader")
	figs := figures(t, a.page(lead, fmt.Sprintf("/projects/%d/calibration-scores", a.project.ID)))
	token := newToken(t, a, lead)
	res, body := a.api("GET", fmt.Sprintf("/api/v1/projects/%d/calibration", a.project.ID), token, nil)
	if res.StatusCode != http.StatusOK {
		t.Fatalf("API: %d %s", res.StatusCode, body)
	}
	var round store.CalibrationRound
	if err := json.Unmarshal([]byte(body), &round); err != nil {
		t.Fatal(err)
	}
	if round.Pairs != 5 || len(round.Scores) != 1 || round.Scores[0].Matched != 1 {
		t.Fatalf("API round %+v", round)
	}
	s := round.Scores[0]
	for name, v := range map[string]agreement.Value{"exact": s.Exact, "exact-low": s.ExactCI.Lo, "exact-high": s.ExactCI.Hi,
		"within-one": s.WithinOne, "mean-abs": s.MeanAbs, "mean-signed": s.MeanSigned} {
		checkFigure(t, "calibration-scores", figs, "calibration-"+name+":a000", v)
	}
}

// textOf is the text inside a node, spaces collapsed; "" for none.
func textOf(n *html.Node) string {
	if n == nil {
		return ""
	}
	var b strings.Builder
	var text func(*html.Node)
	text = func(x *html.Node) {
		if x.Type == html.TextNode {
			b.WriteString(x.Data)
		}
		for c := x.FirstChild; c != nil; c = c.NextSibling {
			text(c)
		}
	}
	text(n)
	return strings.Join(strings.Fields(b.String()), " ")
}
