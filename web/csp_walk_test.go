package web

import (
	"fmt"
	"io"
	"net/http"
	"net/url"
	"strings"
	"testing"

	"github.com/go-chi/chi/v5"
	"golang.org/x/net/html"
)

// cspDirectives splits a Content-Security-Policy into its directives.
func cspDirectives(policy string) map[string][]string {
	out := map[string][]string{}
	for _, d := range strings.Split(policy, ";") {
		f := strings.Fields(d)
		if len(f) > 0 {
			out[strings.ToLower(f[0])] = f[1:]
		}
	}
	return out
}

// checkHeaders reports what is missing from a response's security headers: nosniff on
// every answer; on HTML a policy that allows scripts from this origin only, forbids
// plugins, <base> and framing, and the framing and referrer headers.
func checkHeaders(h http.Header) []string {
	var bad []string
	if h.Get("X-Content-Type-Options") != "nosniff" {
		bad = append(bad, "X-Content-Type-Options is not nosniff")
	}
	if !strings.HasPrefix(h.Get("Content-Type"), "text/html") {
		return bad
	}
	policy := h.Get("Content-Security-Policy")
	if policy == "" {
		return append(bad, "no Content-Security-Policy")
	}
	d := cspDirectives(policy)
	scripts, ok := d["script-src"]
	if !ok {
		scripts = d["default-src"]
	}
	if len(scripts) == 0 {
		bad = append(bad, "the policy does not restrict scripts")
	}
	for _, src := range scripts {
		switch strings.ToLower(src) {
		case "'self'", "'none'":
		default:
			bad = append(bad, "script-src allows "+src)
		}
	}
	for _, src := range d["style-src"] {
		if strings.EqualFold(src, "'unsafe-inline'") {
			bad = append(bad, "style-src allows 'unsafe-inline'")
		}
	}
	for dir, want := range map[string]string{"object-src": "'none'", "base-uri": "'none'", "frame-ancestors": "'none'"} {
		if strings.Join(d[dir], " ") != want {
			bad = append(bad, fmt.Sprintf("%s is %q, want %s", dir, strings.Join(d[dir], " "), want))
		}
	}
	if h.Get("X-Frame-Options") != "DENY" {
		bad = append(bad, "X-Frame-Options is not DENY")
	}
	switch h.Get("Referrer-Policy") {
	case "same-origin", "no-referrer", "strict-origin", "strict-origin-when-cross-origin":
	default:
		bad = append(bad, fmt.Sprintf("Referrer-Policy %q", h.Get("Referrer-Policy")))
	}
	return bad
}

// checkMarkup reports markup the policy would have to block, or that runs script by
// another way: inline scripts, event attributes, style attributes or elements, and
// javascript: or data: URLs in links, forms, frames and sources.
func checkMarkup(doc *html.Node) []string {
	var bad []string
	walk(doc, func(e *html.Node) {
		switch e.Data {
		case "script":
			src := false
			for _, at := range e.Attr {
				src = src || at.Key == "src"
			}
			if !src || e.FirstChild != nil {
				bad = append(bad, "inline <script>")
			}
		case "style":
			bad = append(bad, "<style> element")
		case "iframe", "frame", "object", "embed":
			bad = append(bad, "<"+e.Data+">")
		}
		for _, at := range e.Attr {
			key := strings.ToLower(at.Key)
			switch {
			case strings.HasPrefix(key, "on"):
				bad = append(bad, fmt.Sprintf("<%s %s=%q>", e.Data, at.Key, at.Val))
			case key == "style":
				bad = append(bad, fmt.Sprintf("<%s style=%q>", e.Data, at.Val))
			case key == "href" || key == "src" || key == "action" || key == "formaction" || key == "data-href" || key == "hx-get" || key == "hx-post":
				v := strings.ToLower(strings.Map(func(r rune) rune {
					if r <= ' ' {
						return -1
					}
					return r
				}, at.Val))
				if strings.HasPrefix(v, "javascript:") || strings.HasPrefix(v, "data:") || strings.HasPrefix(v, "vbscript:") {
					bad = append(bad, fmt.Sprintf("<%s %s=%q>", e.Data, at.Key, at.Val))
				}
			}
		}
	})
	return bad
}

