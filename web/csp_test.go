package web

import (
	"fmt"
	"strings"
	"testing"

	"golang.org/x/net/html"
)

// The Content-Security-Policy forbids inline script and style, so no administration page
// may carry an inline script, a style attribute or an event-handler attribute.
func TestAdministrationPagesNeedNoInlineScriptOrStyle(t *testing.T) {
	a := newTestApp(t)
	c := a.signIn("root")
	p := a.project.ID
	hist, _ := a.store.GuidelineHistory(t.Context(), p)
	for _, path := range []string{
		fmt.Sprintf("/projects/%d/settings", p), fmt.Sprintf("/projects/%d/settings?levels=7", p),
		fmt.Sprintf("/projects/%d/guidelines", p), fmt.Sprintf("/projects/%d/guidelines/%d", p, hist[0].ID),
		fmt.Sprintf("/projects/%d/team", p), fmt.Sprintf("/projects/%d/overview", p),
		"/admin/users", "/admin/audit", "/admin/projects/new", "/account", "/",
	} {
		res, body := a.get(c, path)
		if res.StatusCode != 200 {
			t.Errorf("GET %s: status %d", path, res.StatusCode)
			continue
		}
		walk(parseHTML(t, body), func(e *html.Node) {
			if e.Data == "script" && e.FirstChild != nil {
				t.Errorf("%s: inline script", path)
			}
			if e.Data == "style" {
				t.Errorf("%s: inline style element", path)
			}
			for _, at := range e.Attr {
				if at.Key == "style" || strings.HasPrefix(at.Key, "on") {
					t.Errorf("%s: <%s %s=%q>", path, e.Data, at.Key, at.Val)
				}
			}
		})
		if path == fmt.Sprintf("/projects/%d/settings?levels=7", p) && strings.Count(body, `name="label"`) != 7 {
			t.Errorf("asking for 7 levels shows %d label fields", strings.Count(body, `name="label"`))
		}
	}
}
