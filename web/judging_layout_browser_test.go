package web

import (
	"context"
	"os"
	"path/filepath"
	"testing"
	"time"

	"github.com/chromedp/chromedp"
)

// box is an element's bounding box in CSS pixels relative to the viewport.
type box struct {
	Top, Bottom, Left, Right float64
}

// boxOf reads the bounding box of the first element matching selector.
func boxOf(ctx context.Context, selector string) (box, error) {
	return chromedp.Run(ctx, chromedp.Evaluate[box](`(() => { const r = document.querySelector(`+jsString(selector)+`).getBoundingClientRect();
		return {Top: r.top, Bottom: r.bottom, Left: r.left, Right: r.right}; })()`))
}

// jsString quotes s as a JavaScript string literal.
func jsString(s string) string {
	b := []byte{'"'}
	for _, r := range s {
		switch r {
		case '"', '\\':
			b = append(b, '\\', byte(r))
		default:
			b = append(b, string(r)...)
		}
	}
	return string(append(b, '"'))
}

// cardGap is the vertical distance between the query card's bottom and the document
// card's top.
func cardGap(ctx context.Context) (float64, error) {
	q, err := boxOf(ctx, "#pair .query")
	if err != nil {
		return 0, err
	}
	d, err := boxOf(ctx, "#pair .document")
	if err != nil {
		return 0, err
	}
	return d.Top - q.Bottom, nil
}

// The document card follows the query card at the cards' usual spacing on a desktop
// screen, whether the document is a line or a long page: the grades beside them, taller
// than a short document, must not push the two apart.
func TestBrowserQueryAndDocumentCardsSitTogether(t *testing.T) {
	ctx := withDeadline(t, newBrowser(t), 2*time.Minute)
	dir := screenshotDir(t)
	a := newTestApp(t, withPairs(1, 2), withAssessors(1), withPerPair(1))
	must := fatalIf(t)
	must(chromedp.Do(ctx, chromedp.EmulateViewport(1280, 900)))
	must(browserSignIn(ctx, a.server.URL, "a000", a.judgePath()))
	// 1rem between cards, with a pixel for rounding.
	const maxGap = 17
	for _, doc := range []string{"short", "long"} {
		if doc == "long" {
			loadDemoLikeDocument(t, a)
			must(chromedp.Do(ctx, chromedp.Reload(), chromedp.WaitReady(chromedp.ID("pair"))))
		}
		gap, err := cardGap(ctx)
		must(err)
		must(screenshot(ctx, dir, "judge-cards-"+doc+"-1280x900.png", 1280, 900, false))
		if gap < 0 || gap > maxGap {
			t.Errorf("%s document: %.1f px between the query card and the document card, want 0 to %d", doc, gap, maxGap)
		}
	}
}

// phone is a 375×812 portrait touch screen.
func phone() chromedp.Action[chromedp.Void] {
	return chromedp.EmulateViewport(375, 812, chromedp.EmulatePortrait, chromedp.EmulateMobile, chromedp.EmulateTouch)
}

// gradeButtonsOnScreen lists the grade buttons that are not wholly on screen, or covered
// at their centre by something else, as it stands (no scrolling).
const gradeButtonsOffScreenJS = `(() => {
	const off = [];
	for (const b of document.querySelectorAll('#pair button[name="grade"]')) {
		const r = b.getBoundingClientRect();
		const hit = document.elementFromPoint((r.left + r.right) / 2, (r.top + r.bottom) / 2);
		if (r.width === 0 || r.top < 0 || r.left < 0 || r.bottom > window.innerHeight || r.right > window.innerWidth || !b.contains(hit)) {
			off.push(b.value + " at " + [r.left, r.top, r.right, r.bottom].map(Math.round).join(","));
		}
	}
	return off;
})()`

// On a phone the grades are on screen as the pair opens, below a long document, and stay
// there while the assessor reads; at the end of the page nothing is hidden behind them; the
// keyboard legend is not shown on a touch screen. A tap on a grade then sends it.
func TestBrowserPhoneGradesWithinReach(t *testing.T) {
	ctx := withDeadline(t, newBrowser(t), 2*time.Minute)
	dir := screenshotDir(t)
	a := newTestApp(t, withPairs(1, 3), withAssessors(1), withPerPair(1))
	loadDemoLikeDocument(t, a)
	must := fatalIf(t)
	must(chromedp.Do(ctx, phone()))
	must(browserSignIn(ctx, a.server.URL, "a000", a.judgePath()))
	touch, err := chromedp.Run(ctx, chromedp.Evaluate[bool](`matchMedia("(hover: none) and (pointer: coarse)").matches`))
	must(err)
	if !touch {
		t.Fatal("the emulated phone does not report a touch screen; the legend check would prove nothing")
	}
	png, err := chromedp.Run(ctx, chromedp.CaptureScreenshot())
	must(err)
	must(os.WriteFile(filepath.Join(dir, "judge-phone-touch-375x812.png"), png, 0o644))

	scrollY, err := chromedp.Run(ctx, chromedp.Evaluate[float64](`window.scrollY`))
	must(err)
	off, err := chromedp.Run(ctx, chromedp.Evaluate[[]string](gradeButtonsOffScreenJS))
	must(err)
	n, err := chromedp.Run(ctx, chromedp.Evaluate[int](`document.querySelectorAll('#pair button[name="grade"]').length`))
	must(err)
	if scrollY != 0 || n != 5 || len(off) > 0 {
		t.Errorf("at 375×812, scrolled by %.0f px: %d grade buttons, not wholly on screen: %v", scrollY, n, off)
	}
	keys, err := chromedp.Run(ctx, chromedp.Evaluate[string](`getComputedStyle(document.getElementById("keys")).display`))
	must(err)
	if keys != "none" {
		t.Errorf("the keyboard legend is displayed (%s) on a touch screen", keys)
	}

	// Halfway down and at the very end of the page, the grades are still on screen and
	// the last things on the page (the note, the undo button) clear the grade bar.
	for _, where := range []string{"document.documentElement.scrollHeight / 2", "document.documentElement.scrollHeight"} {
		_, err := chromedp.Run(ctx, chromedp.Evaluate[bool](`window.scrollTo(0, `+where+`), true`))
		must(err)
		off, err := chromedp.Run(ctx, chromedp.Evaluate[[]string](gradeButtonsOffScreenJS))
		must(err)
		if len(off) > 0 {
			t.Errorf("scrolled to %s: grade buttons not wholly on screen: %v", where, off)
		}
	}
	bar, err := boxOf(ctx, "#pair .grade-buttons")
	must(err)
	for _, sel := range []string{"#note", "#undo", "#cannot summary"} {
		b, err := boxOf(ctx, sel)
		must(err)
		if b.Bottom > bar.Top {
			t.Errorf("at the end of the page %s ends at %.0f px, behind the grade bar from %.0f px", sel, b.Bottom, bar.Top)
		}
	}
	png, err = chromedp.Run(ctx, chromedp.CaptureScreenshot())
	must(err)
	must(os.WriteFile(filepath.Join(dir, "judge-phone-touch-end-375x812.png"), png, 0o644))

	// A tap on grade 3 sends it; the next pair comes.
	pair, err := chromedp.Run(ctx, chromedp.Evaluate[string](pairValueJS))
	must(err)
	must(chromedp.Do(ctx, chromedp.Click(chromedp.CSS(`#pair button[name="grade"][value="3"]`))))
	_, err = waitPairOtherThan(ctx, pair)
	must(err)
	if grade := a.currentGrade(pair); grade != 3 {
		t.Errorf("stored grade %d after tapping 3", grade)
	}
}
