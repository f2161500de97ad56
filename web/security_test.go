package web

import (
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"net/url"
	"regexp"
	"strings"
	"testing"
)

var (
	linkTokenRE = regexp.MustCompile(`/set-password\?token=([A-Za-z0-9_-]+)`)
	apiTokenRE  = regexp.MustCompile(`pt_[A-Za-z0-9_-]{20,}`)
)

// No password, set-password token or API token reaches the log, whatever happens at
// sign-in, on the account page, on the People page or through a set-password link, and
// also not when someone types their password into the username field.
func TestSecretsNeverReachTheLog(t *testing.T) {
	a := newTestApp(t)
	var logs lockedBuffer
	a.restart(Options{Logger: slog.New(slog.NewTextHandler(&logs, &slog.HandlerOptions{Level: slog.LevelDebug}))}, false, nil)
	secrets := []string{testPassword}
	secret := func(s string) string { secrets = append(secrets, s); return s }

	root := a.signIn("root")
	// Failures: a wrong password, an unknown account, and a password typed as the username.
	wrong := secret("Wrong-Guess-5150-amir")
	slip := secret("Slipped-Into-Username-77")
	for _, f := range []url.Values{
		{"username": {"amir"}, "password": {wrong}},
		{"username": {"nobody-here"}, "password": {wrong}},
		{"username": {slip}, "password": {""}},
		{"username": {slip + " amir"}, "password": {slip}},
	} {
		if res := a.post(a.client(), "/signin", f); res.StatusCode != http.StatusUnauthorized {
			t.Fatalf("sign-in with %v: status %d, want 401", f, res.StatusCode)
		}
	}

	// Password changes: a wrong current password, differing repeats, then a real change.
	amir := a.signIn("amir")
	newPw := secret("Amir-New-Secret-9931")
	for _, f := range []url.Values{
		{"current": {secret("Not-Amir-Current-4242")}, "new": {newPw}, "repeat": {newPw}},
		{"current": {testPassword}, "new": {newPw}, "repeat": {secret("Amir-Typo-Secret-9932")}},
	} {
		if res := a.post(amir, "/account/password", f); res.StatusCode == http.StatusSeeOther {
			t.Fatalf("password change with %v was accepted", f)
		}
	}
	a.postOK(amir, "/account/password", url.Values{"current": {testPassword}, "new": {newPw}, "repeat": {newPw}})
	a.signInThrough(a.client(), "amir", newPw)

	// An admin creates an account; its holder sets a password through the one-time link.
	a.postOK(root, "/admin/users", url.Values{"username": {"newbie"}, "display_name": {"New Bie"}, "role": {"assessor"}})
	_, page := a.get(root, "/admin/users")
	m := linkTokenRE.FindStringSubmatch(page)
	if m == nil {
		t.Fatal("the People page shows no set-password link after creating an account")
	}
	token := secret(m[1])
	if res, _ := a.get(a.client(), "/set-password?token="+token); res.StatusCode != http.StatusOK {
		t.Fatalf("set-password page: status %d", res.StatusCode)
	}
	linkPw := secret("Newbie-Chosen-Secret-3117")
	if res := a.post(a.client(), "/set-password", url.Values{"token": {token}, "new": {linkPw}, "repeat": {secret("Newbie-Other-Secret")}}); res.StatusCode != http.StatusBadRequest {
		t.Fatalf("differing repeats on the set-password page: status %d, want 400", res.StatusCode)
	}
	a.postOK(a.client(), "/set-password", url.Values{"token": {token}, "new": {linkPw}, "repeat": {linkPw}})
	a.signInThrough(a.client(), "newbie", linkPw)
	// A used link is refused, and its token still stays out of the log.
	if res := a.post(a.client(), "/set-password", url.Values{"token": {token}, "new": {linkPw}, "repeat": {linkPw}}); res.StatusCode == http.StatusSeeOther {
		t.Fatal("a used set-password link worked twice")
	}

	// An API token, created and used.
	a.postOK(root, "/account/tokens", url.Values{"name": {"ci"}})
	_, page = a.get(root, "/account/tokens")
	apiToken := apiTokenRE.FindString(page)
	if apiToken == "" {
		t.Fatal("the tokens page does not show the new token")
	}
	secret(apiToken)
	req, _ := http.NewRequest(http.MethodGet, a.server.URL+"/api/v1/projects", nil)
	req.Header.Set("Authorization", "Bearer "+apiToken)
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	if res.StatusCode != http.StatusOK {
		t.Fatalf("API call with the new token: status %d", res.StatusCode)
	}

	out := logs.String()
	// The capture works: the refusals and the requests are there.
	if strings.Count(out, "sign-in refused") != 4 || !strings.Contains(out, "path=/set-password") || !strings.Contains(out, "path=/api/v1/projects") {
		t.Fatalf("the log misses the refusals or requests it should hold:\n%s", out)
	}
	for _, s := range secrets {
		if strings.Contains(out, s) {
			t.Errorf("the log holds the secret %q", s)
		}
	}
	if t.Failed() {
		t.Logf("log:\n%s", out)
	}
}

