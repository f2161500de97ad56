package web

import (
	"context"
	"fmt"
	"io"
	"net/http"
	"net/url"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"
)

func countJudgments(t *testing.T, a *testApp, userID int64) int {
	t.Helper()
	n := 0
	for _, p := range a.pairs {
		h, err := a.store.JudgmentHistory(context.Background(), p, userID)
		if err != nil {
			t.Fatal(err)
		}
		n += len(h)
	}
	return n
}

var pairField = regexp.MustCompile(`name="pair" value="(\d+)"`)

// shownPair fetches the judging page and returns the pair it offers.
func shownPair(t *testing.T, a *testApp, c *http.Client) int64 {
	t.Helper()
	res, body := a.get(c, fmt.Sprintf("/projects/%d/judge", a.project.ID))
	if res.StatusCode != http.StatusOK {
		t.Fatalf("judge page: status %d", res.StatusCode)
	}
	m := pairField.FindStringSubmatch(body)
	if m == nil {
		t.Fatalf("judge page offers no pair:\n%s", body)
	}
	id, _ := strconv.ParseInt(m[1], 10, 64)
	return id
}

func TestJudgmentThroughPlainFormIsStored(t *testing.T) {
	a := newTestApp(t)
	c := a.signIn("amir")
	pair := shownPair(t, a, c)
	res := a.post(c, fmt.Sprintf("/projects/%d/judge", a.project.ID), url.Values{
		"pair": {fmt.Sprint(pair)}, "grade": {"3"}, "elapsed_ms": {"4200"}, "note": {"good match"}})
	if res.StatusCode != http.StatusSeeOther || !strings.HasPrefix(res.Header.Get("Location"), fmt.Sprintf("/projects/%d/judge", a.project.ID)) {
		t.Fatalf("form post: status %d to %q, want 303 back to the judging page", res.StatusCode, res.Header.Get("Location"))
	}
	h, err := a.store.JudgmentHistory(context.Background(), pair, a.users["amir"].ID)
	if err != nil {
		t.Fatal(err)
	}
	if len(h) != 1 || h[0].Grade == nil || *h[0].Grade != 3 || h[0].TimeSpentMs != 4200 || h[0].Note != "good match" || !h[0].Current {
		t.Fatalf("stored judgment = %+v, want one current grade 3 by amir with 4200 ms and the note", h)
	}
	if time.Since(h[0].CreatedAt) > time.Minute {
		t.Errorf("judgment time %v is not now", h[0].CreatedAt)
	}
	// The next page offers another pair.
	if next := shownPair(t, a, c); next == pair {
		t.Errorf("after judging pair %d the page offers it again", pair)
	}
}

func TestSecondGradeSupersedesAndKeepsHistory(t *testing.T) {
	a := newTestApp(t)
	c := a.signIn("amir")
	pair := shownPair(t, a, c)
	path := fmt.Sprintf("/projects/%d/judge", a.project.ID)
	a.post(c, path, url.Values{"pair": {fmt.Sprint(pair)}, "grade": {"1"}})
	a.post(c, path, url.Values{"pair": {fmt.Sprint(pair)}, "grade": {"4"}})
	h, err := a.store.JudgmentHistory(context.Background(), pair, a.users["amir"].ID)
	if err != nil {
		t.Fatal(err)
	}
	if len(h) != 2 {
		t.Fatalf("history has %d rows, want 2", len(h))
	}
	if *h[0].Grade != 1 || h[0].Current || *h[1].Grade != 4 || !h[1].Current || h[1].Supersedes != h[0].ID {
		t.Errorf("history = %+v %+v: want grade 1 superseded by current grade 4", h[0], h[1])
	}
	prog, err := a.store.ProjectProgress(context.Background(), a.project.ID)
	if err != nil {
		t.Fatal(err)
	}
	if prog.Judgments != 1 {
		t.Errorf("a superseded judgment still counts: project has %d judgments, want 1", prog.Judgments)
	}
}

func TestHtmxSubmitSwapsInNextPair(t *testing.T) {
	a := newTestApp(t)
	c := a.signIn("bea")
	pair := shownPair(t, a, c)
	res := a.post(c, fmt.Sprintf("/projects/%d/judge", a.project.ID),
		url.Values{"pair": {fmt.Sprint(pair)}, "cannot_judge": {"language"}}, "HX-Request", "true")
	if res.StatusCode != http.StatusOK {
		t.Fatalf("htmx submit: status %d", res.StatusCode)
	}
	body := readAll(t, res)
	if strings.Contains(body, "<html") || !strings.Contains(body, `id="pair"`) {
		t.Fatalf("htmx answer should be the pair fragment only:\n%s", body)
	}
	if !strings.Contains(body, "cannot judge (language)") {
		t.Errorf("fragment does not confirm what was saved:\n%s", body)
	}
	m := pairField.FindStringSubmatch(body)
	if m == nil || m[1] == fmt.Sprint(pair) {
		t.Errorf("fragment should offer a different pair than %d", pair)
	}
}

func TestAssessorCannotJudgeAnotherProjectsPair(t *testing.T) {
	a := newTestApp(t)
	c := a.signIn("cyd")
	res := a.post(c, fmt.Sprintf("/projects/%d/judge", a.project.ID), url.Values{"pair": {fmt.Sprint(a.pairs[0])}, "grade": {"2"}})
	if res.StatusCode != http.StatusNotFound {
		t.Errorf("outsider judging: status %d, want 404", res.StatusCode)
	}
	if n := countJudgments(t, a, a.users["cyd"].ID); n != 0 {
		t.Errorf("outsider stored %d judgments", n)
	}
}

func TestGradeOffTheScaleIsRefused(t *testing.T) {
	a := newTestApp(t)
	c := a.signIn("amir")
	pair := shownPair(t, a, c)
	for _, g := range []string{"5", "-1", "two"} {
		res := a.post(c, fmt.Sprintf("/projects/%d/judge", a.project.ID), url.Values{"pair": {fmt.Sprint(pair)}, "grade": {g}})
		if res.StatusCode != http.StatusBadRequest {
			t.Errorf("grade %q: status %d, want 400", g, res.StatusCode)
		}
	}
	if n := countJudgments(t, a, a.users["amir"].ID); n != 0 {
		t.Errorf("refused grades stored %d judgments", n)
	}
}

func readAll(t testing.TB, res *http.Response) string {
	t.Helper()
	b, err := io.ReadAll(res.Body)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}
