package web

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"mime/multipart"
	"net/http"
	"net/http/httptest"
	"net/url"
	"runtime"
	"sort"
	"strings"
	"sync"
	"testing"

	"github.com/pertinent/pertinent/store"
)

// A payload runs code that leaves two traces if it ever executes: a window property
// __xss_<id> and a request to /xss?id=<id>, which the test server records. Backticks quote
// the URL so that the code fits inside single- and double-quoted attributes alike.
func xssCode(id int, noSlash bool) string {
	if noSlash { // file names lose everything before a slash
		return fmt.Sprintf("top.__xss_%d=1", id)
	}
	return fmt.Sprintf("top.__xss_%d=1;fetch(\x60/xss?id=%d\x60)", id, id)
}

// xssForms are the shapes of attack, each wrapping the code (%[1]s).
var xssForms = []struct{ name, text string }{
	{"script tag", `<script>%[1]s</script>`},
	{"img onerror", `<img src=x onerror="%[1]s">`},
	{"img onerror unquoted", `<img src=x onerror=%[1]s>`},
	{"svg onload", `<svg onload="%[1]s">`},
	{"body onload", `<body onload="%[1]s">`},
	{"javascript: link", `<a href="javascript:%[1]s">open</a>`},
	{"javascript: link with a tab", `<a href="jav&#x09;ascript:%[1]s">open</a>`},
	{"svg script", `<svg><script>%[1]s</script></svg>`},
	{"svg animate onbegin", `<svg><animate onbegin="%[1]s" attributeName=x dur=1s></svg>`},
	{"iframe srcdoc", `<iframe srcdoc="<script>%[1]s</script>"></iframe>`},
	{"math mutation", `<math><mtext><table><mglyph><style><img src=x onerror="%[1]s">`},
	{"noscript mutation", `<noscript><p title="</noscript><img src=x onerror='%[1]s'>">`},
	{"attribute breakout, double quote", `" onmouseover="%[1]s" autofocus onfocus="%[1]s" x="`},
	{"attribute breakout, single quote", `' onmouseover='%[1]s' x='`},
	{"details ontoggle", `<details open ontoggle="%[1]s"><summary>x</summary></details>`},
	{"input autofocus", `<input autofocus onfocus="%[1]s">`},
	{"object javascript:", `<object data="javascript:%[1]s"></object>`},
	{"button formaction", `<form><button formaction="javascript:%[1]s">go</button></form>`},
	{"element breakout", `</title></textarea></style></noscript></script><script>%[1]s</script>`},
	{"video source onerror", `<video><source onerror="%[1]s"></video>`},
	{"meta refresh", `<meta http-equiv="refresh" content="0;url=javascript:%[1]s">`},
	{"hover handler", `<div onmouseover="%[1]s">hover here</div>`},
	{"bare javascript: URL", `javascript:%[1]s`},
	{"markdown javascript: link", `[click me](javascript:%[1]s)`},
	{"markdown image breakout", `![x](x" onerror="%[1]s)`},
	{"markdown autolink", `<javascript:%[1]s>`},
}

// templateText is text that would do harm if anything ever treated data as a template.
const templateText = `{{.}}{{template "layout" .}}`

// xssCatalog hands out payload ids and remembers where each was put.
type xssCatalog struct {
	mu    sync.Mutex
	where []string // by id; id 0 is the self-check
}

func newXSSCatalog() *xssCatalog { return &xssCatalog{where: []string{"self-check"}} }

func (c *xssCatalog) one(where string, form int, noSlash bool) string {
	c.mu.Lock()
	id := len(c.where)
	c.where = append(c.where, where+": "+xssForms[form].name)
	c.mu.Unlock()
	return fmt.Sprintf(xssForms[form].text, xssCode(id, noSlash))
}

// all puts every form in one text, then the template text.
func (c *xssCatalog) all(where string) string {
	var b strings.Builder
	for i := range xssForms {
		b.WriteString(c.one(where, i, false))
		b.WriteString(" ")
	}
	b.WriteString(templateText)
	return b.String()
}

// named returns the places of the given ids, for failure messages.
func (c *xssCatalog) named(ids []string) []string {
	c.mu.Lock()
	defer c.mu.Unlock()
	var out []string
	for _, s := range ids {
		var id int
		fmt.Sscan(s, &id)
		if id >= 0 && id < len(c.where) {
			out = append(out, s+" ("+c.where[id]+")")
		} else {
			out = append(out, s)
		}
	}
	sort.Strings(out)
	return out
}

// xssRecorder records requests to /xss and serves /xss-self-check, a page without any
// policy on which a payload does run: it proves the traces are noticed.
type xssRecorder struct {
	mu   sync.Mutex
	hits []string
}

