package web

import (
	"context"
	"os"
	"path/filepath"
	"strconv"
	"testing"
	"time"

	"github.com/chromedp/cdproto/emulation"
	"github.com/chromedp/chromedp"

	"github.com/pertinent/pertinent/store"
)

// heatFacts is what the agreement page's heat map shows, measured in the browser.
type heatFacts struct {
	Assessors   int      // row labels
	Values      int      // cells with a written value
	Mismatches  []string // cells whose written value is not the table's kappa to two decimals
	MinFontPx   float64  // smallest rendered font of a cell value
	MinAxisPx   float64  // smallest rendered font of an axis label
	MinCellPx   float64  // smallest rendered cell side
	Legend      int      // entries of the colour scale's legend
	Scrolls     bool     // the heat map's box scrolls sideways
	PageTooWide bool     // the page itself is wider than the window
}

// heatFactsJS reads the heat map: sizes are taken as rendered (font size times the SVG's
// scale on screen), so a chart shrunk to fit would fail however large its own numbers.
const heatFactsJS = `(() => {
	const svg = document.querySelector("svg.heatmap");
	const scale = svg.getBoundingClientRect().width / svg.viewBox.baseVal.width;
	const px = el => parseFloat(getComputedStyle(el).fontSize) * scale;
	const figures = {};
	for (const el of document.querySelectorAll('[data-figure^="cohen-quadratic:"]')) figures[el.dataset.figure.slice("cohen-quadratic:".length)] = el;
	const f = {Assessors: 0, Values: 0, Mismatches: [], MinFontPx: 1e9, MinAxisPx: 1e9, MinCellPx: 1e9};
	f.Assessors = svg.querySelectorAll("text.heat-axis").length / 2;
	for (const g of svg.querySelectorAll("g.heat-cell")) {
		const r = g.querySelector("rect").getBoundingClientRect();
		f.MinCellPx = Math.min(f.MinCellPx, r.width, r.height);
		const t = g.querySelector("text.heat-value");
		if (!t) continue;
		f.Values++;
		f.MinFontPx = Math.min(f.MinFontPx, px(t));
		// The cell's two names, then the pair's figure in the table beside the chart.
		const names = g.querySelector("title").textContent.split(": ")[0].split(" \u00d7 ");
		const fig = figures[names.join("|")] || figures[names.slice().reverse().join("|")];
		const shown = t.textContent.replace("\u2212", "-");
		const ok = !fig ? false : fig.hasAttribute("data-value")
			? Math.abs(parseFloat(shown) - parseFloat(fig.dataset.value)) <= 0.005 + 1e-9 && /^-?[0-9]\.[0-9]{2}$/.test(shown)
			: shown === "\u2013";
		if (!ok) f.Mismatches.push(names.join(" × ") + " shows " + t.textContent + ", table " + (fig ? fig.outerHTML : "none"));
	}
	for (const t of svg.querySelectorAll("text.heat-axis")) f.MinAxisPx = Math.min(f.MinAxisPx, px(t));
	f.Legend = document.querySelectorAll(".heat-legend li").length;
	const box = document.querySelector(".heat-scroll");
	f.Scrolls = box.scrollWidth > box.clientWidth;
	f.PageTooWide = document.documentElement.scrollWidth > window.innerWidth;
	return f;
})()`

// checkHeat asserts what every heat map must show: every off-diagonal cell's kappa written
// at a readable size, readable names, the legend.
func checkHeat(t *testing.T, f heatFacts, assessors int) {
	t.Helper()
	if f.Assessors != assessors || f.Values != assessors*(assessors-1) {
		t.Errorf("heat map with %d assessors and %d written values, want %d and %d", f.Assessors, f.Values, assessors, assessors*(assessors-1))
	}
	if len(f.Mismatches) > 0 {
		t.Errorf("cells whose text is not their kappa: %v", f.Mismatches)
	}
	if f.MinFontPx < 12 || f.MinAxisPx < 12 {
		t.Errorf("smallest rendered text: cell values %.1f px, names %.1f px; want at least 12", f.MinFontPx, f.MinAxisPx)
	}
	if f.MinCellPx < heatMinCell-1 {
		t.Errorf("smallest rendered cell %.1f px, want at least %d", f.MinCellPx, heatMinCell)
	}
	if f.Legend != 8 {
		t.Errorf("legend has %d entries, want the six Landis & Koch bands, undefined and the diagonal", f.Legend)
	}
	if f.PageTooWide {
		t.Errorf("the agreement page is wider than the window; the heat map should scroll in its own box")
	}
}

