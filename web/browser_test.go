package web

import (
	"context"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"github.com/chromedp/cdproto/cdp"
	"github.com/chromedp/cdproto/emulation"
	"github.com/chromedp/cdproto/input"
	"github.com/chromedp/chromedp"
	"github.com/chromedp/chromedp/kb"

	"github.com/pertinent/pertinent/internal/reference"
)

const chromiumPath = "/usr/bin/chromium"

// newBrowser starts Debian's headless Chromium with a fresh profile. Without it the test
// fails in CI and is skipped elsewhere.
func newBrowser(t *testing.T) context.Context {
	t.Helper()
	if _, err := os.Stat(chromiumPath); err != nil {
		reference.Unavailable(t, "browser tests need "+chromiumPath+" (Debian package chromium): "+err.Error())
	}
	alloc, cancelAlloc := chromedp.NewExecAllocator(context.Background(),
		chromedp.ExecPath(chromiumPath),
		chromedp.Flag("headless", true),
		chromedp.NoSandbox,
		chromedp.DisableGPU,
		chromedp.Flag("disable-background-networking", true),
		chromedp.Flag("disable-component-update", true),
		chromedp.Flag("disable-sync", true),
		chromedp.NoFirstRun,
		chromedp.UserDataDir(t.TempDir()),
		chromedp.WindowSize(1280, 900),
	)
	ctx, cancelCtx := chromedp.NewContext(alloc)
	t.Cleanup(func() { cancelCtx(); cancelAlloc() })
	// The first run starts the browser and must not carry a timeout (it would stop the
	// browser); callers may put a deadline on what follows.
	if err := chromedp.Do(ctx); err != nil {
		t.Fatalf("starting %s: %v", chromiumPath, err)
	}
	return ctx
}

// withDeadline bounds a browser test, so a stuck page fails it instead of hanging.
func withDeadline(t *testing.T, ctx context.Context, d time.Duration) context.Context {
	ctx, cancel := context.WithTimeout(ctx, d)
	t.Cleanup(cancel)
	return ctx
}

// screenshotDir is where the browser test writes its screenshots.
func screenshotDir(t *testing.T) string {
	dir := os.Getenv("PERTINENT_SCREENSHOTS")
	if dir == "" {
		dir = t.TempDir()
	}
	if err := os.MkdirAll(dir, 0o755); err != nil {
		t.Fatal(err)
	}
	t.Logf("screenshots in %s", dir)
	return dir
}

// screenshot sets the viewport and writes a PNG of it (or of the whole page) to dir.
func screenshot(ctx context.Context, dir, name string, w, h int64, full bool) error {
	if err := chromedp.Do(ctx, chromedp.EmulateViewport(w, h)); err != nil {
		return err
	}
	shot := chromedp.CaptureScreenshot()
	if full {
		shot = chromedp.FullScreenshot(100)
	}
	png, err := chromedp.Run(ctx, shot)
	if err != nil {
		return err
	}
	return os.WriteFile(filepath.Join(dir, name), png, 0o644)
}

const pairValueJS = `(document.querySelector('#pair input[name=pair]') || {value: ""}).value`

// waitPairOtherThan waits until the page shows a pair other than old (htmx swapped it in)
// and returns it.
func waitPairOtherThan(ctx context.Context, old string) (string, error) {
	var err error
	for range 3 {
		_, err = chromedp.Run(ctx, chromedp.Poll[bool](fmt.Sprintf(`%s !== %q`, pairValueJS, old), chromedp.WithPollingTimeout(10*time.Second)))
		// The poll runs in an execution context the page may replace while it swaps
		// content; asking again is enough.
		if err == nil || !strings.Contains(err.Error(), "Cannot find context") {
			break
		}
	}
	if err != nil {
		return "", fmt.Errorf("waiting for a pair other than %s: %w", old, err)
	}
	return chromedp.Run(ctx, chromedp.Evaluate[string](pairValueJS))
}

// press sends one shortcut key as a physical key arrives: a keyDown that carries its text,
// which the page can cancel, then keyUp. (chromedp.KeyEvent sends the text as a separate
// char event that no keydown handler can cancel, unlike a real keyboard.)
func press(key rune) chromedp.Action[chromedp.Void] {
	return chromedp.Func(func(ctx context.Context, t *chromedp.Target) error {
		k := kb.Keys[key]
		down := input.DispatchKeyEventParams{Type: input.DispatchKeyEventTypeKeyDown, Key: k.Key, Code: k.Code, Text: k.Text, UnmodifiedText: k.Unmodified,
			WindowsVirtualKeyCode: k.Windows, NativeVirtualKeyCode: k.Native}
		if _, err := cdp.Call(ctx, t, input.DispatchKeyEvent, down); err != nil {
			return err
		}
		up := down
		up.Type, up.Text, up.UnmodifiedText = input.DispatchKeyEventTypeKeyUp, "", ""
		_, err := cdp.Call(ctx, t, input.DispatchKeyEvent, up)
		return err
	})
}