func (x *xssRecorder) wrap(next http.Handler) http.Handler {
	return http.HandlerFunc(func(w http.ResponseWriter, r *http.Request) {
		switch r.URL.Path {
		case "/xss":
			x.mu.Lock()
			x.hits = append(x.hits, r.URL.Query().Get("id"))
			x.mu.Unlock()
			w.WriteHeader(http.StatusNoContent)
			return
		case "/xss-self-check":
			w.Header().Set("Content-Type", "text/html; charset=utf-8")
			fmt.Fprintf(w, `<!doctype html><title>self-check</title><img src=x onerror="%s">`, xssCode(0, false))
			return
		}
		next.ServeHTTP(w, r)
	})
}

// seen is the number of requests recorded so far; the browser's requests arrive on the
// server's goroutines, so it reads under the lock.
func (x *xssRecorder) seen() int {
	x.mu.Lock()
	defer x.mu.Unlock()
	return len(x.hits)
}

func (x *xssRecorder) take() []string {
	x.mu.Lock()
	defer x.mu.Unlock()
	h := x.hits
	x.hits = nil
	return h
}

// hostile is a project in which every text anyone can enter carries payloads.
type hostile struct {
	*testApp
	rec       *xssRecorder
	cat       *xssCatalog
	project   store.Project
	pairs     []int64
	textQuery string // the query text and document title shown on the text document's pair
	textTitle string
	assessors []string // fresh assessors, one per browser pass
	jobs      []string // import status pages
	evalPage  string
}

