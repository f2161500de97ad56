package main

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"net/http/cookiejar"
	"net/http/httptest"
	"net/url"
	"os"
	"path/filepath"
	"strconv"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/export"
	"github.com/pertinent/pertinent/store"
	"github.com/pertinent/pertinent/web"
)

// prefDemoDB is the demo collection switched to preferences, its assessors having answered
// every comparison they were given (up to 200): the document with the smaller id is always
// the better one.
func prefDemoDB(t *testing.T) (string, *store.Store, store.Project) {
	t.Helper()
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "demo.db")
	st := openTestStore(t, path)
	if _, err := seedDemo(ctx, st); err != nil {
		t.Fatal(err)
	}
	p := testProject(t, st, demoProjectName)
	members, err := st.Members(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	var lead int64
	var assessors []int64
	for _, m := range members {
		if m.ProjectRole == store.RoleLead {
			lead = m.ID
		} else {
			assessors = append(assessors, m.ID)
		}
	}
	if err := st.SetTaskKind(ctx, p.ID, store.TaskPreference, nil, lead); err != nil {
		t.Fatal(err)
	}
	answered := 0
	for idle := 0; idle < len(assessors) && answered < 200; {
		idle = 0
		for _, u := range assessors {
			v, err := st.NextComparison(ctx, p.ID, u)
			if errors.Is(err, store.ErrNoWork) {
				idle++
				continue
			}
			if err != nil {
				t.Fatal(err)
			}
			outcome := "right"
			if v.Left.ExternalID < v.Right.ExternalID {
				outcome = "left"
			}
			if _, err := st.AnswerComparison(ctx, store.PreferenceSubmission{ComparisonID: v.ComparisonID, ProjectID: p.ID, UserID: u,
				LeftDoc: v.Left.ID, Outcome: outcome}); err != nil {
				t.Fatal(err)
			}
			answered++
		}
	}
	if answered == 0 {
		t.Fatal("the demo gives nothing to compare")
	}
	return path, st, p
}

// --refine-by-preferences refines the SVMlight labels and says so in the manifest and on
// stdout; within every query a higher final grade keeps higher labels.
func TestExportCommandRefinesByPreferences(t *testing.T) {
	path, _, _ := prefDemoDB(t)
	out := t.TempDir()
	var stdout, stderr bytes.Buffer
	if err := runExport(context.Background(), []string{"--db", path, "--project", demoProjectName, "--format", "svmlight", "--out", out, "--refine-by-preferences"}, &stdout, &stderr); err != nil {
		t.Fatalf("%v\n%s", err, stderr.String())
	}
	var m export.Manifest
	mb, _ := os.ReadFile(filepath.Join(out, "manifest.json"))
	if err := json.Unmarshal(mb, &m); err != nil || m.Refinement == nil || m.Refinement.Queries == 0 || m.Refinement.Documents < 2 {
		t.Fatalf("manifest %s (err %v)", mb, err)
	}
	if !strings.Contains(stdout.String(), "labels refined by preferences:") {
		t.Errorf("stdout does not say the labels were refined:\n%s", stdout.String())
	}
	plainDir := t.TempDir()
	if err := runExport(context.Background(), []string{"--db", path, "--project", demoProjectName, "--format", "svmlight", "--out", plainDir}, &stdout, &stderr); err != nil {
		t.Fatal(err)
	}
	refined, _ := os.ReadFile(filepath.Join(out, "all.svm"))
	plain, _ := os.ReadFile(filepath.Join(plainDir, "all.svm"))
	rl, pl := strings.Split(strings.TrimSpace(string(refined)), "\n"), strings.Split(strings.TrimSpace(string(plain)), "\n")
	if len(rl) != len(pl) || bytes.Equal(refined, plain) {
		t.Fatalf("refined and plain exports: %d and %d rows, equal %v", len(rl), len(pl), bytes.Equal(refined, plain))
	}
	type row struct{ grade, label int }
	byQuery := map[string][]row{}
	for i := range rl {
		var g, l int
		var q string
		fields, pf := strings.Fields(rl[i]), strings.Fields(pl[i])
		if fields[1] != pf[1] || fields[len(fields)-1] != pf[len(pf)-1] {
			t.Fatalf("row %d: %q against %q", i, rl[i], pl[i])
		}
		q = fields[1]
		if _, err := fmt.Sscan(pf[0], &g); err != nil {
			t.Fatal(err)
		}
		if _, err := fmt.Sscan(fields[0], &l); err != nil {
			t.Fatal(err)
		}
		byQuery[q] = append(byQuery[q], row{g, l})
	}
	for q, rows := range byQuery {
		for _, a := range rows {
			for _, b := range rows {
				if a.grade > b.grade && a.label <= b.label {
					t.Errorf("%s: grade %d got label %d, not above grade %d's %d", q, a.grade, a.label, b.grade, b.label)
				}
			}
		}
	}
}

