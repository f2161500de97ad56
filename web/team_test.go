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

func TestLeadManagesAssessorsOnly(t *testing.T) {
	a := newTestApp(t)
	ctx := context.Background()
	c := a.signIn("lena")
	base := fmt.Sprintf("/projects/%d/team", a.project.ID)
	g := 3
	if _, err := a.store.Submit(ctx, store.Submission{PairID: a.pairs[0], UserID: a.users["amir"].ID, Grade: &g}); err != nil {
		t.Fatal(err)
	}

	a.postOK(c, base, url.Values{"username": {"cyd"}})
	if role, ok, _ := a.store.MemberRole(ctx, a.project.ID, a.users["cyd"].ID); !ok || role != store.RoleAssessor {
		t.Errorf("cyd after being added: %q %v, want assessor", role, ok)
	}
	if e := wantAudit(t, a, "member.set", "lena"); e.ProjectID != a.project.ID || e.TargetName != "cyd" {
		t.Errorf("audit of the addition = %+v", e)
	}

	a.postOK(c, fmt.Sprintf("%s/%d/remove", base, a.users["amir"].ID), nil)
	if _, ok, _ := a.store.MemberRole(ctx, a.project.ID, a.users["amir"].ID); ok {
		t.Error("amir is still a member after removal")
	}
	wantAudit(t, a, "member.remove", "lena")
	if h, _ := a.store.JudgmentHistory(ctx, a.pairs[0], a.users["amir"].ID); len(h) != 1 || !h[0].Current {
		t.Errorf("a removed assessor's judgment is gone: %+v", h)
	}
	if _, err := a.store.NextPair(ctx, a.project.ID, a.users["amir"].ID); store.ErrorCode(err) != store.CodeDenied {
		t.Errorf("a removed assessor is still given pairs: %v", err)
	}

	// A lead adds no leads, does not demote one, and removes none.
	before := auditCount(t, a)
	for _, ac := range []adminCase{
		{"POST", base, url.Values{"username": {"root"}, "role": {"lead"}}},
		{"POST", base, url.Values{"username": {"lena"}, "role": {"assessor"}}},
		{"POST", fmt.Sprintf("%s/%d/remove", base, a.users["lena"].ID), nil},
	} {
		if got := a.do(c, ac); got != http.StatusForbidden {
			t.Errorf("lead %s %v: status %d, want 403", ac.path, ac.form, got)
		}
	}
	if auditCount(t, a) != before {
		t.Error("refused team changes were recorded")
	}
	// Unknown accounts are refused on the form.
	res := a.post(c, base, url.Values{"username": {"nobody"}})
	if res.StatusCode != http.StatusBadRequest || !strings.Contains(readAll(t, res), "no account named nobody") {
		t.Errorf("adding an unknown account: status %d", res.StatusCode)
	}

	// An admin adds a lead; an assessor account cannot lead.
	admin := a.signIn("root")
	if res := a.post(admin, base, url.Values{"username": {"bea"}, "role": {"lead"}}); res.StatusCode != http.StatusBadRequest {
		t.Errorf("assessor account as lead: status %d, want 400", res.StatusCode)
	}
	lead2, err := a.store.CreateUser(ctx, "lars", "", store.RoleLead, testPassword)
	if err != nil {
		t.Fatal(err)
	}
	a.postOK(admin, base, url.Values{"username": {"lars"}, "role": {"lead"}})
	if role, _, _ := a.store.MemberRole(ctx, a.project.ID, lead2.ID); role != store.RoleLead {
		t.Errorf("lars is %q, want lead", role)
	}
	wantAudit(t, a, "member.set", "root")
}

func TestTeamPageTeachesWhenEmpty(t *testing.T) {
	a := newTestApp(t)
	c := a.signIn("root")
	res := a.postOK(c, "/admin/projects", url.Values{"name": {"Ladles & spoons"}})
	settings := a.follow(c, res)
	p := a.projectByName("Ladles & spoons")
	for _, want := range []string{`data-empty="pairs"`, `pertinent import pairs --db FILE --project "Ladles &amp; spoons" pairs.csv`,
		"<strong>Import</strong> on the project's page", `data-empty="assessors"`, fmt.Sprintf(`href="/projects/%d/team"`, p.ID)} {
		if !strings.Contains(settings, want) {
			t.Errorf("a new project's settings page lacks %q", want)
		}
	}
	_, team := a.get(c, fmt.Sprintf("/projects/%d/team", p.ID))
	if !strings.Contains(team, `data-empty="assessors"`) {
		t.Error("the team page of a project without assessors does not say how to add them")
	}
	_, overview := a.get(c, fmt.Sprintf("/projects/%d/overview", p.ID))
	if !strings.Contains(overview, `data-empty="pairs"`) {
		t.Error("the overview of a project without pairs does not say how to import them")
	}
	// A project with pairs and assessors shows neither.
	_, full := a.get(c, fmt.Sprintf("/projects/%d/settings", a.project.ID))
	if strings.Contains(full, "data-empty") {
		t.Error("a project with pairs and assessors shows an empty state")
	}
}
