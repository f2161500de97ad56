package web

import (
	"context"
	"encoding/json"
	"fmt"
	"net/http"
	"net/url"
	"regexp"
	"strconv"
	"strings"
	"testing"
	"time"

	"github.com/pertinent/pertinent/internal/testclock"
	"github.com/pertinent/pertinent/store"
)

var (
	comparisonInForm = regexp.MustCompile(`name="comparison" value="(\d+)"`)
	leftInForm       = regexp.MustCompile(`name="left" value="(\d+)"`)
)

// offeredComparison reads the comparison and left document a comparing page offers; empty
// when it offers none.
func offeredComparison(body string) (id, left string) {
	m, l := comparisonInForm.FindStringSubmatch(body), leftInForm.FindStringSubmatch(body)
	if m == nil || l == nil {
		return "", ""
	}
	return m[1], l[1]
}

// preferenceApp is a lamp project whose pairs a lead has settled at grade 4, switched to
// preferences through the settings form.
func preferenceApp(t *testing.T, opts ...fixtureOption) *testApp {
	t.Helper()
	a := newTestApp(t, opts...)
	ctx := context.Background()
	for _, p := range a.pairs {
		if _, err := a.store.Adjudicate(ctx, p, a.lead.ID, 4, ""); err != nil {
			t.Fatal(err)
		}
	}
	lead := a.signIn(a.lead.Username)
	res := a.post(lead, fmt.Sprintf("/projects/%d/task", a.project.ID), url.Values{"task_kind": {"preference"}, "threshold": {""}})
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("saving the task: status %d", res.StatusCode)
	}
	return a
}

func (a *testApp) comparePath() string { return fmt.Sprintf("/projects/%d/compare", a.project.ID) }

// Without JavaScript: answer, undo (the same comparison comes back, placed as before), then
// cannot judge with the flag and a note; each step a plain POST and a redirect.
func TestComparingWithoutJavaScript(t *testing.T) {
	a := preferenceApp(t, withPairs(1, 4), withAssessors(2), withPerPair(1))
	c := a.signIn(a.assessors[0].Username)
	res, body := a.get(c, a.comparePath())
	id, left := offeredComparison(body)
	if res.StatusCode != http.StatusOK || id == "" {
		t.Fatalf("comparing page: %d, comparison %q", res.StatusCode, id)
	}
	for _, want := range []string{"Left is better", "Right is better", "About the same", "Neither is relevant", `name="flagged"`, "Cannot judge"} {
		if !strings.Contains(body, want) {
			t.Errorf("the comparing page lacks %q", want)
		}
	}
	res = a.post(c, a.comparePath(), url.Values{"comparison": {id}, "left": {left}, "outcome": {"right"}, "elapsed_ms": {"2100"}})
	if loc := res.Header.Get("Location"); res.StatusCode != http.StatusSeeOther || !strings.HasSuffix(loc, "/compare?saved=right") {
		t.Fatalf("answer: %d to %q", res.StatusCode, loc)
	}
	_, body = a.get(c, a.comparePath()+"?saved=right")
	if !strings.Contains(body, "Saved: right is better.") {
		t.Errorf("the status line does not say what was saved")
	}
	if next, _ := offeredComparison(body); next == id {
		t.Errorf("the answered comparison %s was offered again", id)
	}
	res = a.post(c, a.comparePath()+"/undo", nil)
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("undo: %d", res.StatusCode)
	}
	_, body = a.get(c, a.comparePath()+"?saved=undo")
	if back, backLeft := offeredComparison(body); back != id || backLeft != left || !strings.Contains(body, "Undone") {
		t.Fatalf("after undo: comparison %s with %s on the left, want %s with %s", back, backLeft, id, left)
	}
	const note = "quokka-violet-8812 page shows gore"
	res = a.post(c, a.comparePath(), url.Values{"comparison": {id}, "left": {left}, "cannot_judge": {"disturbing"}, "flagged": {"1"}, "note": {note}})
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("cannot judge: %d", res.StatusCode)
	}
	hist, err := a.store.PreferenceAnswersByAssessor(context.Background(), a.project.ID, a.assessors[0].ID)
	if err != nil {
		t.Fatal(err)
	}
	if len(hist) != 2 || hist[0].Outcome != "right" || !hist[0].Withdrawn || hist[0].TimeSpentMs != 2100 ||
		hist[1].CannotJudge != "disturbing" || !hist[1].Flagged || hist[1].Note != note || fmt.Sprint(hist[1].LeftDoc) != left {
		t.Fatalf("stored answers %+v", hist)
	}
	// My work lists the assessor's own current answer, the withdrawn one not.
	_, mine := a.get(c, fmt.Sprintf("/projects/%d/mine", a.project.ID))
	if !strings.Contains(mine, `id="my-comparisons"`) || !strings.Contains(mine, "cannot judge (disturbing)") || !strings.Contains(mine, note) ||
		strings.Contains(mine, "Right is better") || !strings.Contains(mine, `/compare">Compare</a>`) {
		t.Errorf("My work does not list the comparisons as answered")
	}
	// The lead sees the flagged comparison, and not who flagged it.
	_, desk := a.get(a.signIn(a.lead.Username), fmt.Sprintf("/projects/%d/preferences", a.project.ID))
	if !strings.Contains(desk, `<tr class="disturbing"><td>q0</td>`) || strings.Contains(desk, a.assessors[0].Username) {
		t.Errorf("the Preferences page does not list the flagged comparison, or names who flagged it")
	}
	// Blind: the other assessor's pages never show the first one's note or name.
	b := a.signIn(a.assessors[1].Username)
	for _, path := range []string{a.comparePath(), "/", fmt.Sprintf("/projects/%d/mine", a.project.ID), fmt.Sprintf("/projects/%d/feedback", a.project.ID)} {
		_, body := a.get(b, path)
		for _, secret := range []string{note, a.assessors[0].Username, a.assessors[0].DisplayName} {
			if strings.Contains(body, secret) {
				t.Errorf("%s shows %q to another assessor", path, secret)
			}
		}
	}
}

