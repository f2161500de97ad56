package web

import (
	"fmt"
	"math"
	"strconv"

	"github.com/pertinent/pertinent/agreement"
)

// Charts are inline SVG drawn by templates/_leadcharts.html from the geometry computed here:
// no script, no style attribute, colours from CSS classes, and a title, a description and
// the numbers in a table beside each chart.

// barChart is a simple vertical bar chart.
type barChart struct {
	ID     string
	Title  string
	Desc   string
	Width  int
	Height int
	Bars   []chartBar
	Ticks  []chartTick // labels under the bars
	Max    int
	Small  bool
}

type chartBar struct {
	X, Y, W, H float64
	Label      string // for the bar's own <title>
}

type chartTick struct {
	X     float64
	Label string
}

// newBarChart lays out values as bars in a width × height box with room for labels below.
func newBarChart(id, title, desc string, labels []string, values []int, width, height int, small bool) barChart {
	c := barChart{ID: id, Title: title, Desc: desc, Width: width, Height: height, Small: small}
	for _, v := range values {
		c.Max = max(c.Max, v)
	}
	bottom := float64(height)
	if !small {
		bottom -= 18
	}
	top := 4.0
	n := max(len(values), 1)
	slot := float64(width) / float64(n)
	gap := math.Min(slot*0.2, 4)
	every := max(1, n/8) // at most about eight labels under a wide chart
	for i, v := range values {
		h := 0.0
		if c.Max > 0 {
			h = (bottom - top) * float64(v) / float64(c.Max)
		}
		x := float64(i)*slot + gap/2
		c.Bars = append(c.Bars, chartBar{X: round1(x), Y: round1(bottom - h), W: round1(slot - gap), H: round1(h),
			Label: labels[i] + ": " + strconv.Itoa(v)})
		if !small && (i%every == 0 || i == n-1) {
			c.Ticks = append(c.Ticks, chartTick{X: round1(x + (slot-gap)/2), Label: labels[i]})
		}
	}
	return c
}

func round1(x float64) float64 { return math.Round(x*10) / 10 }

// stackedBar is the one-line progress bar of pairs by state.
type stackedBar struct {
	Title    string
	Segments []segment
}

type segment struct {
	X, W  float64 // percent of the width
	Class string
	Label string
}

func newStackedBar(title string, parts []int, classes, labels []string) stackedBar {
	total := 0
	for _, p := range parts {
		total += p
	}
	b := stackedBar{Title: title}
	x := 0.0
	for i, p := range parts {
		w := 0.0
		if total > 0 {
			w = 100 * float64(p) / float64(total)
		}
		b.Segments = append(b.Segments, segment{X: round1(x), W: round1(w), Class: classes[i], Label: labels[i] + ": " + strconv.Itoa(p)})
		x += w
	}
	return b
}

// heatMap is a square grid of cells, one per ordered pair of assessors, each coloured by
// the Landis & Koch (1977) band of its kappa and carrying the value to two decimals. Its
// size follows the number of assessors: large cells for a few, at least heatMinCell pixels
// for many, in which case the page scrolls it sideways rather than shrinking the text.
type heatMap struct {
	Title  string
	Desc   string
	Width  int
	Height int
	Cell   int
	Font   int // the cell values' font size, px
	Rows   []heatLabel
	Cols   []heatLabel
	Cells  []heatCell
	Legend []heatKey
}

// heatLabel is an axis label: an assessor's name, shortened when long.
type heatLabel struct {
	X, Y float64
	Text string
	Name string
}

type heatCell struct {
	X, Y      int
	CX, CY    float64 // the centre, where the value is written
	Class     string  // fill colour: the band
	Opacity   string
	Text      string // the value to two decimals, "–" when undefined, "" on the diagonal
	TextClass string // a text colour that reads on the cell's fill in light and dark schemes
	Label     string // the cell's tooltip
}

// heatKey is one entry of the colour scale's legend.
type heatKey struct {
	Class   string
	Opacity string
	Label   string
}

const (
	heatMaxCell  = 72 // a few assessors
	heatMinCell  = 48 // many: room for "−0.12" at 13 px bold
	heatGridSpan = 480
	heatNameMax  = 16  // runes of a name on an axis; the full name is in its tooltip
	heatCharW    = 7.8 // average advance of a 13 px axis label
)

