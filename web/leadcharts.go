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

// heatMap is a square grid of cells whose opacity shows a value in [-1, 1].
type heatMap struct {
	Title  string
	Desc   string
	Size   int
	Cell   int
	Labels []heatLabel
	Cells  []heatCell
}

type heatLabel struct {
	Pos   float64
	Label string
}

type heatCell struct {
	X, Y    int
	Opacity string
	Class   string
	Label   string
}

// newHeatMap draws value(i, j) for every ordered pair of names; ok false leaves a cell
// hatched as undefined.
func newHeatMap(title, desc string, names []string, value func(i, j int) agreement.Value) heatMap {
	const margin = 90
	cell := 24
	if len(names) > 20 {
		cell = max(8, 480/len(names))
	}
	h := heatMap{Title: title, Desc: desc, Cell: cell, Size: margin + cell*len(names)}
	for i, n := range names {
		h.Labels = append(h.Labels, heatLabel{Pos: float64(margin + i*cell + cell/2), Label: n})
		for j := range names {
			c := heatCell{X: margin + j*cell, Y: margin + i*cell}
			switch v := value(i, j); {
			case i == j:
				c.Class, c.Opacity, c.Label = "heat self", "1", n
			case !v.OK:
				c.Class, c.Opacity, c.Label = "heat none", "1", n+" × "+names[j]+": undefined ("+v.Why+")"
			case v.V < 0:
				c.Class, c.Opacity, c.Label = "heat neg", opacity(-v.V), fmt.Sprintf("%s × %s: %.3f", n, names[j], v.V)
			default:
				c.Class, c.Opacity, c.Label = "heat pos", opacity(v.V), fmt.Sprintf("%s × %s: %.3f", n, names[j], v.V)
			}
			h.Cells = append(h.Cells, c)
		}
	}
	return h
}

func opacity(x float64) string {
	return strconv.FormatFloat(0.08+0.92*math.Min(x, 1), 'f', 2, 64)
}