// elementShot writes a PNG of the element matching sel.
func elementShot(ctx context.Context, dir, name, sel string) error {
	png, err := chromedp.Run(ctx, chromedp.Screenshot(chromedp.CSS(sel)))
	if err != nil {
		return err
	}
	return os.WriteFile(filepath.Join(dir, name), png, 0o644)
}

// The agreement page's heat map for three assessors: large cells with their kappa in them.
func TestBrowserHeatMapShowsKappaInEveryCell(t *testing.T) {
	a := newTestApp(t)
	seedLead(t, a)
	ctx := withDeadline(t, newBrowser(t), 2*time.Minute)
	dir := screenshotDir(t)
	f := openHeatMap(t, ctx, a, "lena", dir, "agreement-3-assessors.png")
	t.Logf("3 assessors: %+v", f)
	checkHeat(t, f, 3)
	if f.MinCellPx < heatMaxCell-1 {
		t.Errorf("with three assessors the cells are %.1f px, want the largest size %d", f.MinCellPx, heatMaxCell)
	}
}

// Twelve assessors on a phone: the heat map keeps its readable size and scrolls sideways in
// its own box, instead of shrinking to fit or widening the page.
func TestBrowserHeatMapScrollsWhenWide(t *testing.T) {
	const assessors = 12
	a := newTestApp(t, withPairs(2, 4), withAssessors(assessors), withPerPair(assessors))
	err := a.store.Load(context.Background(), a.project.ID, func(l *store.Loader) error {
		for i, u := range a.assessors {
			for p, pair := range a.pairs {
				g := (p + i*p/5 + i%3) % 5 // some agreement, some not
				if err := l.Judgment(store.RecordedJudgment{PairID: pair, UserID: u.ID, Grade: &g, TimeSpentMs: 1000}); err != nil {
					return err
				}
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	ctx := withDeadline(t, newBrowser(t), 2*time.Minute)
	dir := screenshotDir(t)
	must := fatalIf(t)
	f := openHeatMap(t, ctx, a, "leader", dir, "agreement-12-assessors.png")
	t.Logf("12 assessors at 1280: %+v", f)
	checkHeat(t, f, assessors)
	must(elementShot(ctx, dir, "agreement-heat-12.png", ".chart-with-table"))
	// The dark scheme has its own text colours for the middle band.
	_, err = chromedp.Call(ctx, emulation.SetEmulatedMedia, emulation.SetEmulatedMediaParams{
		Features: []*emulation.MediaFeature{{Name: "prefers-color-scheme", Value: "dark"}}})
	must(err)
	must(elementShot(ctx, dir, "agreement-heat-12-dark.png", ".chart-with-table"))
	_, err = chromedp.Call(ctx, emulation.SetEmulatedMedia, emulation.SetEmulatedMediaParams{})
	must(err)
	must(screenshot(ctx, dir, "agreement-12-assessors-375x812.png", 375, 812, false))
	f, err = chromedp.Run(ctx, chromedp.Evaluate[heatFacts](heatFactsJS))
	must(err)
	t.Logf("12 assessors at 375: %+v", f)
	checkHeat(t, f, assessors)
	if !f.Scrolls {
		t.Errorf("at 375 px the heat map of %d assessors does not scroll sideways", assessors)
	}
}

// openHeatMap signs the lead in at 1280×900, opens the agreement page, keeps a screenshot and
// reads the heat map's facts.
func openHeatMap(t *testing.T, ctx context.Context, a *testApp, lead, dir, png string) heatFacts {
	t.Helper()
	err := chromedp.Do(ctx, chromedp.EmulateViewport(1280, 900),
		chromedp.Navigate(a.server.URL+"/signin"),
		chromedp.SendKeys("#username", lead),
		chromedp.SendKeys("#password", testPassword),
		chromedp.Submit("#password"),
		chromedp.WaitVisible(".projects"),
		chromedp.Navigate(a.server.URL+"/projects/"+strconv.FormatInt(a.project.ID, 10)+"/agreement"),
		chromedp.WaitVisible("svg.heatmap"),
		shot(dir, png),
	)
	if err != nil {
		t.Fatal(err)
	}
	f, err := chromedp.Run(ctx, chromedp.Evaluate[heatFacts](heatFactsJS))
	if err != nil {
		t.Fatal(err)
	}
	return f
}
