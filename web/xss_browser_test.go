package web

import (
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/chromedp/cdproto/browser"
	"github.com/chromedp/cdproto/cdp"
	"github.com/chromedp/cdproto/input"
	"github.com/chromedp/cdproto/network"
	"github.com/chromedp/cdproto/page"
	"github.com/chromedp/chromedp"
)

// xssWatch runs before any script of every document and keeps what the policy blocked.
const xssWatch = `window.__blocked = [];
document.addEventListener("securitypolicyviolation", function (e) {
  window.__blocked.push(e.violatedDirective + " " + e.blockedURI + " " + (e.sample || ""));
});`

// xssProvoke does what a person might to set off a handler: every element gets
// mouseover, mouseenter and focus events, every <details> opens, and every javascript:
// link is clicked (there should be none; they are returned). It also lists the elements
// holding payload text, for the real mouse to pass over.
const xssProvoke = `(() => {
  for (const el of document.querySelectorAll("*")) {
    for (const type of ["mouseover", "mouseenter", "mousemove", "focus", "focusin"]) {
      try { el.dispatchEvent(new MouseEvent(type, {bubbles: type !== "mouseenter"})); } catch (e) {}
    }
  }
  for (const d of document.querySelectorAll("details")) d.open = true;
  const links = [];
  for (const a of document.querySelectorAll("a[href], area[href]")) {
    if (a.protocol === "javascript:") { links.push(a.outerHTML.slice(0, 200)); a.click(); }
  }
  window.scrollTo(0, 0);
  const points = [];
  for (const el of document.body ? document.body.querySelectorAll("*") : []) {
    const own = Array.from(el.attributes).some(at => at.value.includes("__xss_")) ||
      Array.from(el.childNodes).some(n => n.nodeType === 3 && n.nodeValue.includes("__xss_"));
    const r = el.getBoundingClientRect();
    if (own && r.width > 0 && r.height > 0 && r.bottom > 0 && r.top < window.innerHeight) {
      points.push([r.left + r.width / 2, r.top + Math.min(r.height, window.innerHeight - r.top) / 2]);
    }
  }
  return {links: links, points: points};
})()`

// xssTraces waits a moment for handlers and requests in flight, then returns the payload
// markers found on the window and what the policy blocked.
const xssTraces = `new Promise(done => setTimeout(() => done({
  fired: Object.keys(window).filter(k => k.startsWith("__xss_")),
  blocked: window.__blocked || []
}), 60))`

type xssPass struct {
	t      *testing.T
	h      *hostile
	ctx    context.Context
	bypass bool // the policy switched off: escaping and sanitising alone must hold

	mu        sync.Mutex
	documents map[string]network.Headers // every document response, by URL
	pages     int
	downloads map[string]bool // links seen since the last openDownloads
	opened    int
}

func (p *xssPass) errorf(format string, args ...any) {
	p.t.Helper()
	mode := "with the policy"
	if p.bypass {
		mode = "policy bypassed"
	}
	p.t.Errorf("["+mode+"] "+format, args...)
}

// check provokes the page as a visitor might and fails on any trace of execution.
func (p *xssPass) check(where string) {
	p.t.Helper()
	p.pages++
	type provoked struct {
		Links  []string     `json:"links"`
		Points [][2]float64 `json:"points"`
	}
	pr, err := chromedp.Run(p.ctx, chromedp.Evaluate[provoked](xssProvoke))
	if err != nil {
		p.errorf("%s: provoking: %v", where, err)
		return
	}
	for _, l := range pr.Links {
		p.errorf("%s: a javascript: link reached the page: %s", where, l)
	}
	// The real mouse passes over visible elements holding payload text (the viewport is
	// tall, so most pages fit).
	// A handful per page is enough for the real mouse; the synthetic events reached all.
	if len(pr.Points) > 12 {
		pr.Points = pr.Points[:12]
	}
	for _, pt := range pr.Points {
		if _, err := chromedp.Call(p.ctx, input.DispatchMouseEvent, input.DispatchMouseEventParams{Type: input.DispatchMouseEventTypeMouseMoved, X: pt[0], Y: pt[1]}); err != nil {
			p.errorf("%s: moving the mouse: %v", where, err)
			return
		}
	}
	type traces struct {
		Fired   []string `json:"fired"`
		Blocked []string `json:"blocked"`
	}
	tr, err := chromedp.Run(p.ctx, chromedp.Evaluate[traces](xssTraces, chromedp.EvalAwaitPromise))
	if err != nil {
		p.errorf("%s: reading traces: %v", where, err)
		return
	}
	if len(tr.Fired) > 0 {
		ids := make([]string, len(tr.Fired))
		for i, f := range tr.Fired {
			ids[i] = strings.TrimPrefix(f, "__xss_")
		}
		p.errorf("%s: payloads ran: %v", where, p.h.cat.named(ids))
	}
	// Markup that reached the page as markup shows up here even when the policy stopped it.
	for _, b := range tr.Blocked {
		p.errorf("%s: the policy had to block %s", where, b)
	}
	if hits := p.h.rec.take(); len(hits) > 0 {
		p.errorf("%s: payloads called home: %v", where, p.h.cat.named(hits))
	}
}

