package web

import (
	"context"
	"fmt"
	"net/http"
	"net/url"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/store"
)

func TestSignInSucceedsAndShowsProjects(t *testing.T) {
	a := newTestApp(t)
	c := a.signIn("amir")
	res, body := a.get(c, "/")
	if res.StatusCode != http.StatusOK {
		t.Fatalf("home: status %d", res.StatusCode)
	}
	if !strings.Contains(body, "Kettles") || strings.Contains(body, "Teapots") {
		t.Errorf("home should list the assessor's project and only it; got:\n%s", body)
	}
}

func TestSessionCookieFlags(t *testing.T) {
	a := newTestApp(t)
	res := a.post(a.client(), "/signin", url.Values{"username": {"amir"}, "password": {testPassword}})
	var found bool
	for _, ck := range res.Cookies() {
		if ck.Name != sessionName {
			continue
		}
		found = true
		if !ck.HttpOnly || ck.SameSite != http.SameSiteLaxMode {
			t.Errorf("session cookie flags: HttpOnly=%v SameSite=%v, want true and Lax", ck.HttpOnly, ck.SameSite)
		}
		if ck.Secure {
			t.Errorf("a plain-HTTP server without --secure-cookies should not mark the cookie Secure")
		}
	}
	if !found {
		t.Fatal("sign-in set no session cookie")
	}
}

func TestSignInFailsWithWrongPassword(t *testing.T) {
	a := newTestApp(t)
	c := a.client()
	for _, form := range []url.Values{
		{"username": {"amir"}, "password": {"wrong password!"}},
		{"username": {"nobody"}, "password": {testPassword}},
	} {
		res := a.post(c, "/signin", form)
		if res.StatusCode != http.StatusUnauthorized {
			t.Errorf("sign-in %v: status %d, want 401", form.Get("username"), res.StatusCode)
		}
	}
	if res, _ := a.get(c, "/"); res.StatusCode != http.StatusSeeOther || !strings.HasPrefix(res.Header.Get("Location"), "/signin") {
		t.Errorf("after failed sign-ins the home page should send to /signin, got %d %s", res.StatusCode, res.Header.Get("Location"))
	}
}

func TestSignInIsThrottledPerAccount(t *testing.T) {
	a := newTestApp(t)
	c := a.client()
	for i := 0; i < 5; i++ {
		a.post(c, "/signin", url.Values{"username": {"bea"}, "password": {"guess number " + fmt.Sprint(i)}})
	}
	res := a.post(c, "/signin", url.Values{"username": {"bea"}, "password": {testPassword}})
	if res.StatusCode != http.StatusTooManyRequests {
		t.Fatalf("sixth try after five failures: status %d, want 429 even with the right password", res.StatusCode)
	}
	// Another account from the same address is not locked by bea's failures.
	if res := a.post(c, "/signin", url.Values{"username": {"amir"}, "password": {testPassword}}); res.StatusCode != http.StatusSeeOther {
		t.Errorf("other account: status %d, want 303", res.StatusCode)
	}
}

func TestSignOutEndsSessionOnServer(t *testing.T) {
	a := newTestApp(t)
	c := a.signIn("amir")
	stolen := a.cookies(c) // a copy of the cookie, as an eavesdropper might keep it
	if res := a.post(c, "/signout", nil); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("sign-out: status %d", res.StatusCode)
	}
	if status := a.homeWith(stolen); status != http.StatusSeeOther {
		t.Errorf("replayed cookie after sign-out: status %d, want a redirect to sign in", status)
	}
}

// cookies is a copy of the cookies c holds for the test server.
func (a *testApp) cookies(c *http.Client) []*http.Cookie {
	u, _ := url.Parse(a.server.URL)
	return c.Jar.Cookies(u)
}

// homeWith is the status of the home page asked by a fresh client holding only these cookies.
func (a *testApp) homeWith(cookies []*http.Cookie) int {
	u, _ := url.Parse(a.server.URL)
	c := a.client()
	c.Jar.SetCookies(u, cookies)
	res, _ := a.get(c, "/")
	return res.StatusCode
}

func TestDisabledAccountLosesSessionAtOnce(t *testing.T) {
	a := newTestApp(t)
	c := a.signIn("amir")
	if err := a.store.SetUserDisabled(context.Background(), a.users["amir"].ID, true, 0); err != nil {
		t.Fatal(err)
	}
	if res, _ := a.get(c, "/"); res.StatusCode != http.StatusSeeOther {
		t.Errorf("disabled account's next request: status %d, want redirect to sign in", res.StatusCode)
	}
	if res := a.post(a.client(), "/signin", url.Values{"username": {"amir"}, "password": {testPassword}}); res.StatusCode != http.StatusUnauthorized {
		t.Errorf("disabled account signing in: status %d, want 401", res.StatusCode)
	}
}

