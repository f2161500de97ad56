package web

import (
	"context"
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/cdproto/emulation"
	"github.com/chromedp/chromedp"
	"github.com/chromedp/chromedp/kb"

	"github.com/pertinent/pertinent/store"
)

const comparisonValueJS = `(document.querySelector('#pair input[name=comparison]') || {value: ""}).value`

// waitComparisonOtherThan waits until the page shows a comparison other than old.
func waitComparisonOtherThan(ctx context.Context, old string) (string, error) {
	var err error
	for range 3 {
		_, err = chromedp.Run(ctx, chromedp.Poll[bool](fmt.Sprintf(`%s !== %q`, comparisonValueJS, old), chromedp.WithPollingTimeout(10*time.Second)))
		if err == nil || !strings.Contains(err.Error(), "Cannot find context") {
			break
		}
	}
	if err != nil {
		return "", fmt.Errorf("waiting for a comparison other than %s: %w", old, err)
	}
	return chromedp.Run(ctx, chromedp.Evaluate[string](comparisonValueJS))
}

// An assessor answers comparisons with the keys (one with a note and the flag), undoes the
// last and says instead that it cannot be judged; the database holds exactly that. On a
// phone the two documents are stacked and the answers stay on screen.
func TestBrowserKeyboardComparing(t *testing.T) {
	ctx := withDeadline(t, newBrowser(t), 2*time.Minute)
	dir := screenshotDir(t)
	// Eight documents of one query, each comparison put to one assessor: the first round of
	// the sort holds four independent comparisons.
	a := preferenceApp(t, withPairs(1, 8), withAssessors(1), withPerPair(1))
	loadDemoLikeDocument(t, a)
	must := fatalIf(t)
	must(chromedp.Do(ctx, chromedp.EmulateViewport(1280, 900)))
	must(browserSignIn(ctx, a.server.URL, "a000", a.comparePath()))
	id, err := chromedp.Run(ctx, chromedp.Evaluate[string](comparisonValueJS))
	must(err)
	must(screenshot(ctx, dir, "compare-desktop-1280x900.png", 1280, 900, false))
	l, err := boxOf(ctx, "#left-doc")
	must(err)
	r, err := boxOf(ctx, "#right-doc")
	must(err)
	if !(r.Left >= l.Right && r.Top < l.Bottom) {
		t.Errorf("on a desktop the documents are not side by side: left %+v, right %+v", l, r)
	}

	outcomesOffScreenJS := strings.ReplaceAll(gradeButtonsOffScreenJS, `button[name="grade"]`, `button[name="outcome"]`)
	if off, err := chromedp.Run(ctx, chromedp.Evaluate[[]string](outcomesOffScreenJS)); err != nil || len(off) > 0 {
		t.Errorf("answer buttons not wholly on a desktop screen: %v %v", off, err)
	}

	const note = "Right one repeats the left"
	var answered []string
	for i, key := range []rune{'1', '2', '3'} {
		answered = append(answered, id)
		if i == 1 {
			must(chromedp.Do(ctx, press('n'), chromedp.KeyEvent(note), chromedp.KeyEvent(kb.Escape), press('f')))
		}
		must(chromedp.Do(ctx, press(key)))
		if id, err = waitComparisonOtherThan(ctx, id); err != nil {
			html, _ := chromedp.Run(ctx, chromedp.OuterHTML(chromedp.ID("status")))
			t.Fatalf("answer %d with key %c: %v (%s)", i+1, key, err, html)
		}
	}
	must(chromedp.Do(ctx, press('u')))
	id, err = waitComparisonOtherThan(ctx, id)
	must(err)
	status, err := chromedp.Run(ctx, chromedp.Text(chromedp.ID("status")))
	must(err)
	if id != answered[2] || !strings.Contains(status, "Undone") {
		t.Fatalf("after u the page shows comparison %s with status %q, want %s back", id, status, answered[2])
	}
	// Phone: stacked, no sideways scroll, the four answers on screen.
	must(chromedp.Do(ctx, phone(), chromedp.Reload(), chromedp.WaitReady(chromedp.ID("pair"))))
	must(screenshot(ctx, dir, "compare-phone-375x812.png", 375, 812, false))
	l, err = boxOf(ctx, "#left-doc")
	must(err)
	r, err = boxOf(ctx, "#right-doc")
	must(err)
	if r.Top < l.Bottom || r.Left != l.Left {
		t.Errorf("on a phone the documents are not stacked: left %+v, right %+v", l, r)
	}
	overflow, err := chromedp.Run(ctx, chromedp.Evaluate[bool](`document.documentElement.scrollWidth > window.innerWidth`))
	must(err)
	if overflow {
		t.Errorf("the comparing page is wider than a 375px screen")
	}
	off, err := chromedp.Run(ctx, chromedp.Evaluate[[]string](outcomesOffScreenJS))
	must(err)
	if len(off) > 0 {
		t.Errorf("answer buttons not wholly on a phone's screen: %v", off)
	}
	must(chromedp.Do(ctx, chromedp.EmulateViewport(1280, 900), press('x'), press('b')))
	_, err = waitComparisonOtherThan(ctx, answered[2])
	must(err)
	status, err = chromedp.Run(ctx, chromedp.Text(chromedp.ID("status")))
	must(err)
	if !strings.Contains(status, "cannot judge (broken)") {
		t.Errorf("status after cannot judge = %q", status)
	}

	// The database: left, right (with the note and the flag), same withdrawn, then broken.
	hist, err := a.store.PreferenceAnswersByAssessor(context.Background(), a.project.ID, a.assessors[0].ID)
	must(err)
	var got []string
	for _, h := range hist {
		s := fmt.Sprintf("%d:%s%s", h.ComparisonID, h.Outcome, h.CannotJudge)
		if h.Withdrawn {
			s += " withdrawn"
		}
		if h.Flagged {
			s += " flagged"
		}
		if h.Note != "" {
			s += " note=" + h.Note
		}
		if h.TimeSpentMs <= 0 {
			t.Errorf("answer %d: time spent %d ms, want the time measured on the page", h.ID, h.TimeSpentMs)
		}
		got = append(got, s)
	}
	want := []string{answered[0] + ":left", answered[1] + ":right flagged note=" + note, answered[2] + ":same withdrawn", answered[2] + ":broken"}
	if strings.Join(got, "|") != strings.Join(want, "|") {
		t.Errorf("stored answers\n%v\nwant\n%v", got, want)
	}
}