// signIn fills the sign-in form and submits it with Enter (no script needed), landing on next.
func browserSignIn(ctx context.Context, base, username, next string) error {
	return chromedp.Do(ctx,
		chromedp.Navigate(base+"/signin?next="+next),
		chromedp.WaitReady(chromedp.ID("username")),
		chromedp.SendKeys(chromedp.ID("username"), username),
		chromedp.SendKeys(chromedp.ID("password"), testPassword+"\r"),
		chromedp.WaitReady(chromedp.ID("pair")),
	)
}

// An assessor grades five pairs with the keyboard (one with a note), undoes the last, flags
// it as disturbing instead; the database then holds exactly that.
func TestBrowserKeyboardJudging(t *testing.T) {
	ctx := withDeadline(t, newBrowser(t), 2*time.Minute)
	dir := screenshotDir(t)
	a := newTestApp(t, withPairs(2, 6), withAssessors(1), withPerPair(1), withGuidelines("# Judging reading lamps\n\nGrade how well the lamp suits **reading in bed**.\n\n- Warm light helps.\n- A clamp is a plus."))
	loadDemoLikeDocument(t, a)
	must := fatalIf(t)
	must(chromedp.Do(ctx, chromedp.EmulateViewport(1280, 900)))
	must(browserSignIn(ctx, a.server.URL, "a000", a.judgePath()))
	pair, err := chromedp.Run(ctx, chromedp.Evaluate[string](pairValueJS))
	must(err)
	must(screenshot(ctx, dir, "judge-desktop-1280x900.png", 1280, 900, false))
	must(screenshot(ctx, dir, "judge-phone-375x812.png", 375, 812, false))
	must(screenshot(ctx, dir, "judge-phone-375-full.png", 375, 812, true))
	// At phone width nothing may stick out sideways.
	overflow, err := chromedp.Run(ctx, chromedp.Evaluate[bool](`document.documentElement.scrollWidth > window.innerWidth`))
	must(err)
	if overflow {
		t.Errorf("the judging page is wider than a 375px screen")
	}
	must(chromedp.Do(ctx, chromedp.EmulateViewport(1280, 900)))

	const note = "Clamp looks flimsy"
	var judged []string
	for i, key := range []string{"3", "0", "4", "2", "1"} {
		judged = append(judged, pair)
		if i == 2 {
			must(chromedp.Do(ctx, press('n'), chromedp.KeyEvent(note), chromedp.KeyEvent(kb.Escape)))
		}
		must(chromedp.Do(ctx, press(rune(key[0]))))
		if pair, err = waitPairOtherThan(ctx, pair); err != nil {
			loc, _ := chromedp.Run(ctx, chromedp.Location())
			html, _ := chromedp.Run(ctx, chromedp.OuterHTML(chromedp.ID("status")))
			t.Fatalf("grading pair %d with key %s: %v (at %s, %s)", i+1, key, err, loc, html)
		}

	}
	must(chromedp.Do(ctx, press('u')))
	pair, err = waitPairOtherThan(ctx, pair)
	must(err)
	status, err := chromedp.Run(ctx, chromedp.Text(chromedp.ID("status")))
	must(err)
	if pair != judged[4] || !strings.Contains(status, "Undone") {
		t.Fatalf("after u the page shows pair %s with status %q, want the undone pair %s back", pair, status, judged[4])
	}
	must(chromedp.Do(ctx, press('g')))
	open, err := chromedp.Run(ctx, chromedp.Evaluate[bool](`document.getElementById("guidelines").open`))
	must(err)
	if !open {
		t.Errorf("g did not open the guidelines")
	}
	must(screenshot(ctx, dir, "judge-guidelines-1280x900.png", 1280, 900, false))
	must(chromedp.Do(ctx, press('g'), chromedp.EmulateViewport(375, 812), press('x')))
	must(screenshot(ctx, dir, "judge-cannot-375x812.png", 375, 812, false))
	must(chromedp.Do(ctx, chromedp.EmulateViewport(1280, 900), press('d')))
	_, err = waitPairOtherThan(ctx, judged[4])
	must(err)
	status, err = chromedp.Run(ctx, chromedp.Text(chromedp.ID("status")))
	must(err)
	if !strings.Contains(status, "cannot judge (disturbing)") {
		t.Errorf("status after flagging = %q", status)
	}

	// The database: four grades, the fifth pair withdrawn and then flagged, the note kept.
	want := map[string]string{judged[0]: "3", judged[1]: "0", judged[2]: "4", judged[3]: "2", judged[4]: "disturbing"}
	got := map[string]string{}
	withdrawn := 0
	for _, pid := range a.pairs {
		for _, j := range a.judgments(pid) {
			p := fmt.Sprint(pid)
			if p == judged[4] && j.Withdrawn && j.Grade != nil && *j.Grade == 1 {
				withdrawn++
			}
			if !j.Current {
				continue
			}
			got[p] = j.CannotJudge
			if j.Grade != nil {
				got[p] = fmt.Sprint(*j.Grade)
			}
			if (p == judged[2]) != (j.Note == note) {
				t.Errorf("pair %s has note %q", p, j.Note)
			}
			if j.TimeSpentMs <= 0 {
				t.Errorf("pair %s: time spent %d ms, want the time measured on the page", p, j.TimeSpentMs)
			}
		}
	}
	if fmt.Sprint(got) != fmt.Sprint(want) {
		t.Errorf("current judgments %v, want %v", got, want)
	}
	if withdrawn != 1 {
		t.Errorf("the undone grade 1 of pair %s is not kept as withdrawn", judged[4])
	}
}