// heatLook is how a band looks: the fill class, its opacity over the card, and the text
// class for the value on it. The opacities are chosen so that the text class reaches a
// contrast of 4.5:1 (WCAG 2) in both colour schemes; TestHeatMapTextContrast checks them
// against the palette in style.css. A continuous opacity cannot: in the dark scheme
// neither text colour reaches 4.5:1 on the middle of the range.
var heatLook = map[string]struct{ Class, Opacity, Text string }{
	"poor":           {"heat neg", "1", "on-strong"},
	"slight":         {"heat pos", "0.12", "on-faint"},
	"fair":           {"heat pos", "0.28", "on-faint"},
	"moderate":       {"heat pos", "0.45", "on-faint"},
	"substantial":    {"heat pos", "0.73", "on-mid"},
	"almost perfect": {"heat pos", "1", "on-strong"},
}

// cellSize is the side of a heat map cell for n assessors.
func cellSize(n int) int {
	return min(heatMaxCell, max(heatMinCell, heatGridSpan/max(n, 1)))
}

// newHeatMap draws value(i, j) for every ordered pair of names; a value that is not OK
// is drawn as undefined.
func newHeatMap(title, desc string, names []string, value func(i, j int) agreement.Value) heatMap {
	n := len(names)
	cell := cellSize(n)
	font := 13
	if cell >= 60 {
		font = 15
	}
	short := make([]string, n)
	longest := 0
	for i, name := range names {
		r := []rune(name)
		if len(r) > heatNameMax {
			r = append(r[:heatNameMax-1], '…')
		}
		short[i] = string(r)
		longest = max(longest, len(r))
	}
	name := float64(longest) * heatCharW
	left := int(math.Ceil(name)) + 14
	// Column labels run up and to the right at 45°.
	slant := name * math.Sqrt2 / 2
	top := int(math.Ceil(slant)) + 16
	right := max(8, int(math.Ceil(slant))-cell/2+8)
	h := heatMap{Title: title, Desc: desc, Cell: cell, Font: font,
		Width: left + n*cell + right, Height: top + n*cell + 4}
	for i := range names {
		mid := float64(i*cell) + float64(cell)/2
		h.Rows = append(h.Rows, heatLabel{X: float64(left - 8), Y: float64(top) + mid, Text: short[i], Name: names[i]})
		h.Cols = append(h.Cols, heatLabel{X: float64(left) + mid, Y: float64(top - 8), Text: short[i], Name: names[i]})
	}
	for i, a := range names {
		for j, b := range names {
			c := heatCell{X: left + j*cell, Y: top + i*cell}
			c.CX, c.CY = float64(c.X)+float64(cell)/2, float64(c.Y)+float64(cell)/2
			v := value(i, j)
			switch band := agreement.LandisKoch.Classify(v); {
			case i == j:
				c.Class, c.Opacity, c.Label = "heat self", "1", a
			case band == "":
				why := v.Why
				if why == "" {
					why = "undefined"
				}
				c.Class, c.Opacity, c.Text, c.TextClass = "heat none", "1", "–", "on-faint"
				c.Label = a + " × " + b + ": undefined (" + why + ")"
			default:
				look := heatLook[band]
				c.Class, c.Opacity, c.TextClass = look.Class, look.Opacity, look.Text
				c.Text = kappaText(v.V)
				c.Label = fmt.Sprintf("%s × %s: %.3f (%s)", a, b, v.V, band)
			}
			h.Cells = append(h.Cells, c)
		}
	}
	for _, b := range agreement.LandisKoch.Bands {
		look := heatLook[b.Name]
		h.Legend = append(h.Legend, heatKey{Class: look.Class, Opacity: look.Opacity, Label: bandRange(b) + " " + b.Name})
	}
	h.Legend = append(h.Legend, heatKey{Class: "heat none", Opacity: "1", Label: "– undefined"},
		heatKey{Class: "heat self", Opacity: "1", Label: "the same assessor"})
	return h
}

// kappaText writes a kappa to two decimals with a true minus sign.
func kappaText(v float64) string {
	s := strconv.FormatFloat(v, 'f', 2, 64)
	if s == "-0.00" {
		return "0.00"
	}
	if s[0] == '-' {
		return "−" + s[1:]
	}
	return s
}

// bandRange writes a band's range the way Landis & Koch print theirs: "< 0.00",
// "0.00–0.20", "0.21–0.40", ...
func bandRange(b agreement.Band) string {
	if b.Min <= -1 {
		return "< " + strconv.FormatFloat(b.Max, 'f', 2, 64)
	}
	lo := b.Min
	if !b.MinInclusive {
		lo += 0.01
	}
	return strconv.FormatFloat(lo, 'f', 2, 64) + "–" + strconv.FormatFloat(b.Max, 'f', 2, 64)
}
