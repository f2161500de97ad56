package web

import (
	"context"
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"
	"github.com/chromedp/chromedp/kb"
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
