package web

import (
	"encoding/csv"
	"fmt"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"testing"

	"golang.org/x/net/html"
)

// pageRow is a row of a page's table as read back from the HTML: its data-pair and its
// cells, each the exact value of the figure it holds (empty when undefined) or its text.
type pageRow struct {
	Pair  string
	Cells []string
}

// pageTable reads the body rows of the table the "table" template drew for name; the one
// row that says the table is empty counts as none.
func pageTable(t *testing.T, body, name string) []pageRow {
	t.Helper()
	doc, err := html.Parse(strings.NewReader(body))
	if err != nil {
		t.Fatal(err)
	}
	var tab *html.Node
	var find func(*html.Node)
	find = func(n *html.Node) {
		if n.Type == html.ElementNode && n.Data == "table" && attr(n, "data-table") == name {
			tab = n
		}
		for c := n.FirstChild; c != nil && tab == nil; c = c.NextSibling {
			find(c)
		}
	}
	find(doc)
	if tab == nil {
		t.Fatalf("no table %q on the page", name)
	}
	var rows []pageRow
	for body := tab.FirstChild; body != nil; body = body.NextSibling {
		if body.Data != "tbody" {
			continue
		}
		for tr := body.FirstChild; tr != nil; tr = tr.NextSibling {
			if tr.Type != html.ElementNode {
				continue
			}
			r := pageRow{Pair: attr(tr, "data-pair")}
			for td := tr.FirstChild; td != nil; td = td.NextSibling {
				if td.Type == html.ElementNode && attr(td, "class") == "empty" {
					r.Cells = nil
					break
				}
				if td.Type == html.ElementNode {
					r.Cells = append(r.Cells, cellValue(td))
				}
			}
			if r.Cells != nil {
				rows = append(rows, r)
			}
		}
	}
	return rows
}

// cellValue is a figure's data-value ("" when undefined), or else the cell's text.
func cellValue(td *html.Node) string {
	var fig *html.Node
	var text strings.Builder
	var walk func(*html.Node)
	walk = func(n *html.Node) {
		if n.Type == html.ElementNode && attr(n, "data-figure") != "" && fig == nil {
			fig = n
		}
		if n.Type == html.TextNode {
			text.WriteString(n.Data)
		}
		for c := n.FirstChild; c != nil; c = c.NextSibling {
			walk(c)
		}
	}
	walk(td)
	if fig != nil {
		return attr(fig, "data-value")
	}
	return strings.Join(strings.Fields(text.String()), " ")
}

// csvRows reads a table's download as one map per row, by header.
func csvRows(t *testing.T, a *testApp, c *http.Client, path string) []map[string]string {
	t.Helper()
	res, body := a.get(c, path)
	if res.StatusCode != http.StatusOK || !strings.HasPrefix(res.Header.Get("Content-Type"), "text/csv") {
		t.Fatalf("GET %s: %d %s", path, res.StatusCode, res.Header.Get("Content-Type"))
	}
	recs, err := csv.NewReader(strings.NewReader(body)).ReadAll()
	if err != nil || len(recs) == 0 {
		t.Fatalf("GET %s: %v\n%s", path, err, body)
	}
	var out []map[string]string
	for _, rec := range recs[1:] {
		m := map[string]string{}
		for i, k := range recs[0] {
			m[k] = rec[i]
		}
		out = append(out, m)
	}
	return out
}

// key is a page column and what it must show of the download's row.
type key struct {
	Col  int
	Want func(row map[string]string) string
}

func same(col int, name string) key {
	return key{col, func(r map[string]string) string { return r[name] }}
}

// agreeWithDownload checks that a page's table and its CSV have the same rows in the same
// order, and that the given page cells show the download's values.
func agreeWithDownload(t *testing.T, a *testApp, c *http.Client, path, name string, minRows int, keys ...key) {
	t.Helper()
	page := a.page(c, path)
	sep := "?"
	if strings.Contains(path, "?") {
		sep = "&"
	}
	if !strings.Contains(page, "table="+name+`"`) || !strings.Contains(page, "format=csv") {
		t.Errorf("%s: no download of table %s", path, name)
	}
	got, want := pageTable(t, page, name), csvRows(t, a, c, path+sep+"format=csv&table="+name)
	if len(got) != len(want) || len(got) < minRows {
		t.Fatalf("%s table %s: %d rows on the page, %d in the CSV (want at least %d)", path, name, len(got), len(want), minRows)
	}
	for i, r := range got {
		if p, ok := want[i]["pair"]; ok && r.Pair != p {
			t.Errorf("%s table %s row %d: data-pair %q, CSV pair %q", path, name, i, r.Pair, p)
		}
		for _, k := range keys {
			if w := k.Want(want[i]); r.Cells[k.Col] != w {
				t.Errorf("%s table %s row %d column %d: page %q, CSV %q", path, name, i, k.Col, r.Cells[k.Col], w)
			}
		}
	}
}

