package web

import (
	"context"
	"net/http"
	"net/url"
	"strings"
	"testing"

	"golang.org/x/net/html"

	"github.com/pertinent/pertinent/store"
)

// lastAudit returns the newest audit event.
func lastAudit(t *testing.T, a *testApp) store.AuditEvent {
	t.Helper()
	ev, _, err := a.store.AuditEvents(context.Background(), store.AuditFilter{Limit: 1})
	if err != nil || len(ev) == 0 {
		t.Fatalf("no audit event: %v", err)
	}
	return ev[0]
}

// wantAudit checks that the newest audit event is the given action by the given user.
func wantAudit(t *testing.T, a *testApp, action, actor string) store.AuditEvent {
	t.Helper()
	e := lastAudit(t, a)
	if e.Action != action || e.Actor != actor {
		t.Errorf("newest audit event = %s by %q (%s %s), want %s by %q", e.Action, e.Actor, e.Target, e.Detail, action, actor)
	}
	return e
}

// postOK posts a form and requires a 303 redirect, as every administrative form answers.
func (a *testApp) postOK(c *http.Client, path string, form url.Values) *http.Response {
	a.t.Helper()
	res := a.post(c, path, form)
	if res.StatusCode != http.StatusSeeOther {
		a.t.Fatalf("POST %s: status %d, want 303:\n%s", path, res.StatusCode, readAll(a.t, res))
	}
	return res
}

// follow fetches the page a redirect points at.
func (a *testApp) follow(c *http.Client, res *http.Response) string {
	a.t.Helper()
	r, body := a.get(c, res.Header.Get("Location"))
	if r.StatusCode != http.StatusOK {
		a.t.Fatalf("GET %s after redirect: status %d", res.Header.Get("Location"), r.StatusCode)
	}
	return body
}

func (a *testApp) projectByName(name string) store.Project {
	a.t.Helper()
	p, err := a.store.ProjectByName(context.Background(), name)
	if err != nil {
		a.t.Fatal(err)
	}
	return p
}

// parseHTML parses a page, failing the test on malformed input.
func parseHTML(t testing.TB, body string) *html.Node {
	t.Helper()
	doc, err := html.Parse(strings.NewReader(body))
	if err != nil {
		t.Fatal(err)
	}
	return doc
}

// findByID returns the element with the given id, or nil.
func findByID(n *html.Node, id string) *html.Node {
	if n.Type == html.ElementNode {
		for _, at := range n.Attr {
			if at.Key == "id" && at.Val == id {
				return n
			}
		}
	}
	for c := n.FirstChild; c != nil; c = c.NextSibling {
		if f := findByID(c, id); f != nil {
			return f
		}
	}
	return nil
}

// walk calls fn for every element under n, n included.
func walk(n *html.Node, fn func(*html.Node)) {
	if n.Type == html.ElementNode {
		fn(n)
	}
	for c := n.FirstChild; c != nil; c = c.NextSibling {
		walk(c, fn)
	}
}
