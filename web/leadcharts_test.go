package web

import (
	"fmt"
	"math"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/agreement"
)

// assessorNames makes n assessor names.
func assessorNames(n int) []string {
	out := make([]string, n)
	for i := range out {
		out[i] = fmt.Sprintf("assessor%02d", i)
	}
	return out
}

// heatValue gives every pair a kappa of its own, one pair undefined, some below zero.
func heatValue(i, j int) agreement.Value {
	a, b := min(i, j), max(i, j)
	if a == 0 && b == 1 {
		return agreement.Value{Why: "no pairs graded by both"}
	}
	return agreement.Value{V: math.Sin(float64(a*7+b*3)) * 0.999, OK: true}
}

func TestHeatMapGeometry(t *testing.T) {
	for _, tc := range []struct {
		n, cell int
	}{
		{3, heatMaxCell},  // a few: the largest cells
		{8, 60},           // 480 px of grid shared out
		{30, heatMinCell}, // many: the smallest readable cell, and the page scrolls
	} {
		t.Run(strconv.Itoa(tc.n), func(t *testing.T) {
			ns := assessorNames(tc.n)
			h := newHeatMap("t", "d", ns, heatValue)
			if h.Cell != tc.cell {
				t.Errorf("cell %d px, want %d", h.Cell, tc.cell)
			}
			if h.Font < 12 {
				t.Errorf("cell values at %d px, want at least 12", h.Font)
			}
			if len(h.Cells) != tc.n*tc.n || len(h.Rows) != tc.n || len(h.Cols) != tc.n {
				t.Fatalf("%d cells, %d row and %d column labels for %d assessors", len(h.Cells), len(h.Rows), len(h.Cols), tc.n)
			}
			if h.Width < tc.n*h.Cell || h.Height < tc.n*h.Cell {
				t.Errorf("%d×%d px for a grid of %d px", h.Width, h.Height, tc.n*h.Cell)
			}
			for k, c := range h.Cells {
				i, j := k/tc.n, k%tc.n
				v := heatValue(i, j)
				want := kappaText(v.V)
				switch {
				case i == j:
					want = ""
				case !v.OK:
					want = "–"
				}
				if c.Text != want {
					t.Errorf("cell %d,%d shows %q, want %q", i, j, c.Text, want)
				}
				if c.Text != "" && c.TextClass == "" {
					t.Errorf("cell %d,%d has text without a text class", i, j)
				}
				if c.X+h.Cell > h.Width || c.Y+h.Cell > h.Height || c.CX != float64(c.X)+float64(h.Cell)/2 || c.CY != float64(c.Y)+float64(h.Cell)/2 {
					t.Errorf("cell %d,%d at %d,%d (text at %.1f,%.1f) in a %d×%d chart", i, j, c.X, c.Y, c.CX, c.CY, h.Width, h.Height)
				}
				if !strings.HasPrefix(c.Label, ns[i]) {
					t.Errorf("cell %d,%d tooltip %q", i, j, c.Label)
				}
			}
			// Names sit left of the grid and, slanted at 45°, within the chart's top and right.
			left, top := h.Cells[0].X, h.Cells[0].Y
			for i, r := range h.Rows {
				w := float64(len([]rune(r.Text))) * heatCharW
				if r.X > float64(left) || r.X-w < 0 || r.Text != ns[i] {
					t.Errorf("row label %q at x %.1f, width %.1f, grid from %d", r.Text, r.X, w, left)
				}
			}
			for _, c := range h.Cols {
				reach := float64(len([]rune(c.Text))) * heatCharW * math.Sqrt2 / 2
				if c.Y > float64(top) || c.Y-reach < 0 || c.X+reach > float64(h.Width) {
					t.Errorf("column label %q from %.1f,%.1f reaches %.1f px up and right in a %d px wide chart", c.Text, c.X, c.Y, reach, h.Width)
				}
			}
		})
	}
}

func TestHeatMapShortensLongNames(t *testing.T) {
	long := "a-very-long-assessor-name-indeed"
	h := newHeatMap("t", "d", []string{long, "bo"}, heatValue)
	if got := h.Rows[0].Text; len([]rune(got)) != heatNameMax || !strings.HasSuffix(got, "…") || h.Rows[0].Name != long {
		t.Errorf("long name shown as %q (full %q)", got, h.Rows[0].Name)
	}
	if h.Rows[1].Text != "bo" {
		t.Errorf("short name shown as %q", h.Rows[1].Text)
	}
}

func TestKappaText(t *testing.T) {
	for v, want := range map[float64]string{0.8312: "0.83", -0.1234: "−0.12", -0.001: "0.00", 1: "1.00", -1: "−1.00", 0.996: "1.00"} {
		if got := kappaText(v); got != want {
			t.Errorf("kappaText(%v) = %q, want %q", v, got, want)
		}
	}
}

// The legend prints the bands as Landis & Koch (1977, Biometrics 33(1), p. 165) do:
// < 0.00 poor, 0.00–0.20 slight, 0.21–0.40 fair, 0.41–0.60 moderate, 0.61–0.80
// substantial, 0.81–1.00 almost perfect.
func TestHeatMapLegendFollowsLandisKoch(t *testing.T) {
	h := newHeatMap("t", "d", assessorNames(3), heatValue)
	var got []string
	for _, k := range h.Legend {
		got = append(got, k.Label)
	}
	want := []string{"< 0.00 poor", "0.00–0.20 slight", "0.21–0.40 fair", "0.41–0.60 moderate", "0.61–0.80 substantial",
		"0.81–1.00 almost perfect", "– undefined", "the same assessor"}
	if strings.Join(got, "|") != strings.Join(want, "|") {
		t.Errorf("legend %q, want %q", got, want)
	}
	// Every cell's colour is one of the legend's.
	keys := map[string]bool{}
	for _, k := range h.Legend {
		keys[k.Class+" "+k.Opacity] = true
	}
	for _, c := range h.Cells {
		if !keys[c.Class+" "+c.Opacity] {
			t.Errorf("cell %q coloured %s at %s, which the legend does not show", c.Label, c.Class, c.Opacity)
		}
	}
}