// With htmx, one request stores the answer and brings the next comparison; a comparison of
// another project is not found; a project that asks for grades sends assessors to grading.
func TestComparingWithHTMX(t *testing.T) {
	a := preferenceApp(t, withPairs(2, 2), withAssessors(1), withPerPair(1))
	c := a.signIn(a.assessors[0].Username)
	_, body := a.get(c, a.comparePath())
	seen := map[string]bool{}
	for n := 0; ; n++ {
		id, left := offeredComparison(body)
		if id == "" {
			break
		}
		if seen[id] || n > 4 {
			t.Fatalf("comparison %s offered twice", id)
		}
		seen[id] = true
		status, fragment, err := a.send(c, http.MethodPost, a.comparePath(), url.Values{"comparison": {id}, "left": {left}, "outcome": {"same"}}, true)
		if err != nil || status != http.StatusOK || !strings.Contains(fragment, `hx-swap-oob`) || !strings.Contains(fragment, "Saved: about the same.") {
			t.Fatalf("htmx answer: %d %v %s", status, err, fragment)
		}
		body = fragment
	}
	// Two queries of two documents: one comparison each.
	if len(seen) != 2 || !strings.Contains(body, "Nothing left for you here") {
		t.Errorf("answered %d comparisons, ending on %q", len(seen), body)
	}
	status, _, _ := a.send(c, http.MethodPost, a.comparePath(), url.Values{"comparison": {"999999"}, "left": {"1"}, "outcome": {"left"}}, true)
	if status != http.StatusNotFound {
		t.Errorf("a comparison of no project: status %d, want 404", status)
	}
	lead := a.signIn(a.lead.Username)
	if res := a.post(lead, fmt.Sprintf("/projects/%d/task", a.project.ID), url.Values{"task_kind": {"preference"}, "threshold": {"9"}}); res.StatusCode != http.StatusBadRequest {
		t.Errorf("a threshold off the scale: status %d, want 400", res.StatusCode)
	}
	if res := a.post(lead, fmt.Sprintf("/projects/%d/task", a.project.ID), url.Values{"task_kind": {store.TaskGraded}}); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("back to grades: status %d", res.StatusCode)
	}
	res, _ := a.get(c, a.comparePath())
	if loc := res.Header.Get("Location"); res.StatusCode != http.StatusSeeOther || loc != a.judgePath() {
		t.Errorf("comparing a graded project: %d to %q, want the judging page", res.StatusCode, loc)
	}
}

