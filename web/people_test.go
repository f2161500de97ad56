package web

import (
	"context"
	"fmt"
	"html"
	"net/http"
	"net/url"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/pertinent/pertinent/internal/testclock"
)

var linkField = regexp.MustCompile(`class="link-field" readonly value="([^"]+)"`)

// issuedLinks reads the one-time links shown on a page, as paths on the test server.
func issuedLinks(t *testing.T, body string) []string {
	t.Helper()
	var out []string
	for _, m := range linkField.FindAllStringSubmatch(body, -1) {
		u, err := url.Parse(html.UnescapeString(m[1]))
		if err != nil || u.Path != "/set-password" || u.Query().Get("token") == "" {
			t.Fatalf("issued link %q is not a set-password link", m[1])
		}
		out = append(out, u.RequestURI())
	}
	return out
}

func (a *testApp) signInWith(name, password string) int {
	a.t.Helper()
	return a.post(a.client(), "/signin", url.Values{"username": {name}, "password": {password}}).StatusCode
}

func TestAdminCreatesAccountWithOneTimeLink(t *testing.T) {
	a := newTestApp(t)
	root := a.signIn("root")
	res := a.postOK(root, "/admin/users", url.Values{"username": {"dora"}, "display_name": {"Dora M."}, "role": {"assessor"}})
	wantAudit(t, a, "password.link", "root")
	page := a.follow(root, res)
	links := issuedLinks(t, page)
	if len(links) != 1 || !strings.Contains(page, "One-time link for dora") {
		t.Fatalf("the People page shows %d links after creating dora", len(links))
	}
	if _, again := a.get(root, "/admin/users"); len(issuedLinks(t, again)) != 0 {
		t.Error("the link is shown a second time")
	}
	if a.signInWith("dora", "") != http.StatusUnauthorized {
		t.Error("an account without a password signs in")
	}

	holder := a.client()
	res2, body := a.get(holder, links[0])
	if res2.StatusCode != http.StatusOK || !strings.Contains(body, "dora") {
		t.Fatalf("the link page: status %d", res2.StatusCode)
	}
	if res2.Header.Get("Referrer-Policy") != "no-referrer" {
		t.Error("the link page may leak its token in a Referer header")
	}
	token := strings.TrimPrefix(links[0], "/set-password?token=")
	if r := a.post(holder, "/set-password", url.Values{"token": {token}, "new": {"a fine new password"}, "repeat": {"another password"}}); r.StatusCode != http.StatusBadRequest {
		t.Errorf("differing passwords: status %d, want 400", r.StatusCode)
	}
	if r := a.post(holder, "/set-password", url.Values{"token": {token}, "new": {"short"}, "repeat": {"short"}}); r.StatusCode != http.StatusBadRequest {
		t.Errorf("too short a password: status %d, want 400", r.StatusCode)
	}
	r := a.post(holder, "/set-password", url.Values{"token": {token}, "new": {"a fine new password"}, "repeat": {"a fine new password"}})
	if r.StatusCode != http.StatusSeeOther || r.Header.Get("Location") != "/set-password/done" {
		t.Fatalf("setting the password: status %d to %s", r.StatusCode, r.Header.Get("Location"))
	}
	wantAudit(t, a, "password.link_used", "dora")
	if a.signInWith("dora", "a fine new password") != http.StatusSeeOther {
		t.Error("dora cannot sign in with the password she chose")
	}
	// The link works once.
	if r, _ := a.get(a.client(), links[0]); r.StatusCode != http.StatusNotFound {
		t.Errorf("a spent link opens: status %d, want 404", r.StatusCode)
	}
	if r := a.post(a.client(), "/set-password", url.Values{"token": {token}, "new": {"taken over password"}, "repeat": {"taken over password"}}); r.StatusCode != http.StatusNotFound {
		t.Errorf("a spent link sets a password: status %d, want 404", r.StatusCode)
	}
	if a.signInWith("dora", "taken over password") == http.StatusSeeOther {
		t.Error("a spent link changed the password")
	}
	u, _ := a.store.UserByUsername(context.Background(), "dora")
	if u.DisplayName != "Dora M." || u.Role != "assessor" {
		t.Errorf("created account = %+v", u)
	}
	// A taken username is refused on the form.
	if r := a.post(root, "/admin/users", url.Values{"username": {"DORA"}, "role": {"lead"}}); r.StatusCode != http.StatusConflict {
		t.Errorf("a taken username: status %d, want 409", r.StatusCode)
	}
}

