package web

import (
	"context"
	"database/sql"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"net/http/cookiejar"
	"net/http/httptest"
	"net/url"
	"path/filepath"
	"regexp"
	"strconv"
	"strings"
	"testing"

	"golang.org/x/crypto/bcrypt"

	"github.com/pertinent/pertinent/store"
)

// judgingSpec shapes a project for the judging tests and benchmarks.
type judgingSpec struct {
	Queries, Docs, Assessors, PerPair int
	Gold                              int // extra gold pairs, one per query in turn, known grade 2
	GoldRate                          float64
	Guidelines                        string
}

// judgingApp is a real server on loopback over a real SQLite file with one project, one lead
// and n assessors named a000, a001, ...
type judgingApp struct {
	tb        testing.TB
	store     *store.Store
	srv       *Server
	server    *httptest.Server
	path      string
	project   store.Project
	lead      store.User
	assessors []store.User
	pairs     []int64
	gold      map[int64]bool
	transport *http.Transport
}

func newJudgingApp(tb testing.TB, spec judgingSpec) *judgingApp {
	tb.Helper()
	store.SetPasswordCost(bcrypt.MinCost)
	ctx := context.Background()
	a := &judgingApp{tb: tb, path: filepath.Join(tb.TempDir(), "judging.db"), gold: map[int64]bool{}}
	st, err := store.Open(ctx, a.path)
	if err != nil {
		tb.Fatal(err)
	}
	tb.Cleanup(func() { st.Close() })
	a.store = st
	if a.lead, err = st.CreateUser(ctx, "leader", "Lead Person", store.RoleLead, testPassword); err != nil {
		tb.Fatal(err)
	}
	a.project, err = st.CreateProject(ctx, store.NewProject{Name: "Lamps", JudgmentsPerPair: spec.PerPair, GoldRate: spec.GoldRate,
		AllowChanges: true, Guidelines: spec.Guidelines}, a.lead.ID)
	if err != nil {
		tb.Fatal(err)
	}
	if err := st.SetMember(ctx, a.project.ID, a.lead.ID, store.RoleLead, a.lead.ID); err != nil {
		tb.Fatal(err)
	}
	for i := range spec.Assessors {
		u, err := st.CreateUser(ctx, fmt.Sprintf("a%03d", i), fmt.Sprintf("Assessor %03d", i), store.RoleAssessor, testPassword)
		if err != nil {
			tb.Fatal(err)
		}
		if err := st.SetMember(ctx, a.project.ID, u.ID, store.RoleAssessor, a.lead.ID); err != nil {
			tb.Fatal(err)
		}
		a.assessors = append(a.assessors, u)
	}
	err = st.Load(ctx, a.project.ID, func(l *store.Loader) error {
		var qids []int64
		for q := range spec.Queries {
			qid, err := l.Query(store.Query{ExternalID: fmt.Sprintf("q%d", q), Text: fmt.Sprintf("reading lamp %d", q), Need: "A lamp to read by."})
			if err != nil {
				return err
			}
			qids = append(qids, qid)
			for d := range spec.Docs {
				did, err := l.Document(store.Document{ExternalID: fmt.Sprintf("q%d-d%d", q, d), Title: fmt.Sprintf("Lamp %d-%d", q, d),
					URL: "https://shop.example/lamp", Body: "A lamp with a warm light.\n\nAdjustable arm."})
				if err != nil {
					return err
				}
				pid, err := l.Pair(store.PairSpec{QueryID: qid, DocumentID: did})
				if err != nil {
					return err
				}
				a.pairs = append(a.pairs, pid)
			}
		}
		for g := range spec.Gold {
			did, err := l.Document(store.Document{ExternalID: fmt.Sprintf("gold-%d", g), Title: fmt.Sprintf("Lamp g%d", g),
				URL: "https://shop.example/lamp", Body: "A lamp with a warm light.\n\nAdjustable arm."})
			if err != nil {
				return err
			}
			two := 2
			pid, err := l.Pair(store.PairSpec{QueryID: qids[g%len(qids)], DocumentID: did, GoldGrade: &two})
			if err != nil {
				return err
			}
			a.gold[pid] = true
		}
		return nil
	})
	if err != nil {
		tb.Fatal(err)
	}
	if a.srv, err = New(ctx, st, Options{Logger: slog.New(slog.NewTextHandler(io.Discard, nil))}); err != nil {
		tb.Fatal(err)
	}
	a.server = httptest.NewServer(a.srv)
	tb.Cleanup(a.server.Close)
	a.transport = &http.Transport{MaxIdleConns: 512, MaxIdleConnsPerHost: 512}
	tb.Cleanup(a.transport.CloseIdleConnections)
	return a
}

// signIn returns a client with its own cookie jar, signed in, not following redirects.
func (a *judgingApp) signIn(username string) *http.Client {
	a.tb.Helper()
	jar, _ := cookiejar.New(nil)
	c := &http.Client{Jar: jar, Transport: a.transport,
		CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
	status, _, err := a.do(c, http.MethodPost, "/signin", url.Values{"username": {username}, "password": {testPassword}}, false)
	if err != nil || status != http.StatusSeeOther {
		a.tb.Fatalf("sign-in of %s: status %d, %v", username, status, err)
	}
	return c
}

// do sends a request and returns status and body; errors are returned, not fatal, so
// goroutines can use it.
func (a *judgingApp) do(c *http.Client, method, path string, form url.Values, htmx bool) (int, string, error) {
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

func (a *judgingApp) judgePath() string { return fmt.Sprintf("/projects/%d/judge", a.project.ID) }

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

// db opens the test's database file directly, for checks and for setting up states (an
// expired lease, an adjudication) that no page of this feature creates.
func (a *judgingApp) db() *sql.DB {
	a.tb.Helper()
	db, err := sql.Open("sqlite", "file:"+a.path+"?_pragma=busy_timeout(10000)")
	if err != nil {
		a.tb.Fatal(err)
	}
	a.tb.Cleanup(func() { db.Close() })
	return db
}