// visit opens a page, keeps its download links, and checks it.
func (p *xssPass) visit(path string) {
	p.t.Helper()
	if err := chromedp.Do(p.ctx, chromedp.Navigate(p.h.server.URL+path)); err != nil {
		p.errorf("GET %s: %v", path, err)
		return
	}
	links, err := chromedp.Run(p.ctx, chromedp.Evaluate[[]string](`Array.from(document.querySelectorAll("a[download], a.csv")).map(a => a.href)`))
	if err == nil {
		for _, l := range links {
			p.downloads[l] = true
		}
	}
	p.check(path)
}

// openDownloads opens every download link collected so far, as the user signed in now,
// from the page at path, and forgets them.
func (p *xssPass) openDownloads(path string) {
	p.t.Helper()
	p.visit(path)
	for d := range p.downloads {
		p.download(d)
		p.opened++
	}
	clear(p.downloads)
}

// signIn replaces the browser's session with one of the named user.
func (p *xssPass) signIn(name, next, waitFor string) {
	p.t.Helper()
	if _, err := chromedp.Call(p.ctx, network.ClearBrowserCookies, cdp.Empty{}); err != nil {
		p.t.Fatal(err)
	}
	err := chromedp.Do(p.ctx,
		chromedp.Navigate(p.h.server.URL+"/signin?next="+next),
		chromedp.WaitReady("#username"),
		chromedp.SendKeys("#username", name),
		chromedp.SendKeys("#password", testPassword+"\r"),
		// The sign-in page has a <main> too: wait for the signed-in header first, so a
		// selector such as "main" is not found on the page that is about to go away.
		chromedp.WaitReady("form.signout"),
		chromedp.WaitReady(waitFor),
	)
	if err != nil {
		p.t.Fatalf("signing in %s: %v", name, err)
	}
}

// download opens a download address: the browser must not show it as a page.
func (p *xssPass) download(url string) {
	p.t.Helper()
	err := chromedp.Do(p.ctx, chromedp.Navigate(url))
	var le *chromedp.LoadError
	if err != nil && !errors.As(err, &le) {
		p.errorf("opening %s: %v", url, err)
		return
	}
	loc, err := chromedp.Run(p.ctx, chromedp.Location())
	if err != nil {
		p.errorf("location after %s: %v", url, err)
		return
	}
	if loc == url {
		ct, _ := chromedp.Run(p.ctx, chromedp.Evaluate[string](`document.contentType`))
		p.errorf("%s was shown in the browser (as %s) instead of downloaded", url, ct)
	}
	p.check("after opening " + url)
}