// Every table drawn from its download shows the download's rows, in its order, with the
// same values (figures by their exact data-value).
func TestPageTablesAgreeWithTheirDownloads(t *testing.T) {
	a := newTestApp(t)
	seedLead(t, a)
	base := "/projects/" + strconv.FormatInt(a.project.ID, 10)
	lena := a.signIn("lena")

	agreeWithDownload(t, a, lena, base+"/overview", "flagged", 2, same(0, "query"), same(1, "document"), same(3, "assessors"))
	agreeWithDownload(t, a, lena, base+"/agreement", "pairs", 3, same(0, "a"), same(1, "b"), same(2, "n"),
		same(3, "kappa_quadratic"), same(4, "kappa_linear"), same(5, "kappa"), same(6, "agreement"))
	agreeWithDownload(t, a, lena, base+"/agreement", "alphas", 4, same(0, "metric"), same(1, "alpha"))
	agreeWithDownload(t, a, lena, base+"/agreement", "grades", 2, same(0, "grade"), same(2, "kappa"),
		key{1, func(r map[string]string) string { v, _ := strconv.ParseFloat(r["share"], 64); return percent(v) }})
	for _, sort := range []string{"alpha", "query"} {
		agreeWithDownload(t, a, lena, base+"/agreement?sort="+sort, "queries", 1,
			key{0, func(r map[string]string) string { return r["query"] + " " + r["text"] }},
			same(1, "pairs"), same(2, "grades"), same(3, "alpha_ordinal"), same(4, "exact_agreement"), same(5, "mean_spread"))
	}

	pair := strconv.FormatInt(a.pairs[3], 10) // amir 4, bea 2, dee 4
	if res := a.post(lena, base+"/pairs/"+pair+"/adjudicate", url.Values{"grade": {"4"}, "rationale": {"the model list matches"}}); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("adjudicate: %d", res.StatusCode)
	}
	agreeWithDownload(t, a, a.signIn("bea"), base+"/feedback", "feedback", 1, same(0, "query_text"), same(1, "title"),
		same(2, "your_grade"), same(3, "final_grade"), same(4, "rationale"))
}

// The plan's kept runs and a design's estimates, differences and power show their downloads.
func TestPlanTablesAgreeWithTheirDownloads(t *testing.T) {
	a := newTestApp(t)
	runA, runB := addPlanQueries(t, a)
	lead := a.signIn("lena")
	base := fmt.Sprintf("/projects/%d", a.project.ID)
	if res := a.keepRuns(lead, map[string]string{"one.txt": runA, "two.txt": runB}); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("keep runs: %d", res.StatusCode)
	}
	agreeWithDownload(t, a, lead, base+"/plan", "runs", 2, same(0, "run"), same(1, "entries"), same(2, "queries"))

	kept, err := a.store.KeptRuns(t.Context(), a.project.ID)
	if err != nil || len(kept) != 2 {
		t.Fatalf("kept runs %v, %v", kept, err)
	}
	res := a.postOK(lead, base+"/plan", url.Values{"run": {fmt.Sprint(kept[0].ID), fmt.Sprint(kept[1].ID)}, "kind": {"stratified"},
		"depth": {"2"}, "max_depth": {"12"}, "budget": {"20"}, "k": {"5"}, "gain": {"exponential"}, "threshold": {"2"}, "action": {"send"}})
	loc := res.Header.Get("Location")
	gradeEveryPair(t, a)
	fixed := func(col int, name string, format func(float64) string) key {
		return key{col, func(r map[string]string) string { v, _ := strconv.ParseFloat(r[name], 64); return format(v) }}
	}
	iv := func(col int, name string) key {
		return key{col, func(r map[string]string) string {
			f := func(k string) string { v, _ := strconv.ParseFloat(r[k], 64); return f4(v) }
			return f(name) + " [" + f(name+"_low") + ", " + f(name+"_high") + "]"
		}}
	}
	agreeWithDownload(t, a, lead, loc, "estimates", 2, same(0, "run"), iv(1, "ndcg"), iv(2, "ap"),
		fixed(3, "judged_at_k", f4), fixed(4, "rbp", f4), fixed(5, "rbp_residual", f4))
	agreeWithDownload(t, a, lead, loc, "differences", 1, key{0, func(r map[string]string) string { return r["b"] + " − " + r["a"] }},
		same(1, "metric"), iv(2, "diff"))
	agreeWithDownload(t, a, lead, loc, "power", 1, same(0, "metric"), same(1, "run_pairs"), same(2, "significant"), fixed(3, "share", percent))
}
