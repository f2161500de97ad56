package web

import (
	"context"
	"io"
	"net/http"
	"net/http/httptest"
	"net/url"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/internal/pgtest"
	"github.com/pertinent/pertinent/store"
)

// Two instances of the app on one PostgreSQL database need no sticky sessions: a session
// begun at one is good at the other, and signing out at either ends it at both.
func TestSessionsCrossInstancesOnPostgres(t *testing.T) {
	dsn := pgtest.New(t)
	a := newTestAppOn(t, dsn)
	ctx := context.Background()
	st2, err := store.Open(ctx, dsn)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st2.Close() })
	srv2, err := New(ctx, st2, Options{Logger: discardLogger()})
	if err != nil {
		t.Fatal(err)
	}
	second := httptest.NewServer(srv2)
	t.Cleanup(second.Close)

	// Cookies are kept per host, not per port, so the client offers the cookie from the
	// first instance to the second, as a browser would behind one proxy.
	c := a.signIn("lena")
	get := func(base, path string) (int, string) {
		t.Helper()
		res, err := c.Get(base + path)
		if err != nil {
			t.Fatal(err)
		}
		defer res.Body.Close()
		b, _ := io.ReadAll(res.Body)
		return res.StatusCode, string(b)
	}
	if code, body := get(second.URL, "/"); code != http.StatusOK || !strings.Contains(body, "Lena") {
		t.Fatalf("the second instance with the first's session: status %d\n%.300s", code, body)
	}
	kept := c.Jar.Cookies(mustURL(t, a.server.URL)) // the session cookie, as a thief would keep it
	req, _ := http.NewRequest(http.MethodPost, second.URL+"/signout", strings.NewReader(url.Values{}.Encode()))
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	res, err := c.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("sign-out at the second instance: status %d, want 303", res.StatusCode)
	}
	// The session row is gone, so the kept cookie is refused at the first instance too.
	if len(kept) == 0 {
		t.Fatal("no session cookie after signing in")
	}
	c = a.client()
	c.Jar.SetCookies(mustURL(t, a.server.URL), kept)
	res, err = c.Get(a.server.URL + "/")
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if res.StatusCode == http.StatusOK || !strings.HasPrefix(res.Header.Get("Location"), "/signin") {
		t.Errorf("the first instance after sign-out at the second: status %d, Location %q; want a redirect to /signin",
			res.StatusCode, res.Header.Get("Location"))
	}
}

func mustURL(t *testing.T, s string) *url.URL {
	t.Helper()
	u, err := url.Parse(s)
	if err != nil {
		t.Fatal(err)
	}
	return u
}
