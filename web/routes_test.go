package web

import (
	"context"
	"fmt"
	"net/http"
	"net/url"
	"strings"
	"testing"

	"github.com/go-chi/chi/v5"
)

// access is who a route is for.
type access int

const (
	public       access = iota // anyone, signed in or not
	signedIn                   // any signed-in account
	projectJudge               // the project's assessors
	projectLead                // the project's leads, and admins
	adminOnly                  // admins
	apiToken                   // bearer tokens only: a cookie session must not open it
	// Routes that check credentials in the form itself answer 401 or 403 to a wrong
	// password, whoever asks; the empty form here is such a wrong password.
	publicCredentials
	signedInCredentials
)

// routeAccess lists every route the router registers. A route added without an entry here
// fails TestEveryRouteEnforcesItsRoles, so nobody can add a page and forget to decide who
// may open it.
var routeAccess = map[string]access{
	"GET /healthz":                                                   public,
	"GET /signin":                                                    public,
	"POST /signin":                                                   publicCredentials,
	"GET /set-password":                                              public,
	"POST /set-password":                                             public,
	"GET /set-password/done":                                         public,
	"* /static/*":                                                    public,
	"POST /signout":                                                  signedIn,
	"GET /":                                                          signedIn,
	"GET /account":                                                   signedIn,
	"POST /account/password":                                         signedInCredentials,
	"GET /account/tokens":                                            signedIn,
	"POST /account/tokens":                                           signedIn,
	"POST /account/tokens/{token}/revoke":                            signedIn,
	"GET /projects/{project}/judge":                                  projectJudge,
	"POST /projects/{project}/judge":                                 projectJudge,
	"GET /projects/{project}/calibration":                            projectJudge,
	"POST /projects/{project}/calibration":                           projectJudge,
	"GET /projects/{project}/mine":                                   projectJudge,
	"POST /projects/{project}/mine":                                  projectJudge,
	"POST /projects/{project}/undo":                                  projectJudge,
	"GET /projects/{project}/compare":                                projectJudge,
	"POST /projects/{project}/compare":                               projectJudge,
	"POST /projects/{project}/compare/undo":                          projectJudge,
	"GET /projects/{project}/feedback":                               projectJudge,
	"GET /projects/{project}/overview":                               projectLead,
	"GET /projects/{project}/agreement":                              projectLead,
	"GET /projects/{project}/assessors":                              projectLead,
	"GET /projects/{project}/assessors/{user}":                       projectLead,
	"GET /projects/{project}/assessor-effects":                       projectLead,
	"GET /projects/{project}/sources":                                projectLead,
	"POST /projects/{project}/sources/prelabels":                     projectLead,
	"GET /projects/{project}/calibration-scores":                     projectLead,
	"GET /projects/{project}/preferences":                            projectLead,
	"GET /projects/{project}/preference-pairs.csv":                   projectLead,
	"GET /projects/{project}/queue":                                  projectLead,
	"GET /projects/{project}/pairs/{pair}/adjudicate":                projectLead,
	"POST /projects/{project}/pairs/{pair}/adjudicate":               projectLead,
	"GET /projects/{project}/settings":                               projectLead,
	"POST /projects/{project}/settings":                              projectLead,
	"POST /projects/{project}/scale":                                 projectLead,
	"POST /projects/{project}/task":                                  projectLead,
	"POST /projects/{project}/archive":                               projectLead,
	"POST /projects/{project}/restore":                               projectLead,
	"GET /projects/{project}/guidelines":                             projectLead,
	"POST /projects/{project}/guidelines":                            projectLead,
	"GET /projects/{project}/guidelines/{revision}":                  projectLead,
	"GET /projects/{project}/team":                                   projectLead,
	"POST /projects/{project}/team":                                  projectLead,
	"POST /projects/{project}/team/{user}/remove":                    projectLead,
	"GET /projects/{project}/import":                                 projectLead,
	"POST /projects/{project}/import":                                projectLead,
	"GET /projects/{project}/import/{job}":                           projectLead,
	"GET /projects/{project}/export":                                 projectLead,
	"GET /projects/{project}/export.zip":                             projectLead,
	"GET /projects/{project}/evaluate":                               projectLead,
	"POST /projects/{project}/evaluate":                              projectLead,
	"GET /projects/{project}/evaluations/{evaluation}":               projectLead,
	"GET /projects/{project}/evaluations/{evaluation}/per-query.csv": projectLead,
	"POST /projects/{project}/evaluations/{evaluation}/send":         projectLead,
	"GET /projects/{project}/plan":                                   projectLead,
	"POST /projects/{project}/plan":                                  projectLead,
	"POST /projects/{project}/plan/runs":                             projectLead,
	"GET /projects/{project}/plan/{design}":                          projectLead,
	"POST /projects/{project}/plan/{design}/advance":                 projectLead,
	"GET /admin/users":                                               adminOnly,
	"POST /admin/users":                                              adminOnly,
	"POST /admin/users/{user}/disable":                               adminOnly,
	"POST /admin/users/{user}/enable":                                adminOnly,
	"POST /admin/users/{user}/password-link":                         adminOnly,
	"GET /admin/projects/new":                                        adminOnly,
	"POST /admin/projects":                                           adminOnly,
	"GET /admin/audit":                                               adminOnly,
	"GET /admin/audit.csv":                                           adminOnly,
	"GET /api/v1/projects":                                           apiToken,
	"GET /api/v1/projects/{project}/export":                          apiToken,
	"POST /api/v1/projects/{project}/evaluate":                       apiToken,
	"GET /api/v1/projects/{project}/designs/{design}":                apiToken,
	"GET /api/v1/projects/{project}/designs/{design}/queries":        apiToken,
	"GET /api/v1/projects/{project}/assessor-effects":                apiToken,
	"GET /api/v1/projects/{project}/sources":                         apiToken,
	"GET /api/v1/projects/{project}/calibration":                     apiToken,
	"POST /api/v1/projects/{project}/import":                         apiToken,
	"GET /api/v1/projects/{project}/preferences":                     apiToken,
	"GET /api/v1/projects/{project}/preference-pairs":                apiToken,
}