// loadDemoLikeDocument gives the first pair's document a realistic HTML body, so the
// screenshots show a readable pane rather than one line.
func loadDemoLikeDocument(t *testing.T, a *testApp) {
	t.Helper()
	body := `<h2>Brass clamp reading lamp</h2><p>A compact lamp for reading in bed: the clamp fits headboards up to 4 cm thick, ` +
		`and the flexible arm lets the light fall on the page without lighting the whole room.</p>` +
		`<ul><li>Warm white LED, 2700 K, three brightness steps</li><li>USB-C powered, 1.5 m cable</li><li>Weight 310 g</li></ul>` +
		`<p>Customers say the clamp holds well but the switch is stiff at first. Not suitable for outdoor use.</p>` +
		strings.Repeat(`<p>The shade is spun aluminium with a brushed brass finish; the inside is matt white to avoid glare. `+
			`Replacement LEDs are not needed for the life of the lamp.</p>`, 4)
	a.rewriteDocuments("Brass clamp reading lamp, warm LED", body, "html")
}

// With JavaScript off, the same flow works through plain form posts and 303 redirects.
func TestBrowserJudgingWithoutJavaScript(t *testing.T) {
	ctx := withDeadline(t, newBrowser(t), 2*time.Minute)
	a := newTestApp(t, withPairs(1, 3), withAssessors(1), withPerPair(1))
	must := fatalIf(t)
	if _, err := chromedp.Call(ctx, emulation.SetScriptExecutionDisabled, emulation.SetScriptExecutionDisabledParams{Value: true}); err != nil {
		t.Fatal(err)
	}
	must(browserSignIn(ctx, a.server.URL, "a000", a.judgePath()))
	first, err := chromedp.Run(ctx, chromedp.AttributeValue(chromedp.CSS(`#pair input[name="pair"]`), "value"))
	must(err)
	must(chromedp.Do(ctx,
		chromedp.Click(chromedp.CSS(`#pair button[name="grade"][value="2"]`)),
		chromedp.WaitReady(chromedp.CSS(`#pair input[name="pair"]:not([value="`+first.Value+`"])`)),
	))
	second, err := chromedp.Run(ctx, chromedp.AttributeValue(chromedp.CSS(`#pair input[name="pair"]`), "value"))
	must(err)
	status, err := chromedp.Run(ctx, chromedp.OuterHTML(chromedp.ID("status")))
	must(err)
	if !strings.Contains(status, "Saved: grade 2.") || second.Value == first.Value {
		t.Fatalf("after a plain form post: status %q, pair %s -> %s; want the saved line and a new pair", status, first.Value, second.Value)
	}
	if grade := a.currentGrade(first.Value); grade != 2 {
		t.Errorf("stored grade %d, want 2", grade)
	}
	// Undo works as a plain form too: the pair comes back.
	must(chromedp.Do(ctx,
		chromedp.Click(chromedp.ID("undo")),
		chromedp.WaitReady(chromedp.CSS(`#pair input[name="pair"][value="`+first.Value+`"]`)),
	))
	withdrawn := 0
	for _, j := range a.judgments(pairNumber(t, first.Value)) {
		if j.Withdrawn {
			withdrawn++
		}
	}
	if withdrawn != 1 {
		t.Errorf("undo without JavaScript did not withdraw the judgment")
	}
	// On a phone the grade bar at the bottom of the screen is the same form: a tap posts it.
	must(chromedp.Do(ctx, phone(), chromedp.Reload(), chromedp.WaitReady(chromedp.ID("pair"))))
	off, err := chromedp.Run(ctx, chromedp.Evaluate[[]string](gradeButtonsOffScreenJS))
	must(err)
	if len(off) > 0 {
		t.Errorf("without JavaScript at 375×812, grade buttons not wholly on screen: %v", off)
	}
	must(chromedp.Do(ctx,
		chromedp.Click(chromedp.CSS(`#pair button[name="grade"][value="1"]`)),
		chromedp.WaitReady(chromedp.CSS(`#pair input[name="pair"]:not([value="`+first.Value+`"])`)),
	))
	if grade := a.currentGrade(first.Value); grade != 1 {
		t.Errorf("after a tap on grade 1 in the phone's grade bar: grade %d", grade)
	}
}
