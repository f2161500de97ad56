package web

import (
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"mime/multipart"
	"net/http"
	"net/url"
	"strconv"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/store"
)

// addPlanQueries adds three queries of twelve documents each, without pairs, and returns two
// run files over them with distinct scores.
func addPlanQueries(t *testing.T, a *testApp) (runA, runB string) {
	t.Helper()
	err := a.store.Load(context.Background(), a.project.ID, func(l *store.Loader) error {
		for q := 1; q <= 3; q++ {
			if _, err := l.Query(store.Query{ExternalID: fmt.Sprintf("p%d", q), Text: "stovetop kettle whistle"}); err != nil {
				return err
			}
			for d := 1; d <= 12; d++ {
				if _, err := l.Document(store.Document{ExternalID: fmt.Sprintf("p%d-d%02d", q, d), Title: "Whistling kettle"}); err != nil {
					return err
				}
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	var a1, b1 strings.Builder
	for q := 1; q <= 3; q++ {
		for d := 1; d <= 12; d++ {
			fmt.Fprintf(&a1, "p%d Q0 p%d-d%02d %d %d.5 hidden-ranker-one\n", q, q, d, d, 20-d)
			fmt.Fprintf(&b1, "p%d Q0 p%d-d%02d %d %d.25 hidden-ranker-two\n", q, q, 13-d, d, 20-d)
		}
	}
	return a1.String(), b1.String()
}

func (a *testApp) keepRuns(c *http.Client, files map[string]string) *http.Response {
	a.t.Helper()
	return a.postMultipart(c, fmt.Sprintf("/projects/%d/plan/runs", a.project.ID), func(mw *multipart.Writer) {
		for name, body := range files {
			w, _ := mw.CreateFormFile("runs", name)
			w.Write([]byte(body))
		}
	})
}

// A lead keeps two runs, previews a stratified design (nothing stored), sends it, reads "How sure
// are we?" before and after grading, and the API answers with the page's numbers; assessors
// see nothing of the design.
func TestLeadPlansJudgingAndReadsEstimates(t *testing.T) {
	a := newTestApp(t)
	runA, runB := addPlanQueries(t, a)
	lead := a.signIn("lena")
	base := fmt.Sprintf("/projects/%d", a.project.ID)

	res := a.keepRuns(lead, map[string]string{"hidden-ranker-one.txt": runA, "hidden-ranker-two.txt": runB})
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("keep runs: %d\n%s", res.StatusCode, readAll(t, res))
	}
	page := a.follow(lead, res)
	if !strings.Contains(page, "Kept hidden-ranker-one.txt") && !strings.Contains(page, "Kept hidden-ranker-two.txt") {
		t.Errorf("no notice of the kept runs:\n%s", page)
	}
	kept, err := a.store.KeptRuns(context.Background(), a.project.ID)
	if err != nil || len(kept) != 2 {
		t.Fatalf("kept runs %v, %v", kept, err)
	}
	form := url.Values{"run": {fmt.Sprint(kept[0].ID), fmt.Sprint(kept[1].ID)}, "kind": {"stratified"}, "depth": {"2"},
		"max_depth": {"12"}, "budget": {"20"}, "k": {"5"}, "gain": {"exponential"}, "threshold": {"2"}, "action": {"preview"}}
	before, _ := a.store.PairCount(context.Background(), a.project.ID)
	res = a.post(lead, base+"/plan", form)
	body := readAll(t, res)
	if res.StatusCode != http.StatusOK || !strings.Contains(body, "new pairs would go to judging") {
		t.Fatalf("preview: %d\n%s", res.StatusCode, body)
	}
	if n, _ := a.store.PairCount(context.Background(), a.project.ID); n != before {
		t.Errorf("a preview added pairs: %d -> %d", before, n)
	}

	// A budget below the top stratum comes back with what to change.
	small := url.Values{}
	for k, v := range form {
		small[k] = v
	}
	small.Set("budget", "3")
	small.Set("action", "send")
	res = a.post(lead, base+"/plan", small)
	if body := readAll(t, res); res.StatusCode != http.StatusBadRequest || !strings.Contains(body, "budget") {
		t.Errorf("small budget: %d\n%s", res.StatusCode, body)
	}

	form.Set("action", "send")
	res = a.postOK(lead, base+"/plan", form)
	loc := res.Header.Get("Location")
	page = a.follow(lead, res)
	for _, want := range []string{"How sure are we?", "hidden-ranker-one.txt", "hidden-ranker-two.txt", "still being judged", "Sent "} {
		if !strings.Contains(page, want) {
			t.Errorf("design page lacks %q", want)
		}
	}
	after, _ := a.store.PairCount(context.Background(), a.project.ID)
	if after <= before {
		t.Fatalf("sending the design added no pairs (%d -> %d)", before, after)
	}

	// Assessors never see the design, the runs or any score.
	amir := a.signIn("amir")
	_, judge := a.get(amir, base+"/judge")
	for _, secret := range []string{"hidden-ranker", "design", "NDCG", "stratum", "sampled at rate"} {
		if strings.Contains(judge, secret) {
			t.Errorf("the judging page shows %q to an assessor", secret)
		}
	}
	if r, _ := a.get(amir, loc); r.StatusCode != http.StatusForbidden {
		t.Errorf("assessor on the design page: %d, want 403", r.StatusCode)
	}

	// Grade every pair; the page and the API show the same estimates.
	gradeEveryPair(t, a)
	var id int64
	fmt.Sscanf(loc[strings.LastIndex(loc, "/")+1:], "%d", &id)
	want, err := a.store.DesignEstimate(context.Background(), a.project.ID, id)
	if err != nil {
		t.Fatal(err)
	}
	_, page = a.get(lead, loc)
	for _, r := range want.Estimates.Runs {
		if !strings.Contains(page, interval(r.NDCG)) {
			t.Errorf("design page lacks run %s's NDCG %s", r.Run, interval(r.NDCG))
		}
	}
	if !strings.Contains(page, "How many queries are enough?") {
		t.Error("design page lacks the query planner")
	}
	// The estimates download as CSV from the page's own address, one row per run with the
	// same exact values the store holds.
	if !strings.Contains(page, "?format=csv&amp;table=estimates") || !strings.Contains(page, "?format=csv&amp;table=differences") {
		t.Error("design page offers no CSV of its estimates and differences")
	}
	res, body = a.get(lead, loc+"?format=csv&table=estimates")
	rows, err := csv.NewReader(strings.NewReader(body)).ReadAll()
	if err != nil || res.StatusCode != http.StatusOK || !strings.HasPrefix(res.Header.Get("Content-Type"), "text/csv") || len(rows) != len(want.Estimates.Runs)+1 {
		t.Fatalf("estimates CSV: status %d, %d rows, err %v:\n%s", res.StatusCode, len(rows), err, body)
	}
	for i, r := range want.Estimates.Runs {
		if rows[i+1][0] != r.Run || rows[i+1][1] != strconv.FormatFloat(r.NDCG.Est, 'g', -1, 64) {
			t.Errorf("estimates CSV row %d: %v, store run %s NDCG %v", i+1, rows[i+1], r.Run, r.NDCG.Est)
		}
	}
	if res, _ := a.get(lead, base+"/plan?format=csv&table=runs"); res.StatusCode != http.StatusOK || !strings.HasPrefix(res.Header.Get("Content-Type"), "text/csv") {
		t.Errorf("kept runs CSV: status %d, %s", res.StatusCode, res.Header.Get("Content-Type"))
	}
	token := newToken(t, a, lead)
	r, js := a.api(http.MethodGet, fmt.Sprintf("/api/v1%s/designs/%d", base, id), token, nil)
	if r.StatusCode != http.StatusOK {
		t.Fatalf("API: %d %s", r.StatusCode, js)
	}
	var got store.DesignReport
	if err := json.Unmarshal([]byte(js), &got); err != nil {
		t.Fatal(err)
	}
	for i := range want.Estimates.Runs {
		if got.Estimates.Runs[i].NDCG != want.Estimates.Runs[i].NDCG || got.Estimates.Runs[i].AP != want.Estimates.Runs[i].AP {
			t.Errorf("API run %d: %+v, store %+v", i, got.Estimates.Runs[i], want.Estimates.Runs[i])
		}
	}
	if got.Signal.Text != want.Signal.Text || got.Signal.Text == "" {
		t.Errorf("API signal %q, store %q", got.Signal.Text, want.Signal.Text)
	}
	if r, _ := a.api(http.MethodGet, fmt.Sprintf("/api/v1%s/designs/%d/queries?min_diff=0.1", base, id), token, nil); r.StatusCode != http.StatusOK && r.StatusCode != http.StatusBadRequest {
		t.Errorf("API query planner: %d", r.StatusCode)
	}
}

// gradeEveryPair gives every ungraded pair a grade from two assessors, higher for documents
// early in the first run.
func gradeEveryPair(t *testing.T, a *testApp) {
	t.Helper()
	ctx := context.Background()
	type pair struct {
		id  int64
		doc string
	}
	var ps []pair
	err := a.store.ExportPairs(ctx, a.project.ID, store.ExportScan{}, func(p *store.ExportPair) error {
		if len(p.Labels.Grades) == 0 {
			ps = append(ps, pair{p.PairID, p.DocID})
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	err = a.store.Load(ctx, a.project.ID, func(l *store.Loader) error {
		for _, p := range ps {
			var d int
			fmt.Sscanf(p.doc[strings.LastIndex(p.doc, "-d")+2:], "%d", &d)
			g := max(0, 4-d/3)
			for _, name := range []string{"amir", "bea"} {
				if err := l.Judgment(store.RecordedJudgment{PairID: p.id, UserID: a.users[name].ID, Grade: &g}); err != nil {
					return err
				}
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
}
