package web

import (
	"bytes"
	"context"
	"fmt"
	"io"
	"mime/multipart"
	"net/http"
	"net/http/cookiejar"
	"net/http/httptest"
	"net/url"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"golang.org/x/crypto/bcrypt"

	"github.com/pertinent/pertinent/store"
)

// testApp is a real server on loopback over a real SQLite file. By default it holds the
// kettle project: six pairs (two queries of three documents), a lead lena, assessors amir
// and bea, an admin root, and cyd, an assessor of another project only. With the judging
// options it holds instead one lamp project shaped by them, with a lead "leader" and
// assessors a000, a001, ...
type testApp struct {
	t         testing.TB
	store     *store.Store
	srv       *Server
	server    *httptest.Server
	project   store.Project
	users     map[string]store.User
	lead      store.User
	assessors []store.User
	pairs     []int64
	gold      map[int64]bool
	docs      []store.Document // the project's documents as loaded, for rewriting their bodies
	transport *http.Transport
}

const testPassword = "correct horse battery"

// fixture is what newTestApp builds; each option changes one part of it.
type fixture struct {
	lamps                             bool
	queries, docs, assessors, perPair int
	gold                              int // extra gold pairs, one per query in turn, known grade 2
	goldRate                          float64
	guidelines                        string
}

type fixtureOption func(*fixture)

// withPairs makes the project a lamp project of queries × docs pairs.
func withPairs(queries, docs int) fixtureOption {
	return func(f *fixture) { f.lamps, f.queries, f.docs = true, queries, docs }
}

// withAssessors gives the lamp project n assessors, a000 to a(n-1).
func withAssessors(n int) fixtureOption { return func(f *fixture) { f.lamps, f.assessors = true, n } }

// withPerPair sets how many judgments each lamp pair needs.
func withPerPair(n int) fixtureOption { return func(f *fixture) { f.lamps, f.perPair = true, n } }

// withGold adds n gold pairs served at the given rate.
func withGold(n int, rate float64) fixtureOption {
	return func(f *fixture) { f.lamps, f.gold, f.goldRate = true, n, rate }
}

// withGuidelines sets the lamp project's guidelines.
func withGuidelines(md string) fixtureOption {
	return func(f *fixture) { f.lamps, f.guidelines = true, md }
}

func newTestApp(tb testing.TB, opts ...fixtureOption) *testApp {
	tb.Helper()
	return newTestAppOn(tb, testDatabase(tb), opts...)
}

// newTestAppOn is newTestApp on the database at path (a file or a postgres:// string).
func newTestAppOn(tb testing.TB, path string, opts ...fixtureOption) *testApp {
	tb.Helper()
	var f fixture
	for _, o := range opts {
		o(&f)
	}
	store.SetPasswordCost(bcrypt.MinCost)
	ctx := context.Background()
	st, err := store.Open(ctx, path)
	if err != nil {
		tb.Fatal(err)
	}
	tb.Cleanup(func() { st.Close() })
	a := &testApp{t: tb, store: st, users: map[string]store.User{}, gold: map[int64]bool{},
		transport: &http.Transport{MaxIdleConns: 512, MaxIdleConnsPerHost: 512}}
	tb.Cleanup(a.transport.CloseIdleConnections)
	if f.lamps {
		a.buildLamps(ctx, f)
	} else {
		a.buildKettles(ctx)
	}
	if a.srv, err = New(ctx, st, Options{Logger: discardLogger()}); err != nil {
		tb.Fatal(err)
	}
	a.server = httptest.NewServer(a.srv)
	tb.Cleanup(a.server.Close)
	return a
}

// user creates an account and keeps it under its username.
func (a *testApp) user(ctx context.Context, name, display string, role store.Role) store.User {
	a.t.Helper()
	u, err := a.store.CreateUser(ctx, name, display, role, testPassword)
	if err != nil {
		a.t.Fatal(err)
	}
	a.users[name] = u
	return u
}

func (a *testApp) member(ctx context.Context, project int64, u store.User, role store.Role, by store.User) {
	a.t.Helper()
	if err := a.store.SetMember(ctx, project, u.ID, role, by.ID); err != nil {
		a.t.Fatal(err)
	}
}

// fatalIf is a check that ends the test on an error, for steps the rest cannot do without.
func fatalIf(t testing.TB) func(error) {
	return func(err error) {
		t.Helper()
		if err != nil {
			t.Fatal(err)
		}
	}
}

// addPair adds a document and pairs it as spec says (spec's DocumentID is filled in).
func addPair(l *store.Loader, spec store.PairSpec, d store.Document) (int64, error) {
	did, err := l.Document(d)
	if err != nil {
		return 0, err
	}
	spec.DocumentID = did
	return l.Pair(spec)
}

