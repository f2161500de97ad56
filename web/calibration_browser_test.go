package web

import (
	"fmt"
	"net/url"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/chromedp"
	"github.com/chromedp/chromedp/kb"
)

// A new assessor in a project with a calibration round and pre-labels: the round comes
// first, answered with the judging keys; each answer is followed by the known grade and its
// reason, Enter goes on; then ordinary pairs, least sure first; no page shows the source.
func TestBrowserCalibrationRoundThenJudging(t *testing.T) {
	ctx := withDeadline(t, newBrowser(t), 2*time.Minute)
	dir := screenshotDir(t)
	a := calibrationApp(t)
	sourceGrades(t, a, 4)
	lead := a.signIn("leader")
	if res := a.post(lead, fmt.Sprintf("/projects/%d/sources/prelabels", a.project.ID), url.Values{"source": {"model-x"}, "mode": {"least_sure"}}); res.StatusCode != 303 {
		t.Fatalf("saving pre-labels: %d", res.StatusCode)
	}
	must := fatalIf(t)
	must(browserSignIn(ctx, a.server.URL, "a000", a.judgePath()))
	noSource := func(where string) {
		t.Helper()
		text, err := chromedp.Run(ctx, chromedp.Evaluate[string](`document.documentElement.outerHTML`))
		must(err)
		if strings.Contains(text, "model-x") {
			t.Fatalf("%s shows the source", where)
		}
	}
	loc, err := chromedp.Run(ctx, chromedp.Location())
	must(err)
	if !strings.HasSuffix(loc, fmt.Sprintf("/projects/%d/calibration", a.project.ID)) {
		t.Fatalf("a new assessor landed on %s, want the calibration round", loc)
	}
	must(screenshot(ctx, dir, "calibration-1280x900.png", 1280, 900, false))
	for i := 1; i <= 5; i++ {
		count, err := chromedp.Run(ctx, chromedp.Text(chromedp.ID("calibration-count")))
		must(err)
		if count != fmt.Sprintf("Pair %d of 5", i) {
			t.Fatalf("round shows %q, want pair %d of 5", count, i)
		}
		noSource(fmt.Sprintf("calibration pair %d", i))
		key := rune('0' + i%5)
		must(chromedp.Do(ctx, press(key), chromedp.WaitVisible(chromedp.ID("calibration-feedback"))))
		answer, err := chromedp.Run(ctx, chromedp.Text(chromedp.ID("your-answer")))
		must(err)
		reason, err := chromedp.Run(ctx, chromedp.Text(chromedp.ID("known-reason")))
		must(err)
		if !strings.HasPrefix(answer, string(key)) || !strings.HasPrefix(reason, "Why grade ") {
			t.Fatalf("feedback on pair %d: answer %q, reason %q", i, answer, reason)
		}
		if i == 1 {
			must(screenshot(ctx, dir, "calibration-feedback-375x812.png", 375, 812, false))
			overflow, err := chromedp.Run(ctx, chromedp.Evaluate[bool](`document.documentElement.scrollWidth > window.innerWidth`))
			must(err)
			if overflow {
				t.Errorf("the feedback is wider than a 375px screen")
			}
			must(chromedp.Do(ctx, chromedp.EmulateViewport(1280, 900)))
		}
		noSource(fmt.Sprintf("feedback %d", i))
		// Enter on the focused button: the next calibration pair, or judging after the last.
		must(chromedp.Do(ctx, chromedp.KeyEvent(kb.Enter), chromedp.WaitReady(chromedp.ID("pair"))))
	}
	loc, err = chromedp.Run(ctx, chromedp.Location())
	must(err)
	if !strings.HasSuffix(loc, a.judgePath()) {
		t.Fatalf("after the round the browser is at %s, want the judging page", loc)
	}
	pair, err := chromedp.Run(ctx, chromedp.Evaluate[string](pairValueJS))
	must(err)
	noSource("the judging page")
	must(chromedp.Do(ctx, press('3')))
	_, err = waitPairOtherThan(ctx, pair)
	must(err)
	noSource("the next pair")
	if js := a.judgments(pairNumber(t, pair)); len(js) == 0 {
		t.Fatalf("pair %s holds no judgment after grading it", pair)
	}
	round, err := a.store.CalibrationRound(t.Context(), a.project.ID)
	must(err)
	if len(round.Scores) != 1 || round.Scores[0].Answered != 5 {
		t.Fatalf("round after the browser: %+v", round)
	}
}
