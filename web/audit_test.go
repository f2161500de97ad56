package web

import (
	"context"
	"encoding/csv"
	"fmt"
	"net/http"
	"net/url"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/pertinent/pertinent/store"
)

// Every administrative action, done through the browser, leaves its own audit row naming
// who did it; the trail page and its CSV show the same rows.
func TestEachActionIsAudited(t *testing.T) {
	a := newTestApp(t)
	root, lena := a.signIn("root"), a.signIn("lena")
	base := fmt.Sprintf("/projects/%d", a.project.ID)
	steps := []struct {
		c      *http.Client
		path   string
		form   url.Values
		action string
		actor  string
	}{
		{root, "/admin/projects", url.Values{"name": {"Jugs"}}, "project.create", "root"},
		{lena, base + "/settings", url.Values{"name": {"Kettles"}, "judgments_per_pair": {"2"}, "lease_minutes": {"10"}}, "project.settings", "lena"},
		{lena, base + "/scale", scaleForm("a", "b", "c", "d"), "scale.change", "lena"},
		{lena, base + "/scale", scaleForm("w", "x", "y", "z"), "scale.relabel", "lena"},
		{lena, base + "/guidelines", url.Values{"body": {"New text"}}, "guidelines.revise", "lena"},
		{lena, base + "/team", url.Values{"username": {"cyd"}}, "member.set", "lena"},
		{lena, fmt.Sprintf("%s/team/%d/remove", base, a.users["cyd"].ID), nil, "member.remove", "lena"},
		{lena, base + "/archive", nil, "project.archive", "lena"},
		{lena, base + "/restore", nil, "project.restore", "lena"},
		{root, "/admin/users", url.Values{"username": {"eve"}, "role": {"lead"}}, "password.link", "root"},
		{root, fmt.Sprintf("/admin/users/%d/disable", a.users["bea"].ID), nil, "user.disable", "root"},
		{root, fmt.Sprintf("/admin/users/%d/enable", a.users["bea"].ID), nil, "user.enable", "root"},
		{root, fmt.Sprintf("/admin/users/%d/password-link", a.users["bea"].ID), nil, "password.link", "root"},
		{lena, "/account/password", url.Values{"current": {testPassword}, "new": {"lena's new password"}, "repeat": {"lena's new password"}}, "password.change", "lena"},
	}
	start := auditCount(t, a)
	for _, s := range steps {
		a.postOK(s.c, s.path, s.form)
		wantAudit(t, a, s.action, s.actor)
	}
	ctx := context.Background()
	// Creating an account writes two rows in one transaction: the account, then its link.
	if ev, _, _ := a.store.AuditEvents(ctx, store.AuditFilter{Action: "user.create", Limit: 1}); len(ev) != 1 || ev[0].TargetName != "eve" || ev[0].Actor != "root" {
		t.Errorf("user.create row = %+v", ev)
	}
	if got := auditCount(t, a) - start; got != len(steps)+1 {
		t.Errorf("%d audit rows for %d actions (one writes two), want %d", got, len(steps), len(steps)+1)
	}
	// The command line's changes are recorded without an actor.
	if err := a.store.SetPassword(ctx, a.users["cyd"].ID, "set on the command line"); err != nil {
		t.Fatal(err)
	}
	if e := lastAudit(t, a); e.Action != "password.set" || e.ActorID != 0 || e.TargetName != "cyd" {
		t.Errorf("command-line password change audited as %+v", e)
	}
}

var auditRow = regexp.MustCompile(`<tr data-action="([^"]+)">`)

