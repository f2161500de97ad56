package web

import (
	"context"
	"fmt"
	"io"
	"mime/multipart"
	"net/http"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/pertinent/pertinent/store"
)

// postImport sends the import form as a browser does: fields, then the files.
func (a *testApp) postImport(c *http.Client, projectID int64, fields map[string]string, files ...string) *http.Response {
	a.t.Helper()
	res := a.postMultipart(c, fmt.Sprintf("/projects/%d/import", projectID), func(mw *multipart.Writer) {
		for k, v := range fields {
			mw.WriteField(k, v)
		}
		for i := 0; i+1 < len(files); i += 2 {
			w, _ := mw.CreateFormFile("files", files[i])
			io.WriteString(w, files[i+1])
		}
	})
	a.t.Cleanup(func() { res.Body.Close() })
	return res
}

// importDone follows an import to its finished status page and returns that page.
func (a *testApp) importDone(c *http.Client, res *http.Response) string {
	a.t.Helper()
	return a.importDoneAt(c, a.server.URL, res)
}

// importDoneAt is importDone polling the server at base, which need not be the one that took
// the upload.
func (a *testApp) importDoneAt(c *http.Client, base string, res *http.Response) string {
	a.t.Helper()
	if res.StatusCode != http.StatusSeeOther {
		b, _ := io.ReadAll(res.Body)
		a.t.Fatalf("import post: status %d, want 303\n%s", res.StatusCode, b)
	}
	loc := res.Header.Get("Location")
	for range 600 {
		// The fragment htmx polls; once finished it stops asking to be polled.
		req, _ := http.NewRequest(http.MethodGet, base+loc, nil)
		req.Header.Set("HX-Request", "true")
		r, err := c.Do(req)
		if err != nil {
			a.t.Fatal(err)
		}
		b, _ := io.ReadAll(r.Body)
		r.Body.Close()
		if r.StatusCode != http.StatusOK {
			a.t.Fatalf("status fragment: %d", r.StatusCode)
		}
		if !strings.Contains(string(b), "hx-trigger") {
			r, err := c.Get(base + loc)
			if err != nil {
				a.t.Fatal(err)
			}
			defer r.Body.Close()
			page, _ := io.ReadAll(r.Body)
			return string(page)
		}
		time.Sleep(50 * time.Millisecond)
	}
	a.t.Fatal("the import did not finish")
	return ""
}

var reportRow = regexp.MustCompile(`data-what="([^"]+)"><th scope="row">[^<]+</th><td>(\d+)</td><td>(\d+)</td><td>(\d+)</td>`)

func reportCounts(page string) map[string]string {
	out := map[string]string{}
	for _, m := range reportRow.FindAllStringSubmatch(page, -1) {
		out[m[1]] = m[2] + "/" + m[3] + "/" + m[4]
	}
	return out
}

const webRows = `query_id,query_text,doc_id,title,body,priority
k1,quiet electric kettle,new-doc,Kettle model Z,A new kettle.,5
k3,glass kettle,glass-1,Glass kettle,See-through.,1
`

func TestLeadImportsRowsThroughTheBrowser(t *testing.T) {
	a := newTestApp(t)
	c := a.signIn("lena")
	_, form := a.get(c, fmt.Sprintf("/projects/%d/import", a.project.ID))
	if !strings.Contains(form, `enctype="multipart/form-data"`) || !strings.Contains(form, `name="dry_run"`) {
		t.Fatalf("import page lacks the upload form:\n%s", form)
	}
	// A dry run reports and writes nothing.
	page := a.importDone(c, a.postImport(c, a.project.ID, map[string]string{"kind": "rows", "dry_run": "1"}, "rows.csv", webRows))
	want := map[string]string{"queries": "1/0/1", "documents": "2/0/0", "pairs": "2/0/0"}
	if got := reportCounts(page); fmt.Sprint(got) != fmt.Sprint(want) || !strings.Contains(page, "Dry run finished") {
		t.Errorf("dry-run report %v, want %v\n%s", got, want, page)
	}
	if n := pairCount(t, a); n != 6 {
		t.Fatalf("a dry run left %d pairs, want the 6 there were", n)
	}
	page = a.importDone(c, a.postImport(c, a.project.ID, map[string]string{"kind": "rows"}, "rows.csv", webRows))
	if got := reportCounts(page); fmt.Sprint(got) != fmt.Sprint(want) {
		t.Errorf("report %v, want %v", got, want)
	}
	if n := pairCount(t, a); n != 8 {
		t.Errorf("%d pairs after the import, want 8", n)
	}
	// Twice: all unchanged.
	page = a.importDone(c, a.postImport(c, a.project.ID, map[string]string{"kind": "rows"}, "rows.csv", webRows))
	if got := reportCounts(page); fmt.Sprint(got) != fmt.Sprint(map[string]string{"queries": "0/0/2", "documents": "0/0/2", "pairs": "0/0/2"}) {
		t.Errorf("second import %v, want everything unchanged", got)
	}
}

func pairCount(t *testing.T, a *testApp) int {
	t.Helper()
	p, err := a.store.ProjectProgress(context.Background(), a.project.ID)
	if err != nil {
		t.Fatal(err)
	}
	return p.Pairs
}