func TestPasswordLinkExpires(t *testing.T) {
	a := newTestApp(t)
	clock := testclock.New(time.Now())
	a.store.SetClock(clock.Now)
	root := a.signIn("root")
	issue := func() string {
		res := a.postOK(root, fmt.Sprintf("/admin/users/%d/password-link", a.users["amir"].ID), nil)
		links := issuedLinks(t, a.follow(root, res))
		if len(links) != 1 {
			t.Fatalf("%d links shown after issuing one", len(links))
		}
		return links[0]
	}
	link := issue()
	wantAudit(t, a, "password.link", "root")
	clock.Advance(23 * time.Hour)
	if r, _ := a.get(a.client(), link); r.StatusCode != http.StatusOK {
		t.Fatalf("a link 23 hours old: status %d, want 200", r.StatusCode)
	}
	clock.Advance(2 * time.Hour)
	r, body := a.get(a.client(), link)
	if r.StatusCode != http.StatusNotFound || !strings.Contains(body, "expired") {
		t.Errorf("a link 25 hours old: status %d, want 404 saying it expired", r.StatusCode)
	}
	token := strings.TrimPrefix(link, "/set-password?token=")
	if r := a.post(a.client(), "/set-password", url.Values{"token": {token}, "new": {"too late password"}, "repeat": {"too late password"}}); r.StatusCode != http.StatusNotFound {
		t.Errorf("an expired link sets a password: status %d, want 404", r.StatusCode)
	}
	if a.signInWith("amir", testPassword) != http.StatusSeeOther {
		t.Error("an expired link changed the password")
	}
	// A newer link replaces an older unused one. Root's sign-in of 25 hours ago has ended
	// on the same clock: sign in again.
	root = a.signIn("root")
	first := issue()
	second := issue()
	if r, _ := a.get(a.client(), first); r.StatusCode != http.StatusNotFound {
		t.Errorf("the older of two links still opens: status %d", r.StatusCode)
	}
	if r, _ := a.get(a.client(), second); r.StatusCode != http.StatusOK {
		t.Errorf("the newer link: status %d", r.StatusCode)
	}
}

func TestDisablingEndsSessionsAtOnce(t *testing.T) {
	a := newTestApp(t)
	ctx := context.Background()
	amir := a.signIn("amir")
	pair := shownPair(t, a, amir)
	a.post(amir, fmt.Sprintf("/projects/%d/judge", a.project.ID), url.Values{"pair": {fmt.Sprint(pair)}, "grade": {"2"}})
	root := a.signIn("root")
	path := fmt.Sprintf("/admin/users/%d", a.users["amir"].ID)

	a.postOK(root, path+"/disable", nil)
	wantAudit(t, a, "user.disable", "root")
	if r, _ := a.get(amir, "/"); r.StatusCode != http.StatusSeeOther || !strings.HasPrefix(r.Header.Get("Location"), "/signin") {
		t.Errorf("a disabled account's open session: status %d, want a redirect to sign in", r.StatusCode)
	}
	if a.signInWith("amir", testPassword) != http.StatusUnauthorized {
		t.Error("a disabled account signs in")
	}
	if h, _ := a.store.JudgmentHistory(ctx, pair, a.users["amir"].ID); len(h) != 1 {
		t.Errorf("a disabled assessor's judgments: %d, want 1", len(h))
	}
	if r := a.post(root, path+"/password-link", nil); r.StatusCode != http.StatusConflict {
		t.Errorf("a link for a disabled account: status %d, want 409", r.StatusCode)
	}

	a.postOK(root, path+"/enable", nil)
	wantAudit(t, a, "user.enable", "root")
	if r, _ := a.get(amir, "/"); r.StatusCode != http.StatusSeeOther {
		t.Error("enabling brought an ended session back")
	}
	if a.signInWith("amir", testPassword) != http.StatusSeeOther {
		t.Error("a re-enabled account cannot sign in")
	}
	// An admin cannot lock themselves out.
	if r := a.post(root, fmt.Sprintf("/admin/users/%d/disable", a.users["root"].ID), nil); r.StatusCode != http.StatusConflict {
		t.Errorf("disabling oneself: status %d, want 409", r.StatusCode)
	}
}

func TestChangeOwnPassword(t *testing.T) {
	a := newTestApp(t)
	here, elsewhere := a.signIn("bea"), a.signIn("bea")
	change := func(current, next, repeat string) *http.Response {
		return a.post(here, "/account/password", url.Values{"current": {current}, "new": {next}, "repeat": {repeat}})
	}
	if r := change("not my password", "brand new password", "brand new password"); r.StatusCode != http.StatusForbidden {
		t.Errorf("wrong current password: status %d, want 403", r.StatusCode)
	}
	if r := change(testPassword, "brand new password", "brand new passw0rd"); r.StatusCode != http.StatusBadRequest {
		t.Errorf("differing new passwords: status %d, want 400", r.StatusCode)
	}
	if a.signInWith("bea", testPassword) != http.StatusSeeOther {
		t.Fatal("a refused change altered the password")
	}
	res := change(testPassword, "brand new password", "brand new password")
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("changing the password: status %d", res.StatusCode)
	}
	wantAudit(t, a, "password.change", "bea")
	if body := a.follow(here, res); !strings.Contains(body, "Password changed.") {
		t.Error("this browser lost its session or was not told")
	}
	if r, _ := a.get(elsewhere, "/"); r.StatusCode != http.StatusSeeOther {
		t.Error("the other session survived a password change")
	}
	if a.signInWith("bea", testPassword) != http.StatusUnauthorized || a.signInWith("bea", "brand new password") != http.StatusSeeOther {
		t.Error("the new password is not the one that works")
	}
}