func TestAuditTrailFiltersAndPages(t *testing.T) {
	a := newTestApp(t)
	ctx := context.Background()
	root, lena := a.users["root"].ID, a.users["lena"].ID
	teapots := a.projectByName("Teapots")
	// 60 guideline revisions by lena on Kettles, 3 member changes by root on Teapots.
	for i := range 60 {
		if _, err := a.store.ReviseGuidelines(ctx, a.project.ID, fmt.Sprintf("version %d", i), lena); err != nil {
			t.Fatal(err)
		}
	}
	for _, u := range []string{"amir", "bea", "lena"} {
		if err := a.store.SetMember(ctx, teapots.ID, a.users[u].ID, store.RoleAssessor, root); err != nil {
			t.Fatal(err)
		}
	}
	c := a.signIn("root")
	rows := func(query string) ([]string, string) {
		t.Helper()
		res, body := a.get(c, "/admin/audit?"+query)
		if res.StatusCode != http.StatusOK {
			t.Fatalf("audit ?%s: status %d", query, res.StatusCode)
		}
		var out []string
		for _, m := range auditRow.FindAllStringSubmatch(body, -1) {
			out = append(out, m[1])
		}
		return out, body
	}
	got, body := rows(fmt.Sprintf("actor=%d&project=%d", lena, a.project.ID))
	if len(got) != 50 || !strings.Contains(body, `rel="next"`) || strings.Contains(body, `rel="prev"`) {
		t.Errorf("page 1 of lena's 60 revisions: %d rows, want 50 and a link to older ones", len(got))
	}
	got, body = rows(fmt.Sprintf("actor=%d&project=%d&page=2", lena, a.project.ID))
	if len(got) != 10 || strings.Contains(body, `rel="next"`) || !strings.Contains(body, `rel="prev"`) {
		t.Errorf("page 2: %d rows, want 10 and a link back", len(got))
	}
	for _, g := range got {
		if g != "guidelines.revise" {
			t.Errorf("lena's Kettles events include %s", g)
		}
	}
	// The paging links keep the filters.
	if !strings.Contains(body, fmt.Sprintf(`href="/admin/audit?actor=%d&amp;project=%d"`, lena, a.project.ID)) {
		t.Error("the link to newer events drops the filters")
	}
	if got, _ := rows(fmt.Sprintf("project=%d&action=member.set", teapots.ID)); len(got) != 4 {
		t.Errorf("member.set on Teapots: %d rows, want 4 (cyd at set-up and three more)", len(got))
	}
	today := time.Now().UTC().Format(time.DateOnly)
	tomorrow := time.Now().UTC().AddDate(0, 0, 1).Format(time.DateOnly)
	yesterday := time.Now().UTC().AddDate(0, 0, -1).Format(time.DateOnly)
	if got, _ := rows("action=member.set&from=" + today + "&to=" + today); len(got) != 7 {
		t.Errorf("today's member.set events: %d, want 7 (4 at set-up, 3 now)", len(got))
	}
	if got, _ := rows("from=" + tomorrow); len(got) != 0 {
		t.Errorf("events from tomorrow on: %d, want 0", len(got))
	}
	if got, _ := rows("to=" + yesterday); len(got) != 0 {
		t.Errorf("events up to yesterday: %d, want 0", len(got))
	}
	if res, _ := a.get(c, "/admin/audit?from=31/12/2025"); res.StatusCode != http.StatusBadRequest {
		t.Errorf("an unreadable date: status %d, want 400", res.StatusCode)
	}
}

func TestAuditCSVParsesBack(t *testing.T) {
	a := newTestApp(t)
	ctx := context.Background()
	lena := a.users["lena"].ID
	// A name with a comma, a quote and a leading "=" exercises quoting and formula defusing.
	if err := a.store.UpdateProject(ctx, a.project.ID, store.ProjectSettings{Name: `=Kettles, "the good ones"`, JudgmentsPerPair: 3, LeaseSeconds: 600}, lena); err != nil {
		t.Fatal(err)
	}
	if _, err := a.store.ReviseGuidelines(ctx, a.project.ID, "Line one\nline two", lena); err != nil {
		t.Fatal(err)
	}
	c := a.signIn("root")
	res, err := c.Get(a.server.URL + fmt.Sprintf("/admin/audit.csv?actor=%d", lena))
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	if res.StatusCode != http.StatusOK || !strings.HasPrefix(res.Header.Get("Content-Type"), "text/csv") ||
		!strings.Contains(res.Header.Get("Content-Disposition"), "attachment") {
		t.Fatalf("CSV: status %d, type %q, disposition %q", res.StatusCode, res.Header.Get("Content-Type"), res.Header.Get("Content-Disposition"))
	}
	records, err := csv.NewReader(res.Body).ReadAll()
	if err != nil {
		t.Fatalf("the CSV does not parse: %v", err)
	}
	want, _, _ := a.store.AuditEvents(ctx, store.AuditFilter{ActorID: lena})
	if len(records) != len(want)+1 || len(want) != 2 {
		t.Fatalf("CSV has %d records, want a header and %d rows", len(records), len(want))
	}
	if strings.Join(records[0], ",") != "id,at,actor,project,action,target,target_name,detail" {
		t.Errorf("header = %v", records[0])
	}
	for i, e := range want {
		r := records[i+1]
		if r[0] != fmt.Sprint(e.ID) || r[2] != "lena" || r[4] != e.Action {
			t.Errorf("row %d = %v, want event %+v", i, r, e)
		}
		if at, err := time.Parse(time.RFC3339, r[1]); err != nil || !at.Equal(e.At) {
			t.Errorf("row %d time %q does not read back as %v", i, r[1], e.At)
		}
	}
	if records[1][4] != "guidelines.revise" || records[2][4] != "project.settings" {
		t.Errorf("CSV order: %s then %s, want newest first", records[1][4], records[2][4])
	}
	if got := records[2][5]; got != `'=Kettles, "the good ones"` {
		t.Errorf("a target starting with = reads back as %q, want it quoted against formula use", got)
	}
	// Admins only.
	if res, _ := a.get(a.signIn("lena"), "/admin/audit.csv"); res.StatusCode != http.StatusForbidden {
		t.Errorf("a lead downloading the trail: status %d, want 403", res.StatusCode)
	}
}