// downloadLinks collects the links a page offers to download (its CSV tables, the zip).
func downloadLinks(doc *html.Node) []string {
	var out []string
	walk(doc, func(e *html.Node) {
		if e.Data != "a" {
			return
		}
		var href string
		download := false
		for _, at := range e.Attr {
			switch at.Key {
			case "href":
				href = at.Val
			case "download":
				download = true
			}
		}
		if download || strings.Contains(href, "format=csv") || strings.HasSuffix(href, ".csv") || strings.Contains(href, ".zip") {
			out = append(out, href)
		}
	})
	return out
}

// checkDownload reports what would let a browser show a download as a page: it must come
// as an attachment, typed as something other than HTML, with nosniff.
func checkDownload(res *http.Response) []string {
	var bad []string
	if cd := res.Header.Get("Content-Disposition"); !strings.HasPrefix(cd, "attachment") {
		bad = append(bad, fmt.Sprintf("Content-Disposition %q, want attachment", cd))
	}
	ct := strings.ToLower(res.Header.Get("Content-Type"))
	if ct == "" || strings.Contains(ct, "html") || strings.Contains(ct, "xml") || strings.Contains(ct, "svg") {
		bad = append(bad, fmt.Sprintf("Content-Type %q", ct))
	}
	if res.Header.Get("X-Content-Type-Options") != "nosniff" {
		bad = append(bad, "no nosniff")
	}
	return bad
}

// walkApp is a test app with something behind every kind of route: graded pairs, an
// evaluation, an import job.
func walkApp(t *testing.T) (a *testApp, params *strings.Replacer) {
	t.Helper()
	a = newTestApp(t)
	seedLead(t, a)
	addGradedQueries(t, a)
	lead := a.signIn("lena")
	base := fmt.Sprintf("/projects/%d", a.project.ID)
	res := a.postRuns(lead, map[string]string{"k": "3"}, webRun)
	res.Body.Close()
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("evaluate: status %d", res.StatusCode)
	}
	evaluation := strings.TrimPrefix(res.Header.Get("Location"), base+"/evaluations/")
	res = a.postImport(lead, a.project.ID, map[string]string{"kind": "queries", "dry_run": "1"}, "q.csv", "query_id,text\nz1,descaler\n")
	a.importDone(lead, res)
	job := strings.TrimPrefix(res.Header.Get("Location"), base+"/import/")
	g, err := a.store.CurrentGuidelines(t.Context(), a.project.ID)
	if err != nil {
		t.Fatal(err)
	}
	return a, strings.NewReplacer(
		"{project}", fmt.Sprint(a.project.ID), "{pair}", fmt.Sprint(a.pairs[5]),
		"{user}", fmt.Sprint(a.users["bea"].ID), "{revision}", fmt.Sprint(g.ID),
		"{evaluation}", evaluation, "{job}", job, "*", "app.js",
	)
}

