package web

import (
	"encoding/csv"
	"net/http"
	"strconv"

	"github.com/pertinent/pertinent/agreement"
)

// A table is one table of a page as its download holds it: every table a page shows also
// downloads as CSV from the page's own address with ?format=csv&table=NAME (the first of
// the page's tables without table=). The "table" template draws the page's table from the
// same rows, so what a lead reads is what they download; tables whose cells hold charts or
// controls draw their own rows and take only the download link from it.
type table struct {
	Name    string // the table= key
	File    string // the download's name, without .csv
	Columns []column
	Rows    []row
	// Stream, when set, adds rows after Rows without holding them all (the audit trail).
	Stream func(add func(row []string) error) error
	// The page's drawing: a caption, the table's class and id, whether the first cell of
	// a row heads it, and the shown columns by key when their order is not the download's.
	Caption   string
	Class, ID string
	RowHead   bool
	Page      []string
	Empty     string // the one row of a table without rows
	Href      string // this table's download, set by offerTables
}

// column is one column: its CSV header, and its heading and cell class on the page. A
// column with a key and no heading is left out of the page; one without a key is the page's
// alone (a link beside the figures) and left out of the download.
type column struct {
	Key, Label, Class string
}

// cols makes columns that share key and heading order: pairs of CSV key and page heading.
func cols(kv ...string) []column {
	c := make([]column, 0, len(kv)/2)
	for i := 0; i+1 < len(kv); i += 2 {
		c = append(c, column{Key: kv[i], Label: kv[i+1]})
	}
	return c
}

// A row is a row's cells, in the order of the columns, and how the page marks the row.
type row struct {
	Cells []cell
	Pair  int64  // data-pair: the judged pair the row is about, for tests and scripts
	Class string // the row's class on the page
}

// A cell is one value: exact in the download, and on the page as text (a rounded figure,
// a label), a figure with its exact value for tests and scripts, or a link.
type cell struct {
	V    string // the download's value; empty when undefined
	Text string // the page's text when it is not V
	Fig  figure // when named, the page draws the figure (data-figure, data-value or data-undefined)
	Href string // the page links the text here
	Code string // a short code before the text (a query's id)
	Tag  string // a short tag after the text
}

// Show is the cell's text on the page.
func (c cell) Show() string {
	if c.Text != "" {
		return c.Text
	}
	return c.V
}

// plain is a row of cells shown as they are downloaded.
func plain(vals ...string) row {
	r := row{Cells: make([]cell, len(vals))}
	for i, v := range vals {
		r.Cells[i] = cell{V: v}
	}
	return r
}

// figCell is a figure as a cell: its exact value downloaded, its rounded text shown.
func figCell(f figure) cell { return cell{V: f.Value, Fig: f} }

// shown is a cell the page draws, with its column.
type shown struct {
	column
	cell
}

// Shown gives the columns the page shows, with each one's index into a row.
func (t table) Shown() []shownColumn {
	var out []shownColumn
	if t.Page != nil {
		for _, k := range t.Page {
			for i, c := range t.Columns {
				if c.Key == k {
					out = append(out, shownColumn{column: c, At: i})
				}
			}
		}
		return out
	}
	for i, c := range t.Columns {
		if c.Label != "" || c.Key == "" {
			out = append(out, shownColumn{column: c, At: i})
		}
	}
	return out
}

// Cells gives a row's cells the page shows, in the page's order.
func (t table) Cells(r row) []shown {
	cs := t.Shown()
	out := make([]shown, len(cs))
	for i, c := range cs {
		out[i] = shown{column: c.column, cell: r.Cells[c.At]}
	}
	return out
}

type shownColumn struct {
	column
	At int
}

// offerTables answers a request for one of a page's tables as CSV and reports whether it
// did; otherwise it sets every table's download link for the page. An unknown table name
// is a 404.
func (s *Server) offerTables(w http.ResponseWriter, r *http.Request, tables ...*table) bool {
	if !wantsCSV(r) {
		for _, t := range tables {
			t.Href = csvURL(r, t.Name)
		}
		return false
	}
	want := r.URL.Query().Get("table")
	for _, t := range tables {
		if want == "" || want == t.Name {
			s.writeTable(w, r, t)
			return true
		}
	}
	s.fail(w, r, http.StatusNotFound, "This page has no table of that name.")
	return true
}

// writeTable sends one table as a CSV download.
func (s *Server) writeTable(w http.ResponseWriter, r *http.Request, t *table) {
	w.Header().Set("Content-Type", "text/csv; charset=utf-8")
	w.Header().Set("Content-Disposition", `attachment; filename="`+t.File+`.csv"`)
	w.Header().Set("Cache-Control", "no-store")
	cw := csv.NewWriter(w)
	var keep []int // the downloaded columns
	header := []string{}
	for i, c := range t.Columns {
		if c.Key != "" {
			keep = append(keep, i)
			header = append(header, c.Key)
		}
	}
	cw.Write(header)
	line := make([]string, len(keep))
	for _, r := range t.Rows {
		for i, at := range keep {
			line[i] = r.Cells[at].V
		}
		cw.Write(line)
	}
	if t.Stream == nil {
		cw.Flush()
		return
	}
	n := 0
	err := t.Stream(func(row []string) error {
		cw.Write(row)
		if n++; n%200 == 0 {
			cw.Flush()
		}
		return cw.Error()
	})
	cw.Flush()
	if err != nil {
		// The header is sent; all that is left is to log and cut the download short.
		s.log.ErrorContext(r.Context(), "table download failed", "table", t.File, "err", err)
	}
}

// tableAlias is r asking for one table as CSV: the former download addresses (.csv paths)
// answer the same as the page's own ?format=csv&table=NAME.
func tableAlias(r *http.Request, name string) *http.Request {
	q := r.URL.Query()
	q.Set("format", "csv")
	q.Set("table", name)
	r2 := r.Clone(r.Context())
	r2.URL.RawQuery = q.Encode()
	return r2
}

// wantsCSV tells whether the request asks for one of the page's tables as CSV.
func wantsCSV(r *http.Request) bool { return r.URL.Query().Get("format") == "csv" }

// csvURL is the current page's address asking for one of its tables as CSV.
func csvURL(r *http.Request, name string) string {
	q := r.URL.Query()
	q.Set("format", "csv")
	q.Set("table", name)
	return r.URL.Path + "?" + q.Encode()
}

// csvValue is a figure's exact value, empty when it is undefined.
func csvValue(v agreement.Value) string {
	if !v.OK {
		return ""
	}
	return strconv.FormatFloat(v.V, 'g', -1, 64)
}

func csvFloat(v float64) string { return strconv.FormatFloat(v, 'g', -1, 64) }
