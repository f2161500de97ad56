package web

import (
	"context"
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
	a := newJudgingApp(t, judgingSpec{Queries: 1, Docs: 2, Assessors: 1, PerPair: 1})
	must := func(err error) {
		t.Helper()
		if err != nil {
			t.Fatal(err)
		}
	}
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