// Every GET route, as an admin, a lead and an assessor, whole page and htmx fragment, plus
// the error pages: every HTML answer carries the security headers and a policy without
// inline script, and holds nothing that policy would have to block. Every download any page
// links to comes as an attachment that no browser renders.
func TestEveryPageKeepsToThePolicy(t *testing.T) {
	a, params := walkApp(t)
	var paths []string
	chi.Walk(a.server.Config.Handler.(*Server).Router(), func(method, pattern string, _ http.Handler, _ ...func(http.Handler) http.Handler) error {
		if method == http.MethodGet {
			paths = append(paths, params.Replace(pattern))
		}
		return nil
	})
	if len(paths) < 25 {
		t.Fatalf("the walk found only %d GET routes", len(paths))
	}
	paths = append(paths, "/no/such/page", fmt.Sprintf("/projects/%d/pairs/999999/adjudicate", a.project.ID),
		"/set-password?token=not-a-token", "/static/style.css", "/static/lead.js", "/static/htmx.min.js")

	clients := map[string]*http.Client{"anonymous": a.client()}
	for _, who := range []string{"root", "lena", "amir"} {
		clients[who] = a.signIn(who)
	}
	downloads := map[string]bool{}
	pages := 0
	for who, c := range clients {
		for _, path := range paths {
			for _, htmx := range []bool{false, true} {
				req, _ := http.NewRequest(http.MethodGet, a.server.URL+path, nil)
				if htmx {
					req.Header.Set("HX-Request", "true")
				}
				res, err := c.Do(req)
				if err != nil {
					t.Fatal(err)
				}
				b, _ := io.ReadAll(res.Body)
				res.Body.Close()
				where := fmt.Sprintf("GET %s as %s (htmx %v, status %d)", path, who, htmx, res.StatusCode)
				if res.StatusCode >= 500 {
					t.Errorf("%s: server error", where)
				}
				for _, p := range checkHeaders(res.Header) {
					t.Errorf("%s: %s", where, p)
				}
				if !strings.HasPrefix(res.Header.Get("Content-Type"), "text/html") {
					if strings.Contains(path, ".csv") || strings.Contains(path, ".zip") {
						for _, p := range checkDownload(res) {
							t.Errorf("%s: %s", where, p)
						}
					}
					continue
				}
				pages++
				doc := parseHTML(t, string(b))
				for _, p := range checkMarkup(doc) {
					t.Errorf("%s: %s", where, p)
				}
				if who != "anonymous" && res.StatusCode == http.StatusOK {
					for _, l := range downloadLinks(doc) {
						u, err := url.Parse(l)
						if err != nil {
							t.Errorf("%s: bad link %q", where, l)
							continue
						}
						downloads[who+" "+(&url.URL{Path: u.Path, RawQuery: u.RawQuery}).String()] = true
					}
				}
			}
		}
	}
	if pages < 100 {
		t.Errorf("only %d HTML answers were checked", pages)
	}

	// Every offered download, plus each export format and the audit trail.
	base := fmt.Sprintf("/projects/%d", a.project.ID)
	for _, f := range []string{"csv", "jsonl", "qrels", "svmlight"} {
		downloads["lena "+base+"/export.zip?format="+f] = true
	}
	downloads["root /admin/audit.csv"] = true
	tables := 0
	for d := range downloads {
		who, path, _ := strings.Cut(d, " ")
		if !strings.HasPrefix(path, "/") {
			path = base + "/" + path // relative links such as ?format=csv resolve against the page
		}
		res, err := clients[who].Get(a.server.URL + path)
		if err != nil {
			t.Fatal(err)
		}
		io.Copy(io.Discard, res.Body)
		res.Body.Close()
		if res.StatusCode != http.StatusOK {
			t.Errorf("download %s as %s: status %d", path, who, res.StatusCode)
			continue
		}
		if strings.Contains(path, "format=csv") && !strings.Contains(path, "export.zip") {
			tables++
		}
		for _, p := range checkDownload(res) {
			t.Errorf("download %s as %s: %s", path, who, p)
		}
	}
	t.Logf("%d HTML answers, %d GET routes, %d downloads (%d CSV tables)", pages, len(paths), len(downloads), tables)
	if tables < 5 {
		t.Errorf("the pages offered only %d CSV tables; the walk missed the lead's pages", tables)
	}

	// The API's bare files (CSV, JSON Lines, qrels) and its zip.
	token := newToken(t, a, clients["lena"])
	for _, q := range []string{"format=csv&archive=none", "format=jsonl&archive=none", "format=qrels&archive=none", "format=svmlight"} {
		req, _ := http.NewRequest(http.MethodGet, a.server.URL+"/api/v1"+base+"/export?"+q, nil)
		req.Header.Set("Authorization", "Bearer "+token)
		res, err := http.DefaultClient.Do(req)
		if err != nil {
			t.Fatal(err)
		}
		io.Copy(io.Discard, res.Body)
		res.Body.Close()
		if res.StatusCode != http.StatusOK {
			t.Errorf("API export %s: status %d", q, res.StatusCode)
			continue
		}
		for _, p := range checkDownload(res) {
			t.Errorf("API export %s: %s", q, p)
		}
	}
}