// load adds one document per pair under each query, keeping the pairs and documents.
func (a *testApp) load(ctx context.Context, queries []store.Query, docs func(q int) []store.Document) (qids []int64) {
	a.t.Helper()
	err := a.store.Load(ctx, a.project.ID, func(l *store.Loader) error {
		for qi, q := range queries {
			qid, err := l.Query(q)
			if err != nil {
				return err
			}
			qids = append(qids, qid)
			for _, d := range docs(qi) {
				pid, err := addPair(l, store.PairSpec{QueryID: qid}, d)
				if err != nil {
					return err
				}
				a.pairs = append(a.pairs, pid)
				a.docs = append(a.docs, d)
			}
		}
		return nil
	})
	if err != nil {
		a.t.Fatal(err)
	}
	return qids
}

func (a *testApp) buildKettles(ctx context.Context) {
	a.t.Helper()
	root := a.user(ctx, "root", "Root", store.RoleAdmin)
	a.lead = a.user(ctx, "lena", "Lena", store.RoleLead)
	for _, name := range []string{"amir", "bea", "cyd"} {
		a.user(ctx, name, strings.ToUpper(name[:1])+name[1:], store.RoleAssessor)
	}
	var err error
	a.project, err = a.store.CreateProject(ctx, store.NewProject{Name: "Kettles", Guidelines: "Grade carefully.", AllowChanges: true}, root.ID)
	if err != nil {
		a.t.Fatal(err)
	}
	a.member(ctx, a.project.ID, a.lead, store.RoleLead, root)
	for _, name := range []string{"amir", "bea"} {
		a.member(ctx, a.project.ID, a.users[name], store.RoleAssessor, root)
		a.assessors = append(a.assessors, a.users[name])
	}
	// cyd is an assessor of another project only.
	other, err := a.store.CreateProject(ctx, store.NewProject{Name: "Teapots"}, root.ID)
	if err != nil {
		a.t.Fatal(err)
	}
	a.member(ctx, other.ID, a.users["cyd"], store.RoleAssessor, root)
	texts := []string{"quiet electric kettle", "travel kettle 0.5l"}
	var queries []store.Query
	for qi, qt := range texts {
		queries = append(queries, store.Query{ExternalID: "k" + string(rune('1'+qi)), Text: qt})
	}
	a.load(ctx, queries, func(qi int) []store.Document {
		var docs []store.Document
		for di := range 3 {
			docs = append(docs, store.Document{ExternalID: texts[qi] + string(rune('a'+di)), Title: "Kettle model " + string(rune('A'+di)), Body: "A kettle."})
		}
		return docs
	})
}

func (a *testApp) buildLamps(ctx context.Context, f fixture) {
	a.t.Helper()
	a.lead = a.user(ctx, "leader", "Lead Person", store.RoleLead)
	var err error
	a.project, err = a.store.CreateProject(ctx, store.NewProject{Name: "Lamps", JudgmentsPerPair: f.perPair, GoldRate: f.goldRate,
		AllowChanges: true, Guidelines: f.guidelines}, a.lead.ID)
	if err != nil {
		a.t.Fatal(err)
	}
	a.member(ctx, a.project.ID, a.lead, store.RoleLead, a.lead)
	for i := range f.assessors {
		u := a.user(ctx, fmt.Sprintf("a%03d", i), fmt.Sprintf("Assessor %03d", i), store.RoleAssessor)
		a.member(ctx, a.project.ID, u, store.RoleAssessor, a.lead)
		a.assessors = append(a.assessors, u)
	}
	lamp := func(id, title string) store.Document {
		return store.Document{ExternalID: id, Title: title, URL: "https://shop.example/lamp", Body: "A lamp with a warm light.\n\nAdjustable arm."}
	}
	var queries []store.Query
	for q := range f.queries {
		queries = append(queries, store.Query{ExternalID: fmt.Sprintf("q%d", q), Text: fmt.Sprintf("reading lamp %d", q), Need: "A lamp to read by."})
	}
	qids := a.load(ctx, queries, func(q int) []store.Document {
		var docs []store.Document
		for d := range f.docs {
			docs = append(docs, lamp(fmt.Sprintf("q%d-d%d", q, d), fmt.Sprintf("Lamp %d-%d", q, d)))
		}
		return docs
	})
	if f.gold == 0 {
		return
	}
	err = a.store.Load(ctx, a.project.ID, func(l *store.Loader) error {
		for g := range f.gold {
			two := 2
			pid, err := addPair(l, store.PairSpec{QueryID: qids[g%len(qids)], GoldGrade: &two}, lamp(fmt.Sprintf("gold-%d", g), fmt.Sprintf("Lamp g%d", g)))
			if err != nil {
				return err
			}
			a.gold[pid] = true
		}
		return nil
	})
	if err != nil {
		a.t.Fatal(err)
	}
}