// sessionCookies returns the session cookies a response sets.
func sessionCookies(res *http.Response) []*http.Cookie {
	var out []*http.Cookie
	for _, c := range res.Cookies() {
		if c.Name == sessionName {
			out = append(out, c)
		}
	}
	return out
}

// cookieSteps signs in and walks the pages that write the session cookie (a notice kept
// for the next page, a notice shown, a password change, sign-out) and returns every
// session cookie they set.
func cookieSteps(t *testing.T, a *testApp, c *http.Client) []*http.Cookie {
	t.Helper()
	var all []*http.Cookie
	all = append(all, sessionCookies(a.signInThrough(c, "root", testPassword))...)
	all = append(all, sessionCookies(a.postOK(c, "/admin/users", url.Values{"username": {"cookie-check"}, "role": {"assessor"}}))...)
	res, _ := a.get(c, "/admin/users")
	all = append(all, sessionCookies(res)...)
	const pw = "Cookie-Check-Secret-1"
	all = append(all, sessionCookies(a.postOK(c, "/account/password", url.Values{"current": {testPassword}, "new": {pw}, "repeat": {pw}}))...)
	res, _ = a.get(c, "/account")
	all = append(all, sessionCookies(res)...)
	all = append(all, sessionCookies(a.postOK(c, "/signout", nil))...)
	if len(all) < 5 {
		t.Fatalf("only %d session cookies were set along the way", len(all))
	}
	return all
}

// The session cookie is HttpOnly and SameSite=Lax always, and Secure with --secure-cookies
// or when the request came over TLS, on every response that sets it.
func TestSessionCookieSecureEverywhere(t *testing.T) {
	for _, tc := range []struct {
		name         string
		secureOption bool
		tls          bool
		wantSecure   bool
	}{
		{"plain HTTP", false, false, false},
		{"--secure-cookies behind a proxy", true, false, true},
		{"TLS without the option", false, true, true},
	} {
		t.Run(tc.name, func(t *testing.T) {
			a := newTestApp(t)
			a.restart(Options{SecureCookies: tc.secureOption, Logger: slog.New(slog.NewTextHandler(io.Discard, nil))}, tc.tls, nil)
			c := a.client()
			if tc.tls {
				c = a.tlsClient()
			}
			for i, ck := range cookieSteps(t, a, c) {
				if ck.Secure != tc.wantSecure {
					t.Errorf("session cookie %d: Secure = %v, want %v (%s)", i, ck.Secure, tc.wantSecure, ck.Raw)
				}
				if !ck.HttpOnly || ck.SameSite != http.SameSiteLaxMode || ck.Path != "/" {
					t.Errorf("session cookie %d lacks HttpOnly, SameSite=Lax or Path=/: %s", i, ck.Raw)
				}
			}
		})
	}
}

// signinFrom posts a sign-in straight into the server's handler as if it came from peer,
// with extra request headers; it returns the status.
func signinFrom(srv http.Handler, peer, username, password string, headers ...string) int {
	form := url.Values{"username": {username}, "password": {password}}
	req := httptest.NewRequest(http.MethodPost, "/signin", strings.NewReader(form.Encode()))
	req.Header.Set("Content-Type", "application/x-www-form-urlencoded")
	req.RemoteAddr = peer
	for i := 0; i+1 < len(headers); i += 2 {
		req.Header.Set(headers[i], headers[i+1])
	}
	w := httptest.NewRecorder()
	srv.ServeHTTP(w, req)
	return w.Code
}

