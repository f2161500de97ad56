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

type adminCase struct {
	method, path string
	form         url.Values
}

func (a *testApp) do(c *http.Client, ac adminCase) int {
	a.t.Helper()
	if ac.method == http.MethodGet {
		res, _ := a.get(c, ac.path)
		return res.StatusCode
	}
	return a.post(c, ac.path, ac.form).StatusCode
}

// projectCases are every page and action of a project's administration, with forms that
// succeed for someone allowed to use them.
func projectCases(p store.Project, assessor int64) []adminCase {
	base := fmt.Sprintf("/projects/%d", p.ID)
	scale := url.Values{}
	for _, l := range store.DefaultScale() {
		scale.Add("label", l.Label+" (reworded)")
		scale.Add("description", l.Description)
	}
	return []adminCase{
		{"GET", base + "/settings", nil},
		{"POST", base + "/settings", url.Values{"name": {p.Name}, "description": {"kettles for a shop"}, "judgments_per_pair": {"2"},
			"gold_percent": {"5"}, "lease_minutes": {"15"}, "allow_changes": {"on"}}},
		{"POST", base + "/scale", scale},
		{"POST", base + "/archive", nil},
		{"POST", base + "/restore", nil},
		{"GET", base + "/guidelines", nil},
		{"POST", base + "/guidelines", url.Values{"body": {"# Grade with care\n\nRead the whole page."}}},
		{"GET", base + "/team", nil},
		{"POST", base + "/team", url.Values{"username": {"cyd"}, "role": {"assessor"}}},
		{"POST", fmt.Sprintf("%s/team/%d/remove", base, assessor), nil},
	}
}

func adminCases(a *testApp) []adminCase {
	return []adminCase{
		{"GET", "/admin/users", nil},
		{"GET", "/admin/audit", nil},
		{"GET", "/admin/audit.csv", nil},
		{"GET", "/admin/projects/new", nil},
		{"POST", "/admin/projects", url.Values{"name": {"Jugs"}, "levels": {"5"}, "judgments_per_pair": {"3"}}},
		{"POST", "/admin/users", url.Values{"username": {"dora"}, "role": {"assessor"}}},
		{"POST", fmt.Sprintf("/admin/users/%d/password-link", a.users["amir"].ID), nil},
		{"POST", fmt.Sprintf("/admin/users/%d/disable", a.users["bea"].ID), nil},
		{"POST", fmt.Sprintf("/admin/users/%d/enable", a.users["bea"].ID), nil},
	}
}

func okStatus(method string) int {
	if method == http.MethodGet {
		return http.StatusOK
	}
	return http.StatusSeeOther
}

func auditCount(t *testing.T, a *testApp) int {
	t.Helper()
	ev, _, err := a.store.AuditEvents(context.Background(), store.AuditFilter{})
	if err != nil {
		t.Fatal(err)
	}
	return len(ev)
}

// Assessors get 403 on all of it; leads reach their own projects only (another project is
// 404, as if it did not exist); admins reach everything; refused requests change nothing.
func TestAdministrationRoleRules(t *testing.T) {
	for _, tc := range []struct {
		user                 string
		kettles, teapots, ad int // 0 means "allowed"
	}{
		{"amir", http.StatusForbidden, http.StatusNotFound, http.StatusForbidden},
		{"cyd", http.StatusNotFound, http.StatusForbidden, http.StatusForbidden},
		{"lena", 0, http.StatusNotFound, http.StatusForbidden},
		{"root", 0, 0, 0},
	} {
		t.Run(tc.user, func(t *testing.T) {
			a := newTestApp(t)
			c := a.signIn(tc.user)
			before := auditCount(t, a)
			check := func(cases []adminCase, want int) {
				for _, ac := range cases {
					w := want
					if w == 0 {
						w = okStatus(ac.method)
					}
					if got := a.do(c, ac); got != w {
						t.Errorf("%s %s %s: status %d, want %d", tc.user, ac.method, ac.path, got, w)
					}
				}
			}
			check(projectCases(a.project, a.users["bea"].ID), tc.kettles)
			check(projectCases(a.projectByName("Teapots"), a.users["cyd"].ID), tc.teapots)
			check(adminCases(a), tc.ad)
			if tc.kettles != 0 && tc.teapots != 0 && tc.ad != 0 {
				if after := auditCount(t, a); after != before {
					t.Errorf("refused requests of %s wrote %d audit events", tc.user, after-before)
				}
			}
		})
	}
}