// TestEveryRouteEnforcesItsRoles walks the router itself and requests every route as an
// anonymous visitor, a project assessor, a project lead, an admin, and an assessor of another
// project, each with a fresh sign-in, and checks the status against the route's access.
func TestEveryRouteEnforcesItsRoles(t *testing.T) {
	a := newTestApp(t)
	srv := a.server.Config.Handler.(*Server)
	g, err := a.store.CurrentGuidelines(context.Background(), a.project.ID)
	if err != nil {
		t.Fatal(err)
	}
	params := strings.NewReplacer(
		"{project}", fmt.Sprint(a.project.ID),
		"{pair}", fmt.Sprint(a.pairs[0]),
		"{user}", fmt.Sprint(a.users["bea"].ID),
		"{revision}", fmt.Sprint(g.ID),
		"{token}", "999999", "{evaluation}", "999999", "{design}", "999999", "{job}", "nothing",
		"*", "app.js",
	)
	type route struct{ method, pattern string }
	var routes []route
	seen := map[string]bool{}
	chi.Walk(srv.Router(), func(method, pattern string, _ http.Handler, _ ...func(http.Handler) http.Handler) error {
		key := method + " " + pattern
		if strings.HasPrefix(pattern, "/static/") {
			key = "* /static/*"
			if method != http.MethodGet {
				return nil
			}
		}
		if _, ok := routeAccess[key]; !ok {
			t.Errorf("route %s has no entry in routeAccess: decide who may open it", key)
			return nil
		}
		seen[key] = true
		routes = append(routes, route{method, pattern})
		return nil
	})
	for key := range routeAccess {
		if !seen[key] {
			t.Errorf("routeAccess lists %s, which the router does not register", key)
		}
	}
	roles := []string{"anonymous", "amir", "lena", "root", "cyd"} // assessor, lead, admin, outsider
	for _, rt := range routes {
		path := params.Replace(rt.pattern)
		want := routeAccess[rt.method+" "+rt.pattern]
		if strings.HasPrefix(rt.pattern, "/static/") {
			want = public
		}
		for _, role := range roles {
			c := a.client()
			if role != "anonymous" {
				c = a.signIn(role)
			}
			var res *http.Response
			if rt.method == http.MethodGet {
				res, _ = a.get(c, path)
			} else {
				res = a.post(c, path, url.Values{})
			}
			if msg := judgeStatus(want, role, rt.method, res.StatusCode); msg != "" {
				t.Errorf("%s %s as %s: status %d: %s", rt.method, path, role, res.StatusCode, msg)
			}
		}
	}
}

// judgeStatus explains what is wrong with a status, or returns "".
func judgeStatus(want access, role, method string, status int) string {
	if status >= 500 {
		return "server error"
	}
	denied := func(codes ...int) string {
		for _, c := range codes {
			if status == c {
				return ""
			}
		}
		return fmt.Sprintf("want one of %v", codes)
	}
	allowed := func() string {
		if status == http.StatusUnauthorized || status == http.StatusForbidden {
			return "refused a caller the route is for"
		}
		if status == http.StatusSeeOther && method == http.MethodGet && role != "anonymous" {
			return "" // e.g. a redirect to the page's canonical form
		}
		return ""
	}
	anonymous := func() string {
		if method == http.MethodGet {
			return denied(http.StatusSeeOther) // to the sign-in page
		}
		return denied(http.StatusUnauthorized)
	}
	switch want {
	case public:
		return allowed()
	case publicCredentials:
		return ""
	case apiToken:
		return denied(http.StatusUnauthorized)
	}
	if role == "anonymous" {
		return anonymous()
	}
	switch want {
	case signedIn:
		return allowed()
	case signedInCredentials:
		return ""
	case adminOnly:
		if role == "root" {
			return allowed()
		}
		return denied(http.StatusForbidden)
	}
	// Project routes: outsiders must not even learn the project exists.
	if role == "cyd" {
		return denied(http.StatusNotFound)
	}
	switch want {
	case projectJudge:
		if role == "amir" {
			return allowed()
		}
		return denied(http.StatusForbidden)
	case projectLead:
		if role == "lena" || role == "root" {
			return allowed()
		}
		return denied(http.StatusForbidden)
	}
	return "unknown access class"
}
