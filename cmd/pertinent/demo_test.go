package main

import (
	"bytes"
	"context"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"golang.org/x/crypto/bcrypt"

	"github.com/pertinent/pertinent/store"
)

func TestDemoCollectionShape(t *testing.T) {
	c := buildDemoCollection()
	perQuery := map[int]int{}
	grades := map[int]int{}
	for _, p := range c.pairs {
		perQuery[p.query]++
		grades[p.truth]++
	}
	if len(perQuery) < 12 {
		t.Errorf("%d queries, want at least 12", len(perQuery))
	}
	for q, n := range perQuery {
		if n < 15 || n > 25 {
			t.Errorf("query %s has %d candidates, want 15 to 25", demoQueries[q].id, n)
		}
	}
	for g := 0; g <= 4; g++ {
		if grades[g] == 0 {
			t.Errorf("no candidate deserves grade %d: the collection would not exercise the scale", g)
		}
	}
	if !reflect.DeepEqual(c, buildDemoCollection()) {
		t.Error("the demo collection differs between two builds; it must be fixed by its seed")
	}
}

func TestSeedDemoLoadsOnceAndPrintsAccounts(t *testing.T) {
	ctx := context.Background()
	st := openTestStore(t, filepath.Join(t.TempDir(), "demo.db"))
	first, err := seedDemo(ctx, st)
	if err != nil {
		t.Fatal(err)
	}
	second, err := seedDemo(ctx, st)
	if err != nil {
		t.Fatal(err)
	}
	if len(first) != len(demoPeople) || first[0].password == second[0].password {
		t.Errorf("each start should print every demo account with a fresh password")
	}
	for _, a := range second {
		if _, err := st.Authenticate(ctx, a.username, a.password); err != nil {
			t.Errorf("printed password of %s does not sign in: %v", a.username, err)
		}
	}
	p := testProject(t, st, demoProjectName)
	prog, err := st.ProjectProgress(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if prog.Pairs != len(buildDemoCollection().pairs) {
		t.Errorf("reusing the demo file duplicated or lost pairs: %d, want %d", prog.Pairs, len(buildDemoCollection().pairs))
	}
	if prog.Judgments == 0 || prog.Untouched == 0 {
		t.Errorf("demo should have a judging history and open work: %+v", prog)
	}
	// Every demo assessor has something left to judge.
	for _, a := range second {
		if a.role != store.RoleAssessor {
			continue
		}
		u, _ := st.UserByUsername(ctx, a.username)
		if _, err := st.NextPair(ctx, p.ID, u.ID); err != nil {
			t.Errorf("demo assessor %s gets no pair: %v", a.username, err)
		}
	}
}

func TestUserCommand(t *testing.T) {
	store.SetPasswordCost(bcrypt.MinCost)
	ctx := context.Background()
	db := filepath.Join(t.TempDir(), "u.db")
	var out, errb bytes.Buffer
	if err := run(ctx, []string{"user", "add", "--db", db, "--role", "lead", "--name", "Mara Quill", "mara"}, &out, &errb); err != nil {
		t.Fatal(err, errb.String())
	}
	if !strings.Contains(out.String(), "added lead mara with password ") {
		t.Fatalf("user add printed %q", out.String())
	}
	out.Reset()
	if err := run(ctx, []string{"user", "disable", "--db", db, "mara"}, &out, &errb); err != nil {
		t.Fatal(err)
	}
	out.Reset()
	if err := run(ctx, []string{"user", "list", "--db", db}, &out, &errb); err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(out.String(), "mara") || !strings.Contains(out.String(), "disabled") {
		t.Errorf("user list = %q, want mara shown as disabled", out.String())
	}
	if err := run(ctx, []string{"user", "add", "--db", db, "--role", "wizard", "zed"}, &out, &errb); err == nil {
		t.Error("an unknown role was accepted")
	}
}

func TestProjectCommand(t *testing.T) {
	store.SetPasswordCost(bcrypt.MinCost)
	ctx := context.Background()
	db := filepath.Join(t.TempDir(), "p.db")
	var out, errb bytes.Buffer
	for _, args := range [][]string{
		{"user", "add", "--db", db, "--role", "assessor", "oona"},
		{"project", "create", "--db", db, "--name", "Lamp search", "--judgments", "2"},
		{"project", "add", "--db", db, "--project", "Lamp search", "--user", "oona"},
		{"project", "list", "--db", db},
	} {
		if err := run(ctx, args, &out, &errb); err != nil {
			t.Fatalf("%v: %v %s", args, err, errb.String())
		}
	}
	if !strings.Contains(out.String(), "Lamp search") || !strings.Contains(out.String(), "oona is now assessor") {
		t.Errorf("output: %s", out.String())
	}
	st := openTestStore(t, db)
	p, err := st.ProjectByName(ctx, "Lamp search")
	if err != nil || p.JudgmentsPerPair != 2 {
		t.Fatalf("project %+v, %v", p, err)
	}
	u, _ := st.UserByUsername(ctx, "oona")
	if role, ok, _ := st.MemberRole(ctx, p.ID, u.ID); !ok || role != store.RoleAssessor {
		t.Errorf("oona's role %q, member %v", role, ok)
	}
	if err := run(ctx, []string{"project", "add", "--db", db, "--project", "Lamp search", "--user", "nobody"}, &out, &errb); err == nil {
		t.Error("adding an unknown account succeeded")
	}
}