func TestRejectedBrowserImportListsProblems(t *testing.T) {
	a := newTestApp(t)
	c := a.signIn("root")
	page := a.importDone(c, a.postImport(c, a.project.ID, map[string]string{"kind": "pairs"},
		"p.csv", "query_id,doc_id\nk1,nowhere\n"))
	if !strings.Contains(page, "Rejected: nothing was changed") ||
		!strings.Contains(page, `p.csv:2: doc_id: no document &#34;nowhere&#34; in this project`) {
		t.Errorf("rejection page lacks the problem:\n%s", page)
	}
	// A form without files is refused at once.
	res := a.postImport(c, a.project.ID, map[string]string{"kind": "rows"})
	if res.StatusCode != http.StatusBadRequest {
		t.Errorf("import without files: status %d, want 400", res.StatusCode)
	}
}

func TestImportIsForLeadsAndAdminsOfTheProject(t *testing.T) {
	a := newTestApp(t)
	ctx := context.Background()
	// lou leads another project only.
	lou, err := a.store.CreateUser(ctx, "lou", "", store.RoleLead, testPassword)
	if err != nil {
		t.Fatal(err)
	}
	other, _ := a.store.CreateProject(ctx, store.NewProject{Name: "Mugs"}, a.users["root"].ID)
	a.store.SetMember(ctx, other.ID, lou.ID, store.RoleLead, a.users["root"].ID)
	path := fmt.Sprintf("/projects/%d/import", a.project.ID)
	for name, want := range map[string]int{"amir": http.StatusForbidden, "cyd": http.StatusNotFound, "lou": http.StatusNotFound} {
		c := a.signIn(name)
		if res, _ := a.get(c, path); res.StatusCode != want {
			t.Errorf("%s GET import: %d, want %d", name, res.StatusCode, want)
		}
		if res := a.postImport(c, a.project.ID, map[string]string{"kind": "rows"}, "rows.csv", webRows); res.StatusCode != want {
			t.Errorf("%s POST import: %d, want %d", name, res.StatusCode, want)
		}
	}
	if n := pairCount(t, a); n != 6 {
		t.Errorf("refused imports changed the pairs: %d", n)
	}
	// Another project's job id is not found through this project.
	c := a.signIn("lou")
	res := a.postImport(c, other.ID, map[string]string{"kind": "rows", "dry_run": "1"}, "rows.csv", webRows)
	loc := res.Header.Get("Location")
	job := loc[strings.LastIndex(loc, "/")+1:]
	if r, _ := a.get(a.signIn("lena"), fmt.Sprintf("/projects/%d/import/%s", a.project.ID, job)); r.StatusCode != http.StatusNotFound {
		t.Errorf("another project's import seen through this one: %d", r.StatusCode)
	}
}

// Imported markup never runs on the judging page: HTML bodies pass the sanitiser, every
// other field is escaped.
func TestImportedHostileDocumentIsInertOnTheJudgingPage(t *testing.T) {
	a := newTestApp(t)
	ctx := context.Background()
	evil, _ := a.store.CreateProject(ctx, store.NewProject{Name: "Evil"}, a.users["root"].ID)
	a.store.SetMember(ctx, evil.ID, a.users["amir"].ID, store.RoleAssessor, a.users["root"].ID)
	row := `{"query_id":"x1","query_text":"<script>alert('q')</script>","doc_id":"e1",` +
		`"title":"<script>alert('t')</script><img src=x onerror=alert(1)>",` +
		`"url":"javascript:alert('u')",` +
		`"body":"<p>ok</p><script>alert('b')</script><img src=x onerror=\"alert(2)\"><a href=\"javascript:alert(3)\">link</a>",` +
		`"body_format":"html"}`
	c := a.signIn("root")
	page := a.importDone(c, a.postImport(c, evil.ID, map[string]string{"kind": "rows"}, "evil.jsonl", row+"\n"))
	if got := reportCounts(page)["pairs"]; got != "1/0/0" {
		t.Fatalf("import report pairs %q:\n%s", got, page)
	}
	res, body := a.get(a.signIn("amir"), fmt.Sprintf("/projects/%d/judge", evil.ID))
	if res.StatusCode != http.StatusOK || !strings.Contains(body, `<p>ok</p>`) {
		t.Fatalf("judging page %d does not show the document:\n%s", res.StatusCode, body)
	}
	for _, bad := range []string{"<script>alert", "<img src=x onerror", `onerror="alert`, `href="javascript:`} {
		if strings.Contains(body, bad) {
			i := strings.Index(body, bad)
			t.Errorf("judging page carries %q: ...%s...", bad, body[max(0, i-120):min(len(body), i+60)])
		}
	}
	for _, good := range []string{"&lt;script&gt;alert(&#39;q&#39;)&lt;/script&gt;", "&lt;script&gt;alert(&#39;t&#39;)", "<p>ok</p>"} {
		if !strings.Contains(body, good) {
			t.Errorf("judging page lacks %q (escaped text or kept safe markup)", good)
		}
	}
}