// contrast is the WCAG 2 contrast ratio of two sRGB colours (relative luminance as defined
// in WCAG 2.1, "relative luminance" and "contrast ratio").
func contrast(a, b [3]float64) float64 {
	lum := func(c [3]float64) float64 {
		var l [3]float64
		for i, v := range c {
			if v <= 0.04045 {
				l[i] = v / 12.92
			} else {
				l[i] = math.Pow((v+0.055)/1.055, 2.4)
			}
		}
		return 0.2126*l[0] + 0.7152*l[1] + 0.0722*l[2]
	}
	la, lb := lum(a), lum(b)
	return (max(la, lb) + 0.05) / (min(la, lb) + 0.05)
}

func hexColour(t *testing.T, s string) [3]float64 {
	t.Helper()
	var c [3]float64
	for i := range c {
		v, err := strconv.ParseUint(s[1+2*i:3+2*i], 16, 8)
		if err != nil {
			t.Fatalf("colour %q: %v", s, err)
		}
		c[i] = float64(v) / 255
	}
	return c
}

func TestContrastFormula(t *testing.T) {
	white, black := [3]float64{1, 1, 1}, [3]float64{}
	// 21:1 is the largest ratio, by the WCAG definition.
	if got := contrast(white, black); math.Abs(got-21) > 1e-9 {
		t.Errorf("white on black %.4f, want 21", got)
	}
	// #767676 on white is 4.54:1, the lightest grey that passes AA (WebAIM's contrast
	// checker; value from memory).
	if got := contrast(hexColour(t, "#767676"), white); math.Abs(got-4.54) > 0.005 {
		t.Errorf("#767676 on white %.3f, want 4.54", got)
	}
}

// Every cell's value reads at 4.5:1 or better (WCAG 2 AA for normal text) on its band's
// colour, in the light and the dark scheme of style.css.
func TestHeatMapTextContrast(t *testing.T) {
	css, err := assets.ReadFile("static/style.css")
	if err != nil {
		t.Fatal(err)
	}
	// The first :root block is the light palette, the one in the dark media query the dark.
	light := string(css[:strings.Index(string(css), "@media (prefers-color-scheme: dark)")])
	darkStart := strings.Index(string(css), "@media (prefers-color-scheme: dark)")
	dark := string(css[darkStart : darkStart+strings.Index(string(css[darkStart:]), "}\n}")])
	varRE := regexp.MustCompile(`--([a-z-]+): (#[0-9a-f]{6})`)
	palette := func(block string) map[string][3]float64 {
		p := map[string][3]float64{}
		for _, m := range varRE.FindAllStringSubmatch(block, -1) {
			p[m[1]] = hexColour(t, m[2])
		}
		return p
	}
	schemes := map[string]map[string][3]float64{"light": palette(light), "dark": palette(dark)}
	for _, name := range []string{"light", "dark"} {
		for k, v := range schemes["light"] { // the dark block only overrides
			if _, ok := schemes[name][k]; !ok {
				schemes[name][k] = v
			}
		}
	}
	// The text colour of each class per scheme, as style.css sets it; the rules are checked
	// to be there, so the two cannot drift apart unnoticed.
	text := map[string]map[string]string{
		"on-faint":  {"light": "fg", "dark": "fg"},
		"on-mid":    {"light": "fg", "dark": "accent-fg"},
		"on-strong": {"light": "accent-fg", "dark": "accent-fg"},
	}
	for _, rule := range []string{".heat-value.on-faint { fill: var(--fg); }", ".heat-value.on-mid { fill: var(--fg); }",
		".heat-value.on-strong { fill: var(--accent-fg); }", "@media (prefers-color-scheme: dark) { .heat-value.on-mid { fill: var(--accent-fg); } }",
		".heat.pos { fill: var(--accent); }", ".heat.neg { fill: var(--warn); }", ".heat.none { fill: var(--card);"} {
		if !strings.Contains(string(css), rule) {
			t.Errorf("style.css lacks %q", rule)
		}
	}
	fill := map[string]string{"heat pos": "accent", "heat neg": "warn", "heat none": "card"}
	looks := map[string]struct{ Class, Opacity, Text string }{"undefined": {"heat none", "1", "on-faint"}}
	for band, look := range heatLook {
		looks[band] = look
	}
	for band, look := range looks {
		op, err := strconv.ParseFloat(look.Opacity, 64)
		if err != nil {
			t.Fatal(err)
		}
		for scheme, p := range schemes {
			var bg [3]float64
			for i := range bg { // the fill at its opacity over the card
				bg[i] = op*p[fill[look.Class]][i] + (1-op)*p["card"][i]
			}
			ratio := contrast(p[text[look.Text][scheme]], bg)
			t.Logf("%s, %s scheme: %.2f:1", band, scheme, ratio)
			if ratio < 4.5 {
				t.Errorf("%s cells in the %s scheme: text %s at %.2f:1 on the fill, want at least 4.5", band, scheme, look.Text, ratio)
			}
		}
	}
}