// `export --format preferences` writes the training pairs the API gives, line for line, and
// the page's CSV byte for byte.
func TestExportCommandPreferencePairsEqualTheAPI(t *testing.T) {
	ctx := context.Background()
	path, st, p := prefDemoDB(t)
	out := t.TempDir()
	var stdout, stderr bytes.Buffer
	if err := runExport(ctx, []string{"--db", path, "--project", demoProjectName, "--format", "preferences", "--out", out}, &stdout, &stderr); err != nil {
		t.Fatalf("%v\n%s", err, stderr.String())
	}
	jl, err := os.ReadFile(filepath.Join(out, "preference-pairs.jsonl"))
	if err != nil {
		t.Fatal(err)
	}
	csvBody, err := os.ReadFile(filepath.Join(out, "preference-pairs.csv"))
	if err != nil {
		t.Fatal(err)
	}

	members, err := st.Members(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	var lead int64
	for _, m := range members {
		if m.ProjectRole == store.RoleLead {
			lead = m.ID
		}
	}
	token, _, err := st.CreateAPIToken(ctx, lead, "trainer")
	if err != nil {
		t.Fatal(err)
	}
	srv, err := web.New(ctx, st, web.Options{Logger: slog.New(slog.NewTextHandler(io.Discard, nil))})
	if err != nil {
		t.Fatal(err)
	}
	ts := httptest.NewServer(srv)
	defer ts.Close()
	req, _ := http.NewRequest("GET", ts.URL+"/api/v1/projects/"+strconv.FormatInt(p.ID, 10)+"/preference-pairs", nil)
	req.Header.Set("Authorization", "Bearer "+token)
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	api, _ := io.ReadAll(res.Body)
	res.Body.Close()
	lines := bytes.Count(api, []byte("\n"))
	if res.StatusCode != http.StatusOK || lines == 0 {
		t.Fatalf("API: %d, %d lines", res.StatusCode, lines)
	}
	if !bytes.Equal(jl, api) {
		t.Errorf("preference-pairs.jsonl differs from the API's lines:\n%s\nAPI:\n%s", jl, api)
	}
	rows := strings.Split(strings.TrimSpace(string(csvBody)), "\n")
	if rows[0] != "query,better,worse,count" || len(rows)-1 != lines {
		t.Errorf("preference-pairs.csv: header %q, %d rows for %d lines", rows[0], len(rows)-1, lines)
	}
	// The lead's download on the Preferences page, signed in through the form.
	const pw = "a long enough password for noor"
	if err := st.SetPassword(ctx, lead, pw); err != nil {
		t.Fatal(err)
	}
	jar, _ := cookiejar.New(nil)
	c := &http.Client{Jar: jar}
	res, err = c.PostForm(ts.URL+"/signin", url.Values{"username": {"noor"}, "password": {pw}})
	if err != nil {
		t.Fatal(err)
	}
	res.Body.Close()
	res, err = c.Get(ts.URL + "/projects/" + strconv.FormatInt(p.ID, 10) + "/preference-pairs.csv")
	if err != nil {
		t.Fatal(err)
	}
	page, _ := io.ReadAll(res.Body)
	res.Body.Close()
	if res.StatusCode != http.StatusOK || !bytes.Equal(csvBody, page) {
		t.Errorf("preference-pairs.csv differs from the page's download (%d):\n%s\npage:\n%s", res.StatusCode, csvBody, page)
	}
	if !strings.Contains(stdout.String(), strconv.Itoa(lines)+" training pairs") {
		t.Errorf("stdout: %s", stdout.String())
	}
	if err := runExport(ctx, []string{"--db", path, "--project", demoProjectName, "--format", "preferences", "--out", out, "--folds", "3"}, &stdout, &stderr); err == nil {
		t.Error("--format preferences with --folds was accepted")
	}
}
