package web

import (
	"context"
	"fmt"
	"net/http"
	"net/url"
	"strings"
	"testing"
)

// Undo and cannot-judge work as plain form posts with 303 redirects, and the undone pair is
// the next one shown.
func TestUndoAndCannotJudgeWithoutJavaScript(t *testing.T) {
	a := newTestApp(t, withPairs(1, 4), withAssessors(1), withPerPair(1), withGuidelines("# Lamp rules\n\nJudge **brightness**."))
	c := a.signIn("a000")
	_, page, _ := a.send(c, http.MethodGet, a.judgePath(), nil, false)
	for _, want := range []string{"<h1>Lamp rules</h1>", "<strong>brightness</strong>", "You never have to read disturbing content", `id="cannot"`, `id="undo"`, `id="keys"`} {
		if !strings.Contains(page, want) {
			t.Errorf("judging page lacks %q", want)
		}
	}
	first := offeredPair(page)
	status, _, _ := a.send(c, http.MethodPost, a.judgePath(), url.Values{"pair": {fmt.Sprint(first)}, "cannot_judge": {"disturbing"}}, false)
	if status != http.StatusSeeOther {
		t.Fatalf("cannot-judge post: %d", status)
	}
	_, page, _ = a.send(c, http.MethodGet, a.judgePath()+"?saved=x-disturbing", nil, false)
	if !strings.Contains(page, "Saved: cannot judge (disturbing)") || offeredPair(page) == first {
		t.Fatalf("after flagging, the page should confirm it and offer another pair")
	}
	status, _, _ = a.send(c, http.MethodPost, fmt.Sprintf("/projects/%d/undo", a.project.ID), url.Values{}, false)
	if status != http.StatusSeeOther {
		t.Fatalf("undo post: %d", status)
	}
	if _, page, _ = a.send(c, http.MethodGet, a.judgePath()+"?saved=undo", nil, false); offeredPair(page) != first || !strings.Contains(page, "Undone") {
		t.Fatalf("after undo the page offers pair %d, want the undone pair %d", offeredPair(page), first)
	}
	h, _ := a.store.JudgmentHistory(context.Background(), first, a.assessors[0].ID)
	if len(h) != 1 || !h[0].Withdrawn || h[0].CannotJudge != "disturbing" {
		t.Errorf("history %+v, want the flag kept and withdrawn", h)
	}
	// A second undo is refused: only the latest judgment can be taken back.
	if status, _, _ = a.send(c, http.MethodPost, fmt.Sprintf("/projects/%d/undo", a.project.ID), url.Values{}, false); status != http.StatusConflict {
		t.Errorf("undo with nothing to undo: %d, want 409", status)
	}
	// Unknown codes in ?saved= put nothing on the page.
	if _, page, _ = a.send(c, http.MethodGet, a.judgePath()+"?saved=%3Cb%3Ehi", nil, false); strings.Contains(page, "hi</b>") || strings.Contains(page, "&lt;b&gt;hi") {
		t.Error("the status line echoes an arbitrary ?saved= value")
	}
}

// My work lists only the assessor's own judgments, changes supersede, and a lead's
// adjudication ends the right to change.
func TestMyWorkChangesUntilAdjudicated(t *testing.T) {
	a := newTestApp(t, withPairs(1, 3), withAssessors(2), withPerPair(2))
	c0, c1 := a.signIn("a000"), a.signIn("a001")
	_, page, _ := a.send(c0, http.MethodGet, a.judgePath(), nil, false)
	pair := offeredPair(page)
	a.send(c0, http.MethodPost, a.judgePath(), url.Values{"pair": {fmt.Sprint(pair)}, "grade": {"1"}, "note": {"first look"}}, true)
	_, page, _ = a.send(c1, http.MethodGet, a.judgePath(), nil, false)
	a.send(c1, http.MethodPost, a.judgePath(), url.Values{"pair": {fmt.Sprint(offeredPair(page))}, "grade": {"4"}, "note": {"other person"}}, true)

	mine := fmt.Sprintf("/projects/%d/mine", a.project.ID)
	_, page, _ = a.send(c0, http.MethodGet, mine, nil, false)
	if !strings.Contains(page, "first look") || strings.Contains(page, "other person") || !strings.Contains(page, `data-figure="today">1<`) {
		t.Fatalf("My work should list only a000's judgment with today's count 1:\n%s", page)
	}
	status, frag, _ := a.send(c0, http.MethodPost, mine, url.Values{"pair": {fmt.Sprint(pair)}, "grade": {"3"}, "note": {"first look"}}, true)
	if status != http.StatusOK || !strings.Contains(frag, "grade 3") || !strings.Contains(frag, "changed") || strings.Contains(frag, "<html") {
		t.Fatalf("htmx change: status %d, want the My work fragment with grade 3:\n%s", status, frag)
	}
	h, _ := a.store.JudgmentHistory(context.Background(), pair, a.assessors[0].ID)
	if len(h) != 2 || h[0].Current || !h[1].Current || *h[1].Grade != 3 || h[1].Supersedes != h[0].ID {
		t.Fatalf("history after change: %+v", h)
	}
	if _, err := a.store.Adjudicate(context.Background(), pair, a.lead.ID, 2, ""); err != nil {
		t.Fatal(err)
	}
	if status, _, _ = a.send(c0, http.MethodPost, mine, url.Values{"pair": {fmt.Sprint(pair)}, "grade": {"0"}}, false); status != http.StatusConflict {
		t.Errorf("change after adjudication: %d, want 409", status)
	}
	if _, page, _ = a.send(c0, http.MethodGet, mine, nil, false); !strings.Contains(page, "settled") || strings.Contains(page, `name="pair" value="`+fmt.Sprint(pair)) {
		t.Errorf("an adjudicated judgment should show as settled, without a change form")
	}
}

// The lead's overview lists flagged pairs with reason and count, and no assessor's name.
func TestOverviewListsFlaggedPairsWithoutNames(t *testing.T) {
	a := newTestApp(t, withPairs(1, 2), withAssessors(2), withPerPair(2))
	for _, u := range a.assessors {
		c := a.signIn(u.Username)
		if status, _, _ := a.send(c, http.MethodPost, a.judgePath(), url.Values{"pair": {fmt.Sprint(a.pairs[1])}, "cannot_judge": {"disturbing"}}, false); status != http.StatusSeeOther {
			t.Fatalf("flag: %d", status)
		}
	}
	lead := a.signIn("leader")
	_, page, _ := a.send(lead, http.MethodGet, fmt.Sprintf("/projects/%d/overview", a.project.ID), nil, false)
	row := fmt.Sprintf(`<tr data-pair="%d" class="disturbing"><td>reading lamp 0</td><td>Lamp 0-1</td><td>Disturbing or unsafe content</td><td>2</td></tr>`, a.pairs[1])
	if !strings.Contains(page, row) {
		t.Errorf("overview lacks the flagged row %s:\n%s", row, page)
	}
	for _, u := range a.assessors {
		if strings.Contains(page, u.Username) || strings.Contains(page, u.DisplayName) {
			t.Errorf("overview names assessor %s", u.Username)
		}
	}
}
