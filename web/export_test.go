package web

import (
	"archive/zip"
	"bytes"
	"context"
	"encoding/csv"
	"encoding/json"
	"fmt"
	"io"
	"mime/multipart"
	"net/http"
	"net/url"
	"strings"
	"testing"

	"golang.org/x/net/html"

	"github.com/pertinent/pertinent/export"
	"github.com/pertinent/pertinent/store"
)

// addGradedQueries adds queries t1..t3 with documents t<i>-a, t<i>-b, graded by amir and
// bea: a gets 3 and 3, b gets 0 and 1 (median 0). Document t1-c exists without a pair.
func addGradedQueries(t *testing.T, a *testApp) {
	t.Helper()
	ctx := context.Background()
	err := a.store.Load(ctx, a.project.ID, func(l *store.Loader) error {
		for i := 1; i <= 3; i++ {
			qid, err := l.Query(store.Query{ExternalID: fmt.Sprintf("t%d", i), Text: "kettle descaler"})
			if err != nil {
				return err
			}
			for _, d := range []struct {
				id     string
				grades [2]int
			}{{"a", [2]int{3, 3}}, {"b", [2]int{0, 1}}} {
				pid, err := addPair(l, store.PairSpec{QueryID: qid}, store.Document{ExternalID: fmt.Sprintf("t%d-%s", i, d.id)})
				if err != nil {
					return err
				}
				for j, name := range []string{"amir", "bea"} {
					g := d.grades[j]
					if err := l.Judgment(store.RecordedJudgment{PairID: pid, UserID: a.users[name].ID, Grade: &g}); err != nil {
						return err
					}
				}
			}
		}
		_, err := l.Document(store.Document{ExternalID: "t1-c"})
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
}

func unzip(t *testing.T, b []byte) map[string]string {
	t.Helper()
	zr, err := zip.NewReader(bytes.NewReader(b), int64(len(b)))
	if err != nil {
		t.Fatalf("not a zip (%v): %.200s", err, b)
	}
	out := map[string]string{}
	for _, f := range zr.File {
		rc, err := f.Open()
		if err != nil {
			t.Fatal(err)
		}
		body, _ := io.ReadAll(rc)
		rc.Close()
		out[f.Name] = string(body)
	}
	return out
}

func TestExportPageDownloadsAZip(t *testing.T) {
	a := newTestApp(t)
	addGradedQueries(t, a)
	lead := a.signIn("lena")
	base := fmt.Sprintf("/projects/%d", a.project.ID)
	res, body := a.get(lead, base+"/export")
	if res.StatusCode != http.StatusOK || !strings.Contains(body, `action="`+base+`/export.zip"`) {
		t.Fatalf("export page: %d\n%s", res.StatusCode, body)
	}
	q := url.Values{"format": {"csv"}, "consensus": {"median"}, "min_judgments": {"2"}, "split": {"ratio"}, "ratios": {"0.5,0.5,0"}, "seed": {"4"}}
	res, body = a.get(lead, base+"/export.zip?"+q.Encode())
	if res.StatusCode != http.StatusOK || res.Header.Get("Content-Type") != "application/zip" ||
		!strings.Contains(res.Header.Get("Content-Disposition"), "kettles-csv-") {
		t.Fatalf("zip download: %d %v", res.StatusCode, res.Header)
	}
	files := unzip(t, []byte(body))
	recs, err := csv.NewReader(strings.NewReader(files["pairs.csv"])).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	var m export.Manifest
	if err := json.Unmarshal([]byte(files["manifest.json"]), &m); err != nil {
		t.Fatal(err)
	}
	// Six graded pairs; the six kettle pairs of the test app have no judgments (too few).
	if len(recs)-1 != 6 || m.Rows != 6 || m.Excluded["too few judgments"] != 6 || m.Split == nil || m.Split.Seed != 4 {
		t.Errorf("%d rows, manifest %+v", len(recs)-1, m)
	}
	for _, r := range recs[1:] {
		want := "0"
		if strings.HasSuffix(r[1], "-a") {
			want = "3"
		}
		if r[2] != want || (r[4] != "train" && r[4] != "validation") {
			t.Errorf("row %v: want grade %s and a split", r, want)
		}
	}

	// A refused request comes back as the form with the reason, before any download starts.
	res, body = a.get(lead, base+"/export.zip?format=qrels&consensus=vote")
	if res.StatusCode != http.StatusBadRequest || !strings.Contains(body, "unknown consensus") {
		t.Errorf("bad consensus: %d\n%s", res.StatusCode, body)
	}
	// Assessors may not export; the archive does not stop a lead.
	if res, _ := a.get(a.signIn("amir"), base+"/export.zip"); res.StatusCode != http.StatusForbidden {
		t.Errorf("assessor export: %d, want 403", res.StatusCode)
	}
	if err := a.store.SetProjectArchived(context.Background(), a.project.ID, true, a.users["root"].ID); err != nil {
		t.Fatal(err)
	}
	if res, _ := a.get(lead, base+"/export.zip?format=svmlight"); res.StatusCode != http.StatusOK {
		t.Errorf("export of an archived project: %d, want 200", res.StatusCode)
	}
}

const webRun = "t1 Q0 t1-b 1 3.0 sys\nt1 Q0 t1-a 2 2.0 sys\nt1 Q0 t1-c 3 1.0 sys\nt2 Q0 t2-a 1 1.0 sys\nt9 Q0 t9-x 1 1.0 sys\n"

// postRuns uploads run files (the first as run, the second as run2) with the form's fields
// to the project's Evaluate page as c; the caller reads and closes the response.
func (a *testApp) postRuns(c *http.Client, fields map[string]string, runs ...string) *http.Response {
	a.t.Helper()
	return a.postMultipart(c, fmt.Sprintf("/projects/%d/evaluate", a.project.ID), func(mw *multipart.Writer) {
		for k, v := range fields {
			mw.WriteField(k, v)
		}
		for i, r := range runs {
			field := "run"
			if i == 1 {
				field = "run2"
			}
			w, _ := mw.CreateFormFile(field, fmt.Sprintf("sys%d.run", i+1))
			w.Write([]byte(r))
		}
	})
}

func TestEvaluatePageScoresSavesAndSends(t *testing.T) {
	a := newTestApp(t)
	addGradedQueries(t, a)
	lead := a.signIn("lena")
	res := a.postRuns(lead, map[string]string{"k": "3", "gain": "exponential", "threshold": "2", "min_judgments": "2"}, webRun)
	res.Body.Close()
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("evaluate: %d, want 303", res.StatusCode)
	}
	page := a.follow(lead, res)
	// t1: grade-3 document at rank 2: NDCG@3 = (7/log2 3)/7 = 0.6309; t2: 1; t3 missing: 0.
	// Mean over three queries = (0.6309 + 1 + 0)/3 = 0.5436 (worked by hand).
	for _, want := range []string{"0.6309", "0.5436", "Send the unjudged to judging"} {
		if !strings.Contains(page, want) {
			t.Errorf("evaluation page lacks %q", want)
		}
	}
	loc := res.Header.Get("Location")
	_, csvBody := a.get(lead, loc+"/per-query.csv")
	recs, err := csv.NewReader(strings.NewReader(csvBody)).ReadAll()
	if err != nil || len(recs) != 4 || recs[1][1] != "t1" || !strings.HasPrefix(recs[1][2], "0.6309") || recs[3][2] != "0" {
		t.Errorf("per-query CSV (err %v):\n%s", err, csvBody)
	}

	// Unjudged top 3: t1-c (a document without a pair) and t9-x (no such query).
	before, _ := a.store.PairCount(context.Background(), a.project.ID)
	res = a.postOK(lead, loc+"/send", nil)
	after, _ := a.store.PairCount(context.Background(), a.project.ID)
	if after != before+1 {
		t.Errorf("pairs %d -> %d, want one added (t1-c)", before, after)
	}
	if page := a.follow(lead, res); !strings.Contains(page, "1 new pairs to judge") || !strings.Contains(page, "t9 t9-x") {
		t.Errorf("send notice missing:\n%s", page)
	}
	wantAudit(t, a, "pairs.pool", "lena")

	// A broken run file comes back on the form with its problem.
	res = a.postRuns(lead, nil, "t1 Q0 t1-a first 1.0 sys\n")
	b, _ := io.ReadAll(res.Body)
	res.Body.Close()
	if res.StatusCode != http.StatusBadRequest || !strings.Contains(string(b), "rank") {
		t.Errorf("bad run: %d\n%s", res.StatusCode, b)
	}
}

// newToken creates an API token through the account page, as a person would, and reads it
// off the page it is shown on once.
func newToken(t *testing.T, a *testApp, c *http.Client) string {
	t.Helper()
	res := a.postOK(c, "/account/tokens", url.Values{"name": {"pipeline"}})
	page := a.follow(c, res)
	n := findByID(parseHTML(t, page), "new-token")
	if n == nil {
		t.Fatalf("token not shown:\n%s", page)
	}
	for _, at := range n.Attr {
		if at.Key == "value" {
			// Shown once: the page again no longer has it.
			if _, again := a.get(c, "/account/tokens"); strings.Contains(again, at.Val) {
				t.Error("the token is shown a second time")
			}
			return at.Val
		}
	}
	t.Fatal("token field has no value")
	return ""
}

func (a *testApp) api(method, path, token string, body io.Reader, headers ...string) (*http.Response, string) {
	a.t.Helper()
	req, _ := http.NewRequest(method, a.server.URL+path, body)
	if token != "" {
		req.Header.Set("Authorization", "Bearer "+token)
	}
	for i := 0; i+1 < len(headers); i += 2 {
		req.Header.Set(headers[i], headers[i+1])
	}
	res, err := http.DefaultClient.Do(req)
	if err != nil {
		a.t.Fatal(err)
	}
	defer res.Body.Close()
	b, _ := io.ReadAll(res.Body)
	return res, string(b)
}

func TestAPIWithBearerTokens(t *testing.T) {
	a := newTestApp(t)
	addGradedQueries(t, a)
	lead := a.signIn("lena")
	token := newToken(t, a, lead)

	res, body := a.api("GET", "/api/v1/projects", token, nil)
	var list struct {
		Projects []struct {
			Name, Role string
		}
	}
	if res.StatusCode != http.StatusOK || json.Unmarshal([]byte(body), &list) != nil || len(list.Projects) != 1 ||
		list.Projects[0].Name != "Kettles" || list.Projects[0].Role != "lead" {
		t.Fatalf("projects: %d %s", res.StatusCode, body)
	}
	toks, _ := a.store.APITokens(context.Background(), a.users["lena"].ID)
	if len(toks) != 1 || toks[0].LastUsed.IsZero() {
		t.Errorf("last use not recorded: %+v", toks)
	}

	// A single qrels file, addressed by project name.
	res, body = a.api("GET", "/api/v1/projects/Kettles/export?format=qrels&min_judgments=2&archive=none", token, nil)
	if res.StatusCode != http.StatusOK || body != "t1 0 t1-a 3\nt1 0 t1-b 0\nt2 0 t2-a 3\nt2 0 t2-b 0\nt3 0 t3-a 3\nt3 0 t3-b 0\n" {
		t.Errorf("qrels over the API: %d\n%s", res.StatusCode, body)
	}
	// The zip, split by query into folds.
	res, body = a.api("GET", fmt.Sprintf("/api/v1/projects/%d/export?format=svmlight&min_judgments=2&folds=3", a.project.ID), token, nil)
	if res.StatusCode != http.StatusOK {
		t.Fatalf("zip over the API: %d %s", res.StatusCode, body)
	}
	if files := unzip(t, []byte(body)); files["fold-1.svm"] == "" || files["fold-3.group"] != "2\n" || files["qid-map.tsv"] == "" {
		t.Errorf("svmlight zip files: %v", files)
	}
	// Evaluate a run from the request body. A cross-site Origin does not matter to the API:
	// bearer tokens cannot be sent by another site's form.
	res, body = a.api("POST", "/api/v1/projects/Kettles/evaluate?k=3&min_judgments=2", token, strings.NewReader(webRun),
		"Origin", "https://elsewhere.example", "Sec-Fetch-Site", "cross-site")
	var ev store.Evaluation
	if res.StatusCode != http.StatusOK || json.Unmarshal([]byte(body), &ev) != nil || len(ev.Summaries) != 1 || fmt.Sprintf("%.4f", ev.Summaries[0].NDCG) != "0.5436" {
		t.Errorf("evaluate over the API: %d %s", res.StatusCode, body)
	}

	// A session cookie is no way into the API, even from this site.
	for _, path := range []string{"/api/v1/projects", fmt.Sprintf("/api/v1/projects/%d/export", a.project.ID)} {
		res, _ := lead.Get(a.server.URL + path)
		res.Body.Close()
		if res.StatusCode != http.StatusUnauthorized {
			t.Errorf("cookie session on %s: %d, want 401", path, res.StatusCode)
		}
	}
	if res, _ := a.api("GET", "/api/v1/projects", "pt_not-a-token", nil); res.StatusCode != http.StatusUnauthorized || res.Header.Get("WWW-Authenticate") == "" {
		t.Errorf("unknown token: %d", res.StatusCode)
	}

	// An assessor's token lists projects but cannot export; a non-member sees no project.
	amirTok := newToken(t, a, a.signIn("amir"))
	if res, _ := a.api("GET", "/api/v1/projects/Kettles/export?format=csv", amirTok, nil); res.StatusCode != http.StatusForbidden {
		t.Errorf("assessor export: %d, want 403", res.StatusCode)
	}
	cydTok := newToken(t, a, a.signIn("cyd"))
	if res, _ := a.api("GET", "/api/v1/projects/Kettles/export?format=csv", cydTok, nil); res.StatusCode != http.StatusNotFound {
		t.Errorf("non-member export: %d, want 404", res.StatusCode)
	}

	// Revoking ends the token at once.
	toks, _ = a.store.APITokens(context.Background(), a.users["lena"].ID)
	a.postOK(lead, fmt.Sprintf("/account/tokens/%d/revoke", toks[0].ID), nil)
	if res, _ := a.api("GET", "/api/v1/projects", token, nil); res.StatusCode != http.StatusUnauthorized {
		t.Errorf("revoked token: %d, want 401", res.StatusCode)
	}
	// Someone else's token cannot be revoked by id.
	amirToks, _ := a.store.APITokens(context.Background(), a.users["amir"].ID)
	if res := a.post(lead, fmt.Sprintf("/account/tokens/%d/revoke", amirToks[0].ID), nil); res.StatusCode != http.StatusNotFound {
		t.Errorf("revoking another's token: %d, want 404", res.StatusCode)
	}
}

// The export, evaluation and token pages follow the Content-Security-Policy too: no inline
// script, style element, style attribute or event handler.
func TestExportPagesNeedNoInlineScriptOrStyle(t *testing.T) {
	a := newTestApp(t)
	addGradedQueries(t, a)
	ctx := context.Background()
	policy := export.LabelPolicy{AdjudicationFirst: true, Consensus: export.ConsensusMedian}
	ev, err := a.store.Evaluate(ctx, a.project.ID, store.EvalRequest{Policy: policy, K: 3, Threshold: 2},
		[]store.NamedRun{{Name: "one", Body: strings.NewReader(webRun)}, {Name: "two", Body: strings.NewReader(strings.ReplaceAll(webRun, "3.0", "0.5"))}})
	if err != nil {
		t.Fatal(err)
	}
	if err := a.store.SaveEvaluation(ctx, a.project.ID, a.users["lena"].ID, &ev); err != nil {
		t.Fatal(err)
	}
	c := a.signIn("lena")
	newToken(t, a, c)
	p := a.project.ID
	for _, path := range []string{
		fmt.Sprintf("/projects/%d/export", p), fmt.Sprintf("/projects/%d/evaluate", p),
		fmt.Sprintf("/projects/%d/evaluations/%d", p, ev.ID), "/account/tokens",
	} {
		res, body := a.get(c, path)
		if res.StatusCode != 200 {
			t.Errorf("GET %s: status %d", path, res.StatusCode)
			continue
		}
		walk(parseHTML(t, body), func(e *html.Node) {
			if (e.Data == "script" && e.FirstChild != nil) || e.Data == "style" {
				t.Errorf("%s: inline <%s>", path, e.Data)
			}
			for _, at := range e.Attr {
				if at.Key == "style" || strings.HasPrefix(at.Key, "on") {
					t.Errorf("%s: <%s %s=%q>", path, e.Data, at.Key, at.Val)
				}
			}
		})
		if strings.Contains(path, "/evaluations/") && (!strings.Contains(body, "Randomisation p") || !strings.Contains(body, "Δ ndcg")) {
			t.Errorf("comparison page lacks the comparison tables")
		}
	}
}