// With JavaScript off the comparing screen is plain forms and 303 redirects: a click on an
// answer stores it with the placement shown and brings the next comparison, Undo brings the
// answered one back placed as before, and once the first round of the sort is answered the
// comparison it opened appears.
func TestBrowserComparingWithoutJavaScript(t *testing.T) {
	ctx := withDeadline(t, newBrowser(t), 2*time.Minute)
	// Four documents, one assessor per comparison: the sort's first round is d0–d1 and d2–d3,
	// the second round merges their winners and losers.
	a := preferenceApp(t, withPairs(1, 4), withAssessors(1), withPerPair(1))
	must := fatalIf(t)
	if _, err := chromedp.Call(ctx, emulation.SetScriptExecutionDisabled, emulation.SetScriptExecutionDisabledParams{Value: true}); err != nil {
		t.Fatal(err)
	}
	must(browserSignIn(ctx, a.server.URL, "a000", a.comparePath()))
	shown := func() (comparison, left string) {
		t.Helper()
		c, err := chromedp.Run(ctx, chromedp.AttributeValue(chromedp.CSS(`#pair input[name="comparison"]`), "value"))
		must(err)
		l, err := chromedp.Run(ctx, chromedp.AttributeValue(chromedp.CSS(`#pair input[name="left"]`), "value"))
		must(err)
		return c.Value, l.Value
	}
	status := func() string {
		t.Helper()
		s, err := chromedp.Run(ctx, chromedp.Text(chromedp.ID("status")))
		must(err)
		return s
	}
	answerWith := func(outcome, current string) {
		t.Helper()
		must(chromedp.Do(ctx,
			chromedp.Click(chromedp.CSS(`#pair button[name="outcome"][value="`+outcome+`"]`)),
			chromedp.WaitReady(chromedp.CSS(`#pair input[name="comparison"]:not([value="`+current+`"])`)),
		))
	}
	history := func() []store.PreferenceAnswer {
		t.Helper()
		h, err := a.store.PreferenceAnswersByAssessor(context.Background(), a.project.ID, a.assessors[0].ID)
		must(err)
		return h
	}

	first, firstLeft := shown()
	answerWith("left", first)
	second, _ := shown()
	if got := status(); !strings.Contains(got, "Saved: left is better.") || second == first {
		t.Fatalf("after a plain form post: status %q, comparison %s -> %s", got, first, second)
	}
	if h := history(); len(h) != 1 || h[0].Outcome != "left" || fmt.Sprint(h[0].LeftDoc) != firstLeft || h[0].Withdrawn {
		t.Fatalf("stored answers %+v", h)
	}

	must(chromedp.Do(ctx,
		chromedp.Click(chromedp.ID("undo")),
		chromedp.WaitReady(chromedp.CSS(`#pair input[name="comparison"][value="`+first+`"]`)),
	))
	back, backLeft := shown()
	if got := status(); back != first || backLeft != firstLeft || !strings.Contains(got, "Undone") {
		t.Fatalf("after Undo: comparison %s with %s on the left and status %q, want %s with %s", back, backLeft, got, first, firstLeft)
	}
	if h := history(); len(h) != 1 || !h[0].Withdrawn {
		t.Fatalf("Undo without JavaScript did not withdraw the answer: %+v", h)
	}

	// Answer it again, then the other comparison of the first round: each brings the next.
	answerWith("right", first)
	next, _ := shown()
	if next != second {
		t.Fatalf("after answering %s again the page shows %s, want the waiting %s", first, next, second)
	}
	answerWith("left", second)
	third, _ := shown()
	if third == first || third == second || !strings.Contains(status(), "Saved: left is better.") {
		t.Fatalf("after the first round the page shows comparison %s (status %q), want one the round opened", third, status())
	}
	h := history()
	if len(h) != 3 || h[1].Outcome != "right" || h[1].Withdrawn || h[2].Outcome != "left" {
		t.Errorf("stored answers %+v", h)
	}
}