// The lead's Preferences page and the API give the same figures: after two assessors agree
// on every comparison of three documents, the order is the documents' own and all answers
// are alike.
func TestPreferencesPageAndAPIAgree(t *testing.T) {
	a := preferenceApp(t, withPairs(1, 3), withAssessors(2), withPerPair(2))
	ctx := context.Background()
	for idle := 0; idle < 2; {
		idle = 0
		for _, u := range a.assessors {
			v, err := a.store.NextComparison(ctx, a.project.ID, u.ID)
			if err != nil {
				idle++
				continue
			}
			outcome := "right"
			if v.Left.ExternalID < v.Right.ExternalID {
				outcome = "left"
			}
			if _, err := a.store.AnswerComparison(ctx, store.PreferenceSubmission{ComparisonID: v.ComparisonID, ProjectID: a.project.ID,
				UserID: u.ID, LeftDoc: v.Left.ID, Outcome: outcome}); err != nil {
				t.Fatal(err)
			}
		}
	}
	// A kept run that puts the worst document first: of the four answers (d1 over d2 twice,
	// d0 over d1 twice) it keeps the order of the last two only.
	if _, err := a.store.KeepRun(ctx, a.project.ID, a.lead.ID, "lamps-bm25",
		strings.NewReader("q0 Q0 q0-d2 1 3 x\nq0 Q0 q0-d0 2 2 x\nq0 Q0 q0-d1 3 1 x\n")); err != nil {
		t.Fatal(err)
	}
	lead := a.signIn(a.lead.Username)
	res, page := a.get(lead, fmt.Sprintf("/projects/%d/preferences", a.project.ID))
	if res.StatusCode != http.StatusOK {
		t.Fatalf("preferences page: %d", res.StatusCode)
	}
	token, _, err := a.store.CreateAPIToken(ctx, a.lead.ID, "desk")
	if err != nil {
		t.Fatal(err)
	}
	res, body := a.api("GET", fmt.Sprintf("/api/v1/projects/%d/preferences", a.project.ID), token, nil)
	var rep store.PreferenceReport
	if res.StatusCode != http.StatusOK || json.Unmarshal([]byte(body), &rep) != nil || len(rep.Queries) != 1 {
		t.Fatalf("API: %d %s", res.StatusCode, body)
	}
	q := rep.Queries[0]
	if !q.Done || strings.Join(q.Order, " ") != "q0-d0 q0-d1 q0-d2" || q.Fit.Scores[0].Document != "q0-d0" ||
		!rep.Agreement.UnanimousShare.OK || rep.Agreement.UnanimousShare.V != 1 {
		t.Errorf("API report %+v", rep)
	}
	if len(rep.Runs) != 1 || rep.Runs[0].Agree != 2 || rep.Runs[0].Disagree != 2 || rep.Runs[0].Share.V != 0.5 {
		t.Errorf("the kept run against the answers: %+v", rep.Runs)
	}
	figures := map[string]float64{"pref-unanimous": rep.Agreement.UnanimousShare.V, "pref-pairwise": rep.Agreement.Pairwise.V,
		"pref-run:lamps-bm25": rep.Runs[0].Share.V}
	for _, sc := range q.Fit.Scores {
		figures["bt:q0:"+sc.Document], figures["bt-low:q0:"+sc.Document], figures["bt-high:q0:"+sc.Document] = sc.Score, sc.Low, sc.High
	}
	for name, v := range figures {
		want := fmt.Sprintf(`data-figure="%s" data-value="%s"`, name, strconv.FormatFloat(v, 'g', -1, 64))
		if !strings.Contains(page, want) {
			t.Errorf("the page does not show %s = %v as the API does", name, v)
		}
	}
	// The training pairs: d0 over d1 and d1 over d2, by both assessors.
	const wantPairs = "query,better,worse,count\nq0,q0-d0,q0-d1,2\nq0,q0-d1,q0-d2,2\n"
	if res, csv := a.get(lead, fmt.Sprintf("/projects/%d/preference-pairs.csv", a.project.ID)); res.StatusCode != http.StatusOK || csv != wantPairs {
		t.Errorf("training pairs: %d\n%s", res.StatusCode, csv)
	}
	if res, jl := a.api("GET", fmt.Sprintf("/api/v1/projects/%d/preference-pairs", a.project.ID), token, nil); res.StatusCode != http.StatusOK ||
		strings.Count(jl, "\n") != 2 || !strings.Contains(jl, `{"query":"q0","better":"q0-d0","worse":"q0-d1","count":2}`) {
		t.Errorf("training pairs from the API: %d\n%s", res.StatusCode, jl)
	}
	if strings.Index(page, ">q0-d0<") > strings.Index(page, ">q0-d2<") {
		t.Errorf("the page does not list the best document first")
	}
}