// Twenty failed sign-ins from one address, each for a different account, shut that
// address out, even for a correct password of an account never tried; other addresses are
// not affected. Forwarded-address headers from a client that is not a local proxy do not
// give it a fresh address per try.
func TestSignInThrottlePerAddress(t *testing.T) {
	a := newTestApp(t)
	srv := a.server.Config.Handler

	const attacker = "203.0.113.9:40000"
	for i := range 20 {
		if got := signinFrom(srv, attacker, fmt.Sprintf("guess-%02d", i), "nope"); got != http.StatusUnauthorized {
			t.Fatalf("failure %d from one address: status %d, want 401", i+1, got)
		}
	}
	if got := signinFrom(srv, attacker, "lena", testPassword); got != http.StatusTooManyRequests {
		t.Errorf("after 20 failures from one address, a fresh account's correct sign-in got %d, want 429", got)
	}
	if got := signinFrom(srv, "198.51.100.20:40000", "lena", testPassword); got != http.StatusSeeOther {
		t.Errorf("another address signing in got %d, want 303", got)
	}

	// A client on the internet that names itself a new address on every try.
	const spoofer = "203.0.113.77:40000"
	for i := range 20 {
		fake := fmt.Sprintf("192.0.2.%d", i+1)
		got := signinFrom(srv, spoofer, fmt.Sprintf("spoof-%02d", i), "nope",
			"X-Forwarded-For", fake, "X-Real-IP", fake, "True-Client-IP", fake)
		if got != http.StatusUnauthorized {
			t.Fatalf("spoofed failure %d: status %d, want 401", i+1, got)
		}
	}
	if got := signinFrom(srv, spoofer, "bea", testPassword, "X-Forwarded-For", "192.0.2.200", "X-Real-IP", "192.0.2.200"); got != http.StatusTooManyRequests {
		t.Errorf("forwarded-address headers from a non-proxy peer escaped the per-address limit: status %d, want 429", got)
	}

	// Behind a proxy on this machine, the address the proxy appended counts; whatever the
	// client put in front of it does not.
	const proxy = "127.0.0.1:50000"
	for i := range 20 {
		xff := fmt.Sprintf("192.0.2.%d, 198.51.100.7", i+1)
		if got := signinFrom(srv, proxy, fmt.Sprintf("proxied-%02d", i), "nope", "X-Forwarded-For", xff); got != http.StatusUnauthorized {
			t.Fatalf("proxied failure %d: status %d, want 401", i+1, got)
		}
	}
	if got := signinFrom(srv, proxy, "bea", testPassword, "X-Forwarded-For", "192.0.2.99, 198.51.100.7"); got != http.StatusTooManyRequests {
		t.Errorf("the client behind the proxy escaped the per-address limit: status %d, want 429", got)
	}
	if got := signinFrom(srv, proxy, "bea", testPassword, "X-Forwarded-For", "198.51.100.8"); got != http.StatusSeeOther {
		t.Errorf("another client behind the same proxy got %d, want 303", got)
	}
}

// A redirect target must stay on this site, whatever a browser makes of the text: tabs and
// line breaks are dropped by browsers, backslashes read as slashes.
func TestRedirectTargetsStayOnSite(t *testing.T) {
	for _, bad := range []string{
		"//evil.example", "/\\evil.example", "https://evil.example/", "javascript:alert(1)",
		"/\t/evil.example", "/\n/evil.example", "/\r\n/evil.example", "\t//evil.example",
		"/\\/evil.example", " //evil.example",
	} {
		if got := localPath(bad); got != "/" {
			t.Errorf("localPath(%q) = %q, want /", bad, got)
		}
	}
	for _, good := range []string{"/", "/projects/3/queue?min=2", "/projects/3/pairs/9/adjudicate?next=%2Fprojects%2F3%2Fqueue"} {
		if got := localPath(good); got != good {
			t.Errorf("localPath(%q) = %q, want it kept", good, got)
		}
	}

	// End to end: the sign-in form's next field.
	a := newTestApp(t)
	res := a.post(a.client(), "/signin", url.Values{"username": {"root"}, "password": {testPassword}, "next": {"/\t/evil.example"}})
	if loc := res.Header.Get("Location"); res.StatusCode != http.StatusSeeOther || loc != "/" {
		t.Errorf("sign-in with a tab-smuggled next: status %d, Location %q, want 303 to /", res.StatusCode, loc)
	}
}