func (p *xssPass) run() {
	t, h := p.t, p.h
	must := fatalIf(t)
	must(chromedp.Do(p.ctx, chromedp.EmulateViewport(1280, 6000)))
	_, err := chromedp.Call(p.ctx, page.AddScriptToEvaluateOnNewDocument, page.AddScriptToEvaluateOnNewDocumentParams{Source: xssWatch})
	must(err)
	if p.bypass {
		_, err = chromedp.Call(p.ctx, page.SetBypassCSP, page.SetBypassCSPParams{Enabled: true})
		must(err)
	}
	_, err = chromedp.CallBrowser(p.ctx, browser.SetDownloadBehavior, browser.SetDownloadBehaviorParams{Behavior: browser.SetDownloadBehaviorBehaviorDeny})
	must(err)
	must(chromedp.Listen(p.ctx, func(ev any) {
		if e, ok := ev.(*network.EventResponseReceived); ok && e.Type == network.ResourceTypeDocument && strings.HasPrefix(e.Response.URL, h.server.URL) {
			p.mu.Lock()
			p.documents[e.Response.URL] = e.Response.Headers
			p.mu.Unlock()
		}
	}))

	// The traces are noticed: a page without a policy runs its payload.
	must(chromedp.Do(p.ctx, chromedp.Navigate(h.server.URL+"/xss-self-check")))
	if _, err := chromedp.Run(p.ctx, chromedp.Poll[bool](`window.__xss_0 === 1`, chromedp.WithPollingTimeout(10*time.Second))); err != nil {
		t.Fatalf("the self-check payload did not run: the test could not see an attack either (%v)", err)
	}
	for range 100 {
		if h.rec.seen() > 0 {
			break
		}
		time.Sleep(50 * time.Millisecond)
	}
	if hits := h.rec.take(); len(hits) != 1 || hits[0] != "0" {
		t.Fatalf("the self-check payload's request was not recorded: %v", hits)
	}

	base := fmt.Sprintf("/projects/%d", h.project.ID)
	assessor := h.assessors[0]
	if p.bypass {
		assessor = h.assessors[1]
	}

	// The calibration round first (the assessor is new), each pair and its feedback; then
	// the judging screen, pair by pair, each judged with a hostile note through htmx.
	p.signIn(assessor, base+"/judge", "#pair")
	for i := 1; i <= 5; i++ {
		p.check(fmt.Sprintf("calibration pair %d", i))
		err := chromedp.Do(p.ctx, chromedp.Click(chromedp.CSS(`#judge-form button[name="grade"][value="1"]`)),
			chromedp.WaitReady("#calibration-feedback"))
		if err != nil {
			t.Fatalf("answering calibration pair %d: %v", i, err)
		}
		p.check(fmt.Sprintf("calibration feedback %d", i))
		if err := chromedp.Do(p.ctx, chromedp.Click(chromedp.ID("next")), chromedp.WaitReady("#pair")); err != nil {
			t.Fatalf("after calibration feedback %d: %v", i, err)
		}
	}
	pair, err := chromedp.Run(p.ctx, chromedp.Evaluate[string](pairValueJS))
	must(err)
	note, _ := json.Marshal(h.cat.all("note typed on the judging screen"))
	seen := 0
	for pair != "" && seen <= len(h.pairs) {
		seen++
		p.check("judging screen, pair " + pair)
		if pair == fmt.Sprint(h.pairs[0]) {
			// Text shows as the very characters stored, template text included.
			for sel, want := range map[string]string{"#query-text": h.textQuery, "#doc-title": h.textTitle} {
				got, err := chromedp.Run(p.ctx, chromedp.Evaluate[string](`document.querySelector("`+sel+`").textContent`))
				if err != nil || got != want {
					p.errorf("judging screen %s shows %q, want the stored text %q (%v)", sel, got, want, err)
				}
			}
		}
		_, err = chromedp.Run(p.ctx, chromedp.Evaluate[bool](`document.getElementById("note").value = `+string(note)+`;
			document.querySelector('#judge-form button[name=grade][value="1"]').click(); true`))
		if err != nil {
			html, _ := chromedp.Run(p.ctx, chromedp.Evaluate[string](`document.body.outerHTML`))
			t.Fatalf("grading pair %s: %v\n%s", pair, err, html)
		}
		if pair, err = waitPairOtherThan(p.ctx, pair); err != nil {
			t.Fatalf("after judging: %v", err)
		}
	}
	if seen != len(h.pairs) {
		p.errorf("the judging screen offered %d pairs, want %d", seen, len(h.pairs))
	}
	p.visit(base + "/mine")
	p.visit(base + "/feedback")
	p.signIn("bea", base+"/mine", "#mywork")
	p.check("bea's My work")
	p.visit(base + "/feedback")
	p.openDownloads(base + "/feedback")

	// The lead's pages, every adjudication screen among them.
	p.signIn("lena", base+"/overview", "main")
	p.check("overview")
	hist, err := h.store.GuidelineHistory(context.Background(), h.project.ID)
	must(err)
	paths := []string{base + "/queue", base + "/assessors", base + "/agreement", base + "/guidelines",
		base + "/team", base + "/settings", base + "/export", base + "/evaluate", base + "/import", h.evalPage,
		fmt.Sprintf("%s/assessors/%d", base, h.users["bea"].ID), fmt.Sprintf("%s/assessors/%d", base, h.users[assessor].ID),
		base + "/queue?min=0", base + "/sources", base + "/assessor-effects", base + "/calibration-scores"}
	for _, g := range hist {
		paths = append(paths, fmt.Sprintf("%s/guidelines/%d", base, g.ID))
	}
	paths = append(paths, h.jobs...)
	for _, pr := range h.pairs {
		paths = append(paths, fmt.Sprintf("%s/pairs/%d/adjudicate", base, pr))
	}
	for _, path := range paths {
		p.visit(path)
	}
	// The queue by keyboard: j moves the selection over hostile rows, Enter opens one.
	p.visit(base + "/queue")
	if err := chromedp.Do(p.ctx, chromedp.KeyEvent("j"), chromedp.KeyEvent("j")); err == nil {
		p.check("queue after moving the selection")
	}

	// Downloads, as the lead: every CSV table the pages link to, and every export.
	downloads := []string{h.server.URL + h.evalPage + "/per-query.csv"}
	for _, f := range []string{"csv", "jsonl", "qrels", "svmlight"} {
		downloads = append(downloads, fmt.Sprintf("%s%s/export.zip?format=%s&min_judgments=1", h.server.URL, base, f))
	}
	for _, d := range downloads {
		p.downloads[d] = true
	}
	p.openDownloads(base + "/overview")

	// The admin's pages.
	p.signIn("root", "/admin/users", "main")
	p.check("People")
	for _, path := range []string{"/admin/audit", "/", "/account/tokens", base + "/team", base + "/overview"} {
		p.visit(path)
	}
	p.download(h.server.URL + "/admin/audit.csv")

	// The API's bare files, opened with the token as a browser would send it.
	token := newToken(t, h.testApp, h.signIn("root"))
	_, err = chromedp.Call(p.ctx, network.SetExtraHTTPHeaders, network.SetExtraHTTPHeadersParams{Headers: network.Headers{"Authorization": "Bearer " + token}})
	must(err)
	for _, q := range []string{"format=csv&archive=none", "format=jsonl&archive=none", "format=qrels&archive=none", "format=csv"} {
		p.download(fmt.Sprintf("%s/api/v1%s/export?%s&min_judgments=1", h.server.URL, base, q))
	}
	_, err = chromedp.Call(p.ctx, network.SetExtraHTTPHeaders, network.SetExtraHTTPHeadersParams{Headers: network.Headers{}})
	must(err)

	// Every document the browser received carried the policy.
	p.mu.Lock()
	defer p.mu.Unlock()
	for u, hd := range p.documents {
		if strings.Contains(u, "/xss-self-check") {
			continue
		}
		found := false
		for k, v := range hd {
			if strings.EqualFold(k, "Content-Security-Policy") && fmt.Sprint(v) != "" {
				found = true
			}
		}
		if !found {
			p.errorf("%s came without a Content-Security-Policy", u)
		}
	}
	if p.pages < len(h.pairs)*2+20 || len(p.documents) < 40 {
		p.errorf("only %d pages checked and %d documents received; the walk fell short", p.pages, len(p.documents))
	}
	if p.opened < 15 {
		p.errorf("only %d downloads opened", p.opened)
	}
	t.Logf("bypass=%v: %d checks, %d documents, %d downloads opened", p.bypass, p.pages, len(p.documents), p.opened)
}

// Stored payloads in every text a person or an import can put in, shown in headless
// Chromium on every screen that shows them, hovered, opened and clicked: nothing runs. The
// pass is made twice, with the page's policy and with the policy bypassed, so escaping and
// sanitising are checked on their own and not only behind the policy.
func TestStoredPayloadsNeverRunInTheBrowser(t *testing.T) {
	h := newHostile(t)
	for _, bypass := range []bool{false, true} {
		name := "with the policy"
		if bypass {
			name = "policy bypassed"
		}
		t.Run(name, func(t *testing.T) {
			ctx := newBrowser(t)
			ctx, cancel := context.WithTimeout(ctx, 5*time.Minute)
			defer cancel()
			h.t = t
			p := &xssPass{t: t, h: h, ctx: ctx, bypass: bypass, documents: map[string]network.Headers{}, downloads: map[string]bool{}}
			p.run()
		})
	}
	if hits := h.rec.take(); len(hits) > 0 {
		t.Errorf("payloads called home at the end: %v", h.cat.named(hits))
	}
}
