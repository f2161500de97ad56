package web

import (
	"context"
	"io"
	"log/slog"
	"net/http"
	"net/http/cookiejar"
	"net/http/httptest"
	"net/url"
	"path/filepath"
	"strings"
	"testing"

	"golang.org/x/crypto/bcrypt"

	"github.com/pertinent/pertinent/store"
)

// testApp is a real server on loopback over a real SQLite file, with one project of
// six pairs (two queries of three documents), a lead, two assessors and an admin.
type testApp struct {
	t       *testing.T
	store   *store.Store
	server  *httptest.Server
	project store.Project
	users   map[string]store.User
	pairs   []int64
}

const testPassword = "correct horse battery"

func newTestApp(t *testing.T) *testApp {
	t.Helper()
	store.SetPasswordCost(bcrypt.MinCost)
	ctx := context.Background()
	st, err := store.Open(ctx, filepath.Join(t.TempDir(), "test.db"))
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st.Close() })
	a := &testApp{t: t, store: st, users: map[string]store.User{}}
	for _, u := range []struct {
		name string
		role store.Role
	}{{"root", store.RoleAdmin}, {"lena", store.RoleLead}, {"amir", store.RoleAssessor}, {"bea", store.RoleAssessor}, {"cyd", store.RoleAssessor}} {
		user, err := st.CreateUser(ctx, u.name, strings.ToUpper(u.name[:1])+u.name[1:], u.role, testPassword)
		if err != nil {
			t.Fatal(err)
		}
		a.users[u.name] = user
	}
	a.project, err = st.CreateProject(ctx, store.NewProject{Name: "Kettles", Guidelines: "Grade carefully.", AllowChanges: true}, a.users["root"].ID)
	if err != nil {
		t.Fatal(err)
	}
	for name, role := range map[string]store.Role{"lena": store.RoleLead, "amir": store.RoleAssessor, "bea": store.RoleAssessor} {
		if err := st.SetMember(ctx, a.project.ID, a.users[name].ID, role, a.users["root"].ID); err != nil {
			t.Fatal(err)
		}
	}
	// cyd is an assessor of another project only.
	other, err := st.CreateProject(ctx, store.NewProject{Name: "Teapots"}, a.users["root"].ID)
	if err != nil {
		t.Fatal(err)
	}
	if err := st.SetMember(ctx, other.ID, a.users["cyd"].ID, store.RoleAssessor, a.users["root"].ID); err != nil {
		t.Fatal(err)
	}
	err = st.Load(ctx, a.project.ID, func(l *store.Loader) error {
		for qi, qt := range []string{"quiet electric kettle", "travel kettle 0.5l"} {
			qid, err := l.Query(store.Query{ExternalID: "k" + string(rune('1'+qi)), Text: qt})
			if err != nil {
				return err
			}
			for di := 0; di < 3; di++ {
				did, err := l.Document(store.Document{ExternalID: qt + string(rune('a'+di)), Title: "Kettle model " + string(rune('A'+di)), Body: "A kettle."})
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
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	srv, err := New(ctx, st, Options{Logger: slog.New(slog.NewTextHandler(io.Discard, nil))})
	if err != nil {
		t.Fatal(err)
	}
	a.server = httptest.NewServer(srv)
	t.Cleanup(a.server.Close)
	return a
}

// client returns an HTTP client with its own cookie jar that does not follow redirects, so
// tests see every status.
func (a *testApp) client() *http.Client {
	jar, _ := cookiejar.New(nil)
	return &http.Client{Jar: jar, CheckRedirect: func(*http.Request, []*http.Request) error { return http.ErrUseLastResponse }}
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