func TestOnlyAdminsCreateProjects(t *testing.T) {
	a := newTestApp(t)
	form := url.Values{"name": {"Toasters"}, "description": {"two-slot toasters"}, "judgments_per_pair": {"2"}, "levels": {"3"}, "lead": {"lena"}}
	if res := a.post(a.signIn("lena"), "/admin/projects", form); res.StatusCode != http.StatusForbidden {
		t.Fatalf("lead creating a project: status %d, want 403", res.StatusCode)
	}
	if _, err := a.store.ProjectByName(context.Background(), "Toasters"); err == nil {
		t.Fatal("a refused creation made the project")
	}
	res := a.postOK(a.signIn("root"), "/admin/projects", form)
	p := a.projectByName("Toasters")
	if !strings.HasSuffix(res.Header.Get("Location"), fmt.Sprintf("/projects/%d/settings", p.ID)) {
		t.Errorf("creation redirects to %s, want the new project's settings", res.Header.Get("Location"))
	}
	if p.JudgmentsPerPair != 2 || p.Description != "two-slot toasters" {
		t.Errorf("created project = %+v", p)
	}
	scale, _ := a.store.Scale(context.Background(), p.ID)
	if len(scale) != 3 {
		t.Errorf("a 3-level project has %d levels", len(scale))
	}
	if role, ok, _ := a.store.MemberRole(context.Background(), p.ID, a.users["lena"].ID); !ok || role != store.RoleLead {
		t.Errorf("the lead named at creation is %q (member %v), want lead", role, ok)
	}
	ev, _, _ := a.store.AuditEvents(context.Background(), store.AuditFilter{ProjectID: p.ID})
	if len(ev) != 2 || ev[1].Action != "project.create" || ev[0].Action != "member.set" || ev[1].Actor != "root" {
		t.Errorf("audit of the creation = %+v, want project.create then member.set by root", ev)
	}
	// Duplicate names are refused with the form shown again.
	if res := a.post(a.signIn("root"), "/admin/projects", form); res.StatusCode != http.StatusConflict {
		t.Errorf("second project of the same name: status %d, want 409", res.StatusCode)
	}
}

func TestSettingsAreSavedAndAudited(t *testing.T) {
	a := newTestApp(t)
	c := a.signIn("lena")
	path := fmt.Sprintf("/projects/%d/settings", a.project.ID)
	res := a.postOK(c, path, url.Values{"name": {"Kettles and jugs"}, "description": {"small appliances"},
		"judgments_per_pair": {"4"}, "gold_percent": {"2.5"}, "lease_minutes": {"20"}})
	if body := a.follow(c, res); !strings.Contains(body, "Settings saved.") {
		t.Error("the settings page after saving does not say so")
	}
	p, _ := a.store.Project(context.Background(), a.project.ID)
	if p.Name != "Kettles and jugs" || p.Description != "small appliances" || p.JudgmentsPerPair != 4 ||
		p.GoldRate != 0.025 || p.LeaseSeconds != 1200 || p.AllowChanges {
		t.Errorf("saved project = %+v", p)
	}
	e := wantAudit(t, a, "project.settings", "lena")
	if e.ProjectID != a.project.ID || !strings.Contains(e.Detail, "judgments per pair: 3 → 4") || !strings.Contains(e.Detail, "assessors may change grades: true → false") {
		t.Errorf("audit detail %q does not say what changed", e.Detail)
	}
	for _, bad := range []url.Values{
		{"name": {""}, "judgments_per_pair": {"3"}, "lease_minutes": {"10"}},
		{"name": {"K"}, "judgments_per_pair": {"0"}, "lease_minutes": {"10"}},
		{"name": {"K"}, "judgments_per_pair": {"3"}, "lease_minutes": {"10"}, "gold_percent": {"150"}},
		{"name": {"K"}, "judgments_per_pair": {"three"}, "lease_minutes": {"10"}},
		{"name": {"Teapots"}, "judgments_per_pair": {"3"}, "lease_minutes": {"10"}},
	} {
		res := a.post(c, path, bad)
		if res.StatusCode != http.StatusBadRequest && res.StatusCode != http.StatusConflict {
			t.Errorf("settings %v: status %d, want 400 or 409", bad, res.StatusCode)
		}
		if body := readAll(t, res); !strings.Contains(body, `class="error"`) {
			t.Errorf("refused settings %v: the form does not show why", bad)
		}
	}
	if p2, _ := a.store.Project(context.Background(), a.project.ID); p2 != p {
		t.Errorf("refused settings changed the project: %+v", p2)
	}
}