func newHostile(t *testing.T) *hostile {
	t.Helper()
	ctx := context.Background()
	h := &hostile{testApp: newTestApp(t), rec: &xssRecorder{}, cat: newXSSCatalog()}
	h.restart(Options{Logger: discardLogger()}, false, h.rec.wrap)
	root, lena := h.users["root"], h.users["lena"]
	var err error
	scale := store.DefaultScale()
	scale[1].Label += " " + h.cat.one("scale label", 1, false)
	scale[2].Description += " " + h.cat.one("scale description", 12, false)
	h.project, err = h.store.CreateProject(ctx, store.NewProject{
		Name:             "Lamps " + h.cat.one("project name", 1, false),
		Description:      h.cat.all("project description"),
		JudgmentsPerPair: 3, AllowChanges: true, Scale: scale,
		Guidelines: "# Guidelines\n\n" + h.cat.all("guidelines"),
	}, root.ID)
	if err != nil {
		t.Fatal(err)
	}
	if _, err := h.store.ReviseGuidelines(ctx, h.project.ID, "Second revision "+h.cat.all("guidelines revision"), lena.ID); err != nil {
		t.Fatal(err)
	}
	must := fatalIf(t)
	must(h.store.SetMember(ctx, h.project.ID, lena.ID, store.RoleLead, root.ID))
	must(h.store.SetMember(ctx, h.project.ID, h.users["bea"].ID, store.RoleAssessor, root.ID))
	// Display names are the one free text of an account (usernames are letters and digits).
	for i, form := range []int{1, 3, 12, 13} {
		name := fmt.Sprintf("xa%d", i)
		u, err := h.store.CreateUser(ctx, name, h.cat.one("display name", form, false), store.RoleAssessor, testPassword)
		must(err)
		h.users[name] = u
		must(h.store.SetMember(ctx, h.project.ID, u.ID, store.RoleAssessor, root.ID))
		if i < 2 {
			h.assessors = append(h.assessors, name)
		}
	}

	h.textQuery = h.cat.all("query text")
	h.textTitle = h.cat.all("document title")
	err = h.store.Load(ctx, h.project.ID, func(l *store.Loader) error {
		q1, err := l.Query(store.Query{ExternalID: "xq1", Text: h.textQuery, Need: h.cat.all("query need")})
		if err != nil {
			return err
		}
		p, err := addPair(l, store.PairSpec{QueryID: q1}, store.Document{ExternalID: "xd-text", Title: h.textTitle,
			URL: "javascript:" + xssCode(h.cat.idFor("document URL: javascript: scheme"), false), Body: h.cat.all("document body as text")})
		if err != nil {
			return err
		}
		h.pairs = append(h.pairs, p)
		q2, err := l.Query(store.Query{ExternalID: "xq2", Text: "Second query " + h.cat.one("query text", 12, false)})
		if err != nil {
			return err
		}
		// Each attack on its own in an HTML body, so that no payload swallows the next
		// before the sanitiser sees it.
		for i := range xssForms {
			p, err := addPair(l, store.PairSpec{QueryID: q2}, store.Document{ExternalID: fmt.Sprintf("xd-html-%02d", i), Title: fmt.Sprintf("HTML body %d", i),
				URL: h.cat.one("document URL", 22, false), Body: "<p>Body</p>" + h.cat.one("document body as HTML", i, false), BodyFormat: "html"})
			if err != nil {
				return err
			}
			h.pairs = append(h.pairs, p)
		}
		// bea's judgments carry notes; every third is "cannot judge" with a note.
		for i, p := range h.pairs {
			j := store.RecordedJudgment{PairID: p, UserID: h.users["bea"].ID, Note: h.cat.all("note"), TimeSpentMs: 1000}
			if i%3 == 2 {
				j.CannotJudge, j.Note = "other", h.cat.all("cannot-judge note")
			} else {
				g := i % 5
				j.Grade = &g
			}
			if err := l.Judgment(j); err != nil {
				return err
			}
		}
		return nil
	})
	must(err)
	// A machine source whose provenance holds every attack, one a field, and a calibration
	// round whose reasons and documents hold them too.
	about := map[string]string{}
	for i := range xssForms {
		about[fmt.Sprintf("field%02d", i)] = h.cat.one("source provenance", i, false)
	}
	_, err = h.store.Import(ctx, h.project.ID, root.ID, store.ImportSpec{Kind: store.ImportQrels, Source: "xsource", SourceKind: store.SourceModel, SourceAbout: about},
		[]store.ImportFile{{Name: "xsource.qrels", R: strings.NewReader("xq1 0 xd-text 2 0.4\nxq2 0 xd-html-00 3\n")}})
	must(err)
	var docs, cal strings.Builder
	for g := range 5 {
		d, _ := json.Marshal(map[string]string{"doc_id": fmt.Sprintf("xd-cal-%d", g), "title": h.cat.one("calibration document title", g, false),
			"body": "<p>Calibration</p>" + h.cat.one("calibration document body", 5+g, false), "body_format": "html"})
		c, _ := json.Marshal(map[string]any{"query_id": "xq1", "doc_id": fmt.Sprintf("xd-cal-%d", g), "grade": g, "reason": h.cat.all("calibration reason")})
		docs.Write(append(d, '\n'))
		cal.Write(append(c, '\n'))
	}
	for _, f := range []struct {
		kind store.ImportKind
		body string
	}{{store.ImportDocuments, docs.String()}, {store.ImportCalibration, cal.String()}} {
		_, err = h.store.Import(ctx, h.project.ID, root.ID, store.ImportSpec{Kind: f.kind}, []store.ImportFile{{Name: "x.jsonl", R: strings.NewReader(f.body)}})
		must(err)
	}
	// An adjudication whose rationale bea sees on her feedback page.
	_, err = h.store.Adjudicate(ctx, h.pairs[1], lena.ID, 4, h.cat.all("adjudication rationale"))
	must(err)

	// Uploads: import files and a run whose names carry payloads (no slash survives).
	lead := h.signIn("lena")
	for i, form := range []int{1, 3, 12, 14} {
		name := "q" + h.cat.one("import file name", form, true) + ".csv"
		content := "query_id,text\nz1,\n" // a missing text: the problem names the file
		if i%2 == 1 {
			content = "query_id,text\nz1,lamp\n"
		}
		res := h.postImport(lead, h.project.ID, map[string]string{"kind": "queries", "dry_run": "1"}, name, content)
		h.importDone(lead, res)
		h.jobs = append(h.jobs, res.Header.Get("Location"))
	}
	res := h.postMultipart(lead, fmt.Sprintf("/projects/%d/evaluate", h.project.ID), func(mw *multipart.Writer) {
		mw.WriteField("k", "3")
		w, _ := mw.CreateFormFile("run", "run"+h.cat.one("run file name", 1, true))
		// A run tag is one token: a payload without spaces.
		fmt.Fprintf(w, "xq1 Q0 xd-text 1 2.0 <svg/onload=%s>\nxq2 Q0 xd-html-00 1 1.0 <svg/onload=%s>\n",
			xssCode(h.cat.idFor("run tag"), false), xssCode(h.cat.idFor("run tag"), false))
	})
	b, _ := io.ReadAll(res.Body)
	res.Body.Close()
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("evaluate with a hostile run: status %d\n%s", res.StatusCode, b)
	}
	h.evalPage = res.Header.Get("Location")
	// An API token with a hostile name, on root's token page.
	h.postOK(h.signIn("root"), "/account/tokens", url.Values{"name": {h.cat.one("API token name", 1, false)}})
	return h
}

// idFor reserves an id for a payload written by hand.
func (c *xssCatalog) idFor(where string) int {
	c.mu.Lock()
	defer c.mu.Unlock()
	c.where = append(c.where, where)
	return len(c.where) - 1
}

// The recorder is read by the test while the server's goroutines write to it: waiting for a
// hit and taking the hits are safe alongside requests (checked under -race).
func TestXSSRecorderIsSafeAlongsideRequests(t *testing.T) {
	rec := &xssRecorder{}
	srv := httptest.NewServer(rec.wrap(http.NotFoundHandler()))
	defer srv.Close()
	const n = 20
	var wg sync.WaitGroup
	for i := range n {
		wg.Go(func() {
			res, err := srv.Client().Get(fmt.Sprintf("%s/xss?id=%d", srv.URL, i))
			if err != nil {
				t.Error(err)
				return
			}
			res.Body.Close()
		})
	}
	for rec.seen() < n {
		runtime.Gosched()
	}
	wg.Wait()
	if hits := rec.take(); len(hits) != n {
		t.Errorf("%d hits, want %d", len(hits), n)
	}
}
