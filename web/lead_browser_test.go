package web

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strconv"
	"testing"
	"time"

	"github.com/chromedp/chromedp"
	"github.com/chromedp/chromedp/kb"
)

func shot(dir, name string) chromedp.Action[chromedp.Void] {
	return func(ctx context.Context, t *chromedp.Target) (chromedp.Void, error) {
		buf, err := chromedp.FullScreenshot(100)(ctx, t)
		if err != nil {
			return chromedp.Void{}, err
		}
		return chromedp.Void{}, os.WriteFile(filepath.Join(dir, name), buf, 0o644)
	}
}

// A lead signs in and settles three queue items with the keyboard alone; the final grades
// land in the database.
func TestLeadWorksTheQueueByKeyboard(t *testing.T) {
	a := newTestApp(t)
	seedLead(t, a)
	ctx := withDeadline(t, newBrowser(t), 3*time.Minute)
	dir := screenshotDir(t)
	base := a.server.URL + "/projects/" + strconv.FormatInt(a.project.ID, 10)
	row := func(i int) string { return `#queue tr[data-pair="` + strconv.FormatInt(a.pairs[i], 10) + `"]` }

	// Each stretch has its own time limit; on failure the page is kept as failure.png.
	do := func(steps ...chromedp.Action[chromedp.Void]) error {
		sctx, cancel := context.WithTimeout(ctx, 30*time.Second)
		defer cancel()
		err := chromedp.Do(sctx, steps...)
		if err != nil {
			url, _ := chromedp.Run(ctx, chromedp.Location())
			chromedp.Do(ctx, shot(dir, "failure.png"))
			err = fmt.Errorf("%w (page %s)", err, url)
		}
		return err
	}
	err := do(
		chromedp.Navigate(a.server.URL+"/signin"),
		chromedp.SendKeys("#username", "lena"),
		chromedp.SendKeys("#password", testPassword),
		chromedp.Submit("#password"),
		chromedp.WaitVisible(".projects"),
		chromedp.Navigate(base+"/overview"),
		chromedp.WaitVisible("svg.chart"),
		shot(dir, "overview.png"),
		chromedp.Navigate(base+"/assessors"),
		chromedp.WaitVisible("table.assessors"),
		shot(dir, "assessors.png"),

		// Queue: flagged pair 5, gold miss 0, then 3 and 1. j moves to pair 0; Enter opens it.
		chromedp.Navigate(base+"/queue"),
		chromedp.WaitVisible(row(5)+".current"),
		chromedp.KeyEvent("j"),
		chromedp.WaitVisible(row(0)+".current"),
		chromedp.KeyEvent(kb.Enter),
		chromedp.WaitVisible("#adjudication"),
		chromedp.KeyEvent("0"),
		chromedp.KeyEvent(kb.Enter),

		// Back in the queue, the first row (pair 5) is selected: open it, take a picture.
		chromedp.WaitVisible(row(5)+".current"),
		chromedp.KeyEvent(kb.Enter),
		chromedp.WaitVisible("#adjudication"),
		chromedp.KeyEvent("2"),
		shot(dir, "adjudication.png"),
		chromedp.KeyEvent(kb.Enter),
	)
	if err != nil {
		t.Fatal(err)
	}
	err = do(
		// Queue is now pair 3, pair 1: j, j (stays on the last), k, j lands on pair 1.
		chromedp.WaitVisible(row(3)+".current"),
		shot(dir, "queue.png"),
		chromedp.KeyEvent("j"),
		chromedp.KeyEvent("j"),
		chromedp.KeyEvent("k"),
		chromedp.WaitVisible(row(3)+".current"),
		chromedp.KeyEvent("j"),
		chromedp.WaitVisible(row(1)+".current"),
		chromedp.KeyEvent(kb.Enter),
		chromedp.WaitVisible("#adjudication"),
		chromedp.KeyEvent("3"),
		chromedp.KeyEvent(kb.Enter),
		chromedp.WaitVisible(row(3)),
	)
	if err != nil {
		t.Fatal(err)
	}
	for i, want := range map[int]int{0: 0, 5: 2, 1: 3} {
		h, err := a.store.Adjudications(context.Background(), a.pairs[i])
		if err != nil {
			t.Fatal(err)
		}
		if len(h) != 1 || h[0].Grade != want || h[0].LeadID != a.users["lena"].ID {
			t.Errorf("pair %d: adjudications %+v, want one with grade %d by lena", i, h, want)
		}
	}
	if h, _ := a.store.Adjudications(context.Background(), a.pairs[3]); len(h) != 0 {
		t.Errorf("pair 3 was not opened but has %d adjudications", len(h))
	}
}