func scaleForm(labels ...string) url.Values {
	v := url.Values{}
	for _, l := range labels {
		v.Add("label", l)
		v.Add("description", "use for "+l)
	}
	return v
}

// Once grades are stored the number of levels is fixed; rewording is still accepted.
func TestScaleChangeIsRefusedOnceGraded(t *testing.T) {
	a := newTestApp(t)
	ctx := context.Background()
	c := a.signIn("lena")
	path := fmt.Sprintf("/projects/%d/scale", a.project.ID)
	// Before any grade, the number of levels may change.
	a.postOK(c, path, scaleForm("none", "some", "much"))
	wantAudit(t, a, "scale.change", "lena")
	if s, _ := a.store.Scale(ctx, a.project.ID); len(s) != 3 || s[2].Label != "much" || s[2].Description != "use for much" {
		t.Fatalf("scale after change = %+v", s)
	}
	g := 1
	if _, err := a.store.Submit(ctx, store.Submission{PairID: a.pairs[0], UserID: a.users["amir"].ID, Grade: &g}); err != nil {
		t.Fatal(err)
	}
	res := a.post(c, path, scaleForm("none", "some", "much", "all"))
	body := readAll(t, res)
	if res.StatusCode != http.StatusConflict {
		t.Fatalf("adding a level after a grade was stored: status %d, want 409", res.StatusCode)
	}
	if !strings.Contains(body, "silently") || !strings.Contains(body, "from 3 to 4 levels") {
		t.Errorf("the refusal does not explain itself:\n%s", body)
	}
	if s, _ := a.store.Scale(ctx, a.project.ID); len(s) != 3 {
		t.Errorf("a refused change altered the scale to %d levels", len(s))
	}
	if e := lastAudit(t, a); e.Action != "scale.change" || strings.Contains(e.Detail, "all") {
		t.Errorf("a refused change was audited: %+v", e)
	}
	// Labels and descriptions alone may change.
	res = a.postOK(c, path, scaleForm("off", "partly", "fully"))
	if body := a.follow(c, res); !strings.Contains(body, "data-scale-locked") {
		t.Error("the settings page does not say the number of levels is fixed")
	}
	if s, _ := a.store.Scale(ctx, a.project.ID); len(s) != 3 || s[0].Label != "off" || s[1].Description != "use for partly" {
		t.Errorf("relabelled scale = %+v", s)
	}
	wantAudit(t, a, "scale.relabel", "lena")
	// An empty label is refused whatever the count.
	if res := a.post(c, path, scaleForm("off", " ", "fully")); res.StatusCode != http.StatusBadRequest {
		t.Errorf("empty label: status %d, want 400", res.StatusCode)
	}
}

func TestArchivedProjectIsReadOnlyUntilRestored(t *testing.T) {
	a := newTestApp(t)
	ctx := context.Background()
	c := a.signIn("lena")
	base := fmt.Sprintf("/projects/%d", a.project.ID)
	a.postOK(c, base+"/archive", nil)
	wantAudit(t, a, "project.archive", "lena")
	if p, _ := a.store.Project(ctx, a.project.ID); !p.Archived {
		t.Fatal("project not archived")
	}
	if _, err := a.store.NextPair(ctx, a.project.ID, a.users["amir"].ID); err != store.ErrNoWork {
		t.Errorf("an archived project still hands out pairs: %v", err)
	}
	for _, ac := range []adminCase{
		{"POST", base + "/guidelines", url.Values{"body": {"new"}}},
		{"POST", base + "/team", url.Values{"username": {"cyd"}}},
		{"POST", base + "/settings", url.Values{"name": {"K"}, "judgments_per_pair": {"3"}, "lease_minutes": {"10"}}},
	} {
		if got := a.do(c, ac); got != http.StatusConflict {
			t.Errorf("%s on an archived project: status %d, want 409", ac.path, got)
		}
	}
	// Still readable.
	if res, _ := a.get(c, base+"/overview"); res.StatusCode != http.StatusOK {
		t.Errorf("overview of an archived project: %d", res.StatusCode)
	}
	a.postOK(c, base+"/restore", nil)
	wantAudit(t, a, "project.restore", "lena")
	if _, err := a.store.NextPair(ctx, a.project.ID, a.users["amir"].ID); err != nil {
		t.Errorf("a restored project hands out no pairs: %v", err)
	}
}