// rewriteDocuments gives every document of the project this title (when not empty) and body,
// through the loader as an import would.
func (a *testApp) rewriteDocuments(title, body, format string) {
	a.t.Helper()
	err := a.store.Load(context.Background(), a.project.ID, func(l *store.Loader) error {
		for _, d := range a.docs {
			if title != "" {
				d.Title = title
			}
			d.Body, d.BodyFormat = body, format
			if _, err := l.Document(d); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		a.t.Fatal(err)
	}
}

// client returns an HTTP client with its own cookie jar that does not follow redirects, so
// tests see every status.
func (a *testApp) client() *http.Client {
	jar, _ := cookiejar.New(nil)
	return &http.Client{Jar: jar, Transport: a.transport, CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
}

// signIn returns a client signed in as the named user.
func (a *testApp) signIn(name string) *http.Client {
	a.t.Helper()
	c := a.client()
	res := a.post(c, "/signin", url.Values{"username": {name}, "password": {testPassword}})
	if res.StatusCode != http.StatusSeeOther {
		a.t.Fatalf("sign-in of %s: status %d, want 303", name, res.StatusCode)
	}
	return c
}

func (a *testApp) post(c *http.Client, path string, form url.Values, headers ...string) *http.Response {
	a.t.Helper()
	req, _ := http.NewRequest(http.MethodPost, a.server.URL+path, strings.NewReader(form.Encode()))
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	for i := 0; i+1 < len(headers); i += 2 {
		req.Header.Set(headers[i], headers[i+1])
	}
	res, err := c.Do(req)
	if err != nil {
		a.t.Fatal(err)
	}
	a.t.Cleanup(func() { res.Body.Close() })
	return res
}

// postMultipart posts the multipart form that fill writes to path as c; the caller reads and
// closes the response.
func (a *testApp) postMultipart(c *http.Client, path string, fill func(*multipart.Writer)) *http.Response {
	a.t.Helper()
	var body bytes.Buffer
	mw := multipart.NewWriter(&body)
	fill(mw)
	mw.Close()
	req, _ := http.NewRequest(http.MethodPost, a.server.URL+path, &body)
	req.Header.Set("Content-Type", mw.FormDataContentType())
	res, err := c.Do(req)
	if err != nil {
		a.t.Fatal(err)
	}
	return res
}

func (a *testApp) get(c *http.Client, path string) (*http.Response, string) {
	a.t.Helper()
	res, err := c.Get(a.server.URL + path)
	if err != nil {
		a.t.Fatal(err)
	}
	defer res.Body.Close()
	b, _ := io.ReadAll(res.Body)
	return res, string(b)
}

// send sends a request and returns status and body; errors are returned, not fatal, so
// goroutines can use it.
func (a *testApp) send(c *http.Client, method, path string, form url.Values, htmx bool) (int, string, error) {
	var body io.Reader
	if form != nil {
		body = strings.NewReader(form.Encode())
	}
	req, err := http.NewRequest(method, a.server.URL+path, body)
	if err != nil {
		return 0, "", err
	}
	if form != nil {
		req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	}
	if htmx {
		req.Header.Set("HX-Request", "true")
	}
	res, err := c.Do(req)
	if err != nil {
		return 0, "", err
	}
	defer res.Body.Close()
	b, err := io.ReadAll(res.Body)
	return res.StatusCode, string(b), err
}

func (a *testApp) judgePath() string { return fmt.Sprintf("/projects/%d/judge", a.project.ID) }

var pairInForm = regexp.MustCompile(`name="pair" value="(\d+)"`)

// offeredPair reads the pair a judging page or fragment offers; 0 when it offers none.
func offeredPair(body string) int64 {
	m := pairInForm.FindStringSubmatch(body)
	if m == nil {
		return 0
	}
	id, _ := strconv.ParseInt(m[1], 10, 64)
	return id
}

// judgments returns every judgment row of a pair, withdrawn and superseded ones included.
func (a *testApp) judgments(pair int64) []store.Judgment {
	a.t.Helper()
	js, err := a.store.PairJudgments(context.Background(), pair)
	if err != nil {
		a.t.Fatal(err)
	}
	return js
}

// currentGrade returns the grade of the current judgment of a pair judged once, the pair
// given as a page shows it.
func (a *testApp) currentGrade(pair string) int {
	a.t.Helper()
	for _, j := range a.judgments(pairNumber(a.t, pair)) {
		if j.Current && j.Grade != nil {
			return *j.Grade
		}
	}
	a.t.Fatalf("pair %s has no current grade", pair)
	return 0
}

// pairNumber reads a pair id as a page shows it.
func pairNumber(tb testing.TB, pair string) int64 {
	tb.Helper()
	id, err := strconv.ParseInt(pair, 10, 64)
	if err != nil {
		tb.Fatal(err)
	}
	return id
}