// Hostile document text is inert on the comparing page: the body goes through the same
// sanitiser as on the graded screen and the title is escaped.
func TestComparingPageNeutralisesHostileDocuments(t *testing.T) {
	a := preferenceApp(t, withPairs(1, 2), withAssessors(1), withPerPair(1))
	a.rewriteDocuments(`<img src=x onerror="alert('title')">`, `<p>fine</p><script>alert('body')</script><a href="javascript:alert(1)" onclick="x()">link</a>`, "html")
	_, body := a.get(a.signIn(a.assessors[0].Username), a.comparePath())
	if id, _ := offeredComparison(body); id == "" {
		t.Fatal("no comparison offered")
	}
	for _, bad := range []string{"<script>alert", "<img src=x onerror", `onerror="alert`, `onclick="`, `href="javascript:`} {
		if strings.Contains(body, bad) {
			t.Errorf("the comparing page carries %q", bad)
		}
	}
	if strings.Count(body, "<p>fine</p>") != 2 || strings.Count(body, "&lt;img src=x onerror=") != 2 {
		t.Errorf("the sanitised bodies and the escaped titles are not both shown")
	}
}

// A comparison whose lease ran out and that another assessor then answered refuses the late
// answer: with htmx the screen says so and moves on.
func TestLateAnswerIsRefusedAndTheScreenMovesOn(t *testing.T) {
	a := preferenceApp(t, withPairs(2, 2), withAssessors(2), withPerPair(1))
	clock := testclock.New(time.Now().UTC())
	a.store.SetClock(clock.Now)
	first, second := a.signIn(a.assessors[0].Username), a.signIn(a.assessors[1].Username)
	_, body := a.get(first, a.comparePath())
	id, left := offeredComparison(body)
	clock.Advance(time.Duration(a.project.LeaseSeconds+1) * time.Second)
	_, body = a.get(second, a.comparePath())
	if other, otherLeft := offeredComparison(body); other != id {
		t.Fatalf("after the lease ran out the second assessor got %s, not %s", other, id)
	} else if res := a.post(second, a.comparePath(), url.Values{"comparison": {other}, "left": {otherLeft}, "outcome": {"left"}}); res.StatusCode != http.StatusSeeOther {
		t.Fatalf("second assessor's answer: %d", res.StatusCode)
	}
	status, fragment, err := a.send(first, http.MethodPost, a.comparePath(), url.Values{"comparison": {id}, "left": {left}, "outcome": {"right"}}, true)
	if err != nil || status != http.StatusOK || !strings.Contains(fragment, "Not saved: this comparison has all the answers it needs.") {
		t.Fatalf("late answer: %d %v %s", status, err, fragment)
	}
	if next, _ := offeredComparison(fragment); next == "" || next == id {
		t.Errorf("after the refusal the screen offers %q, want the other query's comparison", next)
	}
	// Without JavaScript the refusal is a page of its own, 409.
	if res := a.post(first, a.comparePath(), url.Values{"comparison": {id}, "left": {left}, "outcome": {"right"}}); res.StatusCode != http.StatusConflict {
		t.Errorf("late answer without htmx: %d, want 409", res.StatusCode)
	}
}