func TestSessionRotatesOnSignIn(t *testing.T) {
	a := newTestApp(t)
	c := a.signIn("amir")
	first := a.cookies(c)
	a.post(c, "/signin", url.Values{"username": {"amir"}, "password": {testPassword}})
	second := a.cookies(c)
	if len(first) == 0 || len(second) == 0 || first[0].Value == second[0].Value {
		t.Fatal("signing in again should issue a new session cookie")
	}
	if status := a.homeWith(first); status != http.StatusSeeOther {
		t.Errorf("the session from before the new sign-in still works: status %d", status)
	}
}

func TestRolesGuardPages(t *testing.T) {
	a := newTestApp(t)
	p := fmt.Sprintf("/projects/%d", a.project.ID)
	cases := []struct {
		user, path string
		want       int
	}{
		{"amir", p + "/overview", http.StatusForbidden},
		{"amir", "/admin/users", http.StatusForbidden},
		{"amir", p + "/judge", http.StatusOK},
		{"lena", p + "/overview", http.StatusOK},
		{"lena", p + "/judge", http.StatusForbidden},
		{"lena", "/admin/users", http.StatusForbidden},
		{"root", "/admin/users", http.StatusOK},
		{"root", p + "/overview", http.StatusOK},
		{"cyd", p + "/judge", http.StatusNotFound},
		{"cyd", p + "/overview", http.StatusNotFound},
	}
	clients := map[string]*http.Client{}
	for _, c := range cases {
		if clients[c.user] == nil {
			clients[c.user] = a.signIn(c.user)
		}
		if res, _ := a.get(clients[c.user], c.path); res.StatusCode != c.want {
			t.Errorf("%s GET %s: status %d, want %d", c.user, c.path, res.StatusCode, c.want)
		}
	}
	if res, _ := a.get(a.client(), p+"/judge"); res.StatusCode != http.StatusSeeOther {
		t.Errorf("anonymous GET judge: status %d, want redirect to sign in", res.StatusCode)
	}
}

func TestCrossOriginPostIsRejected(t *testing.T) {
	a := newTestApp(t)
	c := a.signIn("amir")
	form := url.Values{"pair": {fmt.Sprint(a.pairs[0])}, "grade": {"2"}}
	path := fmt.Sprintf("/projects/%d/judge", a.project.ID)
	res := a.post(c, path, form, "Origin", "https://attacker.example", "Sec-Fetch-Site", "cross-site")
	if res.StatusCode != http.StatusForbidden {
		t.Errorf("cross-origin POST: status %d, want 403", res.StatusCode)
	}
	if n := countJudgments(t, a, a.users["amir"].ID); n != 0 {
		t.Errorf("a rejected cross-origin POST stored %d judgments", n)
	}
	res = a.post(c, path, form, "Origin", a.server.URL, "Sec-Fetch-Site", "same-origin")
	if res.StatusCode != http.StatusSeeOther {
		t.Errorf("same-origin POST: status %d, want 303", res.StatusCode)
	}
}

func TestSecurityHeaders(t *testing.T) {
	a := newTestApp(t)
	res, _ := a.get(a.client(), "/signin")
	csp := res.Header.Get("Content-Security-Policy")
	if !strings.Contains(csp, "script-src 'self'") || strings.Contains(csp, "unsafe-inline") {
		t.Errorf("CSP %q should allow only same-origin scripts", csp)
	}
	for h, want := range map[string]string{"X-Content-Type-Options": "nosniff", "X-Frame-Options": "DENY", "Referrer-Policy": "same-origin"} {
		if got := res.Header.Get(h); got != want {
			t.Errorf("%s = %q, want %q", h, got, want)
		}
	}
}

func TestHealthz(t *testing.T) {
	a := newTestApp(t)
	if res, body := a.get(a.client(), "/healthz"); res.StatusCode != http.StatusOK || strings.TrimSpace(body) != "ok" {
		t.Fatalf("healthz: %d %q", res.StatusCode, body)
	}
	a.store.Close()
	if res, _ := a.get(a.client(), "/healthz"); res.StatusCode != http.StatusServiceUnavailable {
		t.Errorf("healthz with the database closed: status %d, want 503", res.StatusCode)
	}
}

// Two servers on one database (two instances behind a load balancer) count the same
// failures: guesses spread over both are refused as if sent to one.
func TestSignInThrottleHoldsAcrossInstances(t *testing.T) {
	a := newTestApp(t)
	other, err := store.Open(context.Background(), a.store.Path())
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { other.Close() })
	b, err := New(context.Background(), other, Options{Logger: discardLogger()})
	if err != nil {
		t.Fatal(err)
	}
	for i := range 5 {
		srv := http.Handler(a.srv)
		if i%2 == 1 {
			srv = b
		}
		if got := signinFrom(srv, "192.0.2.7:4000", "bea", fmt.Sprintf("guess %d", i)); got != http.StatusUnauthorized {
			t.Fatalf("guess %d: %d", i, got)
		}
	}
	for name, srv := range map[string]http.Handler{"first": a.srv, "second": b} {
		if got := signinFrom(srv, "192.0.2.8:4000", "bea", testPassword); got != http.StatusTooManyRequests {
			t.Errorf("the %s instance let bea in after five failures spread over two: %d", name, got)
		}
	}
}
