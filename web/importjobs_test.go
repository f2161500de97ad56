package web

import (
	"context"
	"fmt"
	"io"
	"net/http"
	"net/http/httptest"
	"regexp"
	"strings"
	"testing"
	"time"

	"github.com/pertinent/pertinent/store"
)

// statusSection is the import-status section of a page or fragment.
var statusSection = regexp.MustCompile(`(?s)<section id="import-status".*?</section>`)

// fragment reads the status fragment htmx polls from the server at base.
func fragment(t *testing.T, c *http.Client, base, loc string) (int, string) {
	t.Helper()
	req, _ := http.NewRequest(http.MethodGet, base+loc, nil)
	req.Header.Set("HX-Request", "true")
	res, err := c.Do(req)
	if err != nil {
		t.Fatal(err)
	}
	defer res.Body.Close()
	b, _ := io.ReadAll(res.Body)
	return res.StatusCode, string(b)
}

// Two servers on one database (two instances behind a load balancer, no sticky sessions): an
// import sent to one is followed, to its report or its problems, through the other, which
// shows exactly what the first shows. On SQLite (one instance is what it serves) the row is
// written when the job starts, so the second instance is asked once the first has finished;
// on PostgreSQL it is written before the answer, and the second is asked from the start.
func TestImportJobIsShownByEveryInstance(t *testing.T) {
	a := newTestApp(t)
	other, err := store.Open(context.Background(), a.store.Path())
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { other.Close() })
	b, err := New(context.Background(), other, Options{Logger: discardLogger()})
	if err != nil {
		t.Fatal(err)
	}
	tb := httptest.NewServer(b)
	t.Cleanup(tb.Close)
	c := a.signIn("lena") // the session cookie serves both: its keys are in the database

	follow := func(c *http.Client, res *http.Response) string {
		t.Helper()
		if !a.store.Postgres() {
			a.importDoneAt(c, a.server.URL, res)
		}
		return a.importDoneAt(c, tb.URL, res)
	}
	res := a.postImport(c, a.project.ID, map[string]string{"kind": "rows"}, "rows.csv", webRows)
	loc := res.Header.Get("Location")
	page := follow(c, res)
	want := map[string]string{"queries": "1/0/1", "documents": "2/0/0", "pairs": "2/0/0"}
	if got := reportCounts(page); fmt.Sprint(got) != fmt.Sprint(want) || !strings.Contains(page, "Imported in") {
		t.Errorf("report through the other instance %v, want %v\n%s", got, want, page)
	}
	_, onA := fragment(t, c, a.server.URL, loc)
	_, onB := fragment(t, c, tb.URL, loc)
	if onA != onB || !statusSection.MatchString(onA) {
		t.Errorf("the instances show the finished job differently:\nfirst:\n%s\nsecond:\n%s", onA, onB)
	}
	if n := pairCount(t, a); n != 8 {
		t.Errorf("%d pairs after the import, want 8", n)
	}

	// Rejected files: the other instance lists the same problems.
	res = a.postImport(c, a.project.ID, map[string]string{"kind": "pairs"}, "p.csv", "query_id,doc_id\nk1,nowhere\nk1,new-doc\nk9,glass-1\n")
	loc = res.Header.Get("Location")
	page = follow(c, res)
	for _, p := range []string{`p.csv:2: doc_id: no document &#34;nowhere&#34; in this project`, "Rejected: nothing was changed"} {
		if !strings.Contains(page, p) {
			t.Errorf("rejection through the other instance lacks %q:\n%s", p, page)
		}
	}
	_, onA = fragment(t, c, a.server.URL, loc)
	_, onB = fragment(t, c, tb.URL, loc)
	if onA != onB || !strings.Contains(onB, "<li><code>") {
		t.Errorf("the instances list the problems differently:\nfirst:\n%s\nsecond:\n%s", onA, onB)
	}

	// A job of another project is not found through this one, on either instance.
	mugs, err := a.store.CreateProject(context.Background(), store.NewProject{Name: "Mugs"}, a.users["root"].ID)
	if err != nil {
		t.Fatal(err)
	}
	root := a.signIn("root")
	res = a.postImport(root, mugs.ID, map[string]string{"kind": "rows", "dry_run": "1"}, "rows.csv", webRows)
	follow(root, res)
	job := res.Header.Get("Location")[strings.LastIndex(res.Header.Get("Location"), "/")+1:]
	for _, base := range []string{a.server.URL, tb.URL} {
		if code, _ := fragment(t, root, base, fmt.Sprintf("/projects/%d/import/%s", a.project.ID, job)); code != http.StatusNotFound {
			t.Errorf("another project's import seen through this one at %s: %d", base, code)
		}
	}
}

// A job whose instance stopped without a word (its row left running, no longer stamped)
// shows as interrupted on every instance once its last stamp is store.ImportJobStale old.
func TestImportJobOfAStoppedInstanceShowsAsInterrupted(t *testing.T) {
	a := newTestApp(t)
	ctx := context.Background()
	now := time.Now().Truncate(time.Millisecond) // as the database keeps times
	a.store.SetClock(func() time.Time { return now })
	// The row as an instance leaves it when it stops mid-import: created, never finished.
	if err := a.store.CreateImportJob(ctx, store.ImportJob{ID: "0123abcd", ProjectID: a.project.ID, Kind: store.ImportRows,
		Files: []string{"big.csv"}, Total: 1 << 20}); err != nil {
		t.Fatal(err)
	}
	c := a.signIn("lena")
	loc := fmt.Sprintf("/projects/%d/import/0123abcd", a.project.ID)
	now = now.Add(store.ImportJobStale)
	code, body := fragment(t, c, a.server.URL, loc)
	if code != http.StatusOK || !strings.Contains(body, "hx-trigger") || !strings.Contains(body, "Importing: 0% of the files read") {
		t.Fatalf("a job stamped %v ago: %d, want it still polled as running\n%s", store.ImportJobStale, code, body)
	}
	now = now.Add(time.Second)
	code, body = fragment(t, c, a.server.URL, loc)
	if code != http.StatusOK || strings.Contains(body, "hx-trigger") ||
		!strings.Contains(body, "The import was interrupted because the server running it stopped; nothing was changed.") {
		t.Fatalf("a job no longer stamped: %d, want it shown as interrupted and no longer polled\n%s", code, body)
	}
	if _, page := a.get(c, loc); !strings.Contains(page, "rows from big.csv") || !strings.Contains(page, "server running it stopped") {
		t.Errorf("the status page of the interrupted job:\n%s", page)
	}
}

// A job running here stamps its row about once a second with the bytes read, so the other
// instances see it move and keep it running; once stopped it stamps no more.
func TestRunningJobStampsItsRow(t *testing.T) {
	a := newTestApp(t)
	ctx := context.Background()
	if err := a.store.CreateImportJob(ctx, store.ImportJob{ID: "feed01", ProjectID: a.project.ID, Kind: store.ImportRows,
		Files: []string{"big.csv"}, Total: 1000}); err != nil {
		t.Fatal(err)
	}
	before, _ := a.store.ImportJob(ctx, "feed01", a.project.ID)
	job := &importJob{id: "feed01", projectID: a.project.ID, kind: store.ImportRows, total: 1000}
	job.read.Store(250)
	stop := make(chan struct{})
	done := make(chan struct{})
	go func() {
		defer close(done)
		a.srv.stampJob(ctx, job, stop)
	}()
	deadline := time.Now().Add(5 * stampEvery)
	var got store.ImportJob
	for time.Now().Before(deadline) {
		got, _ = a.store.ImportJob(ctx, "feed01", a.project.ID)
		if got.Read == 250 {
			break
		}
		time.Sleep(20 * time.Millisecond)
	}
	close(stop)
	<-done
	if got.Read != 250 || !got.Updated.After(before.Updated) || got.Done {
		t.Fatalf("after the stamps the row reads read=%d updated=%v (created %v) done=%v", got.Read, got.Updated, before.Updated, got.Done)
	}
	job.read.Store(900)
	time.Sleep(2 * stampEvery)
	if after, _ := a.store.ImportJob(ctx, "feed01", a.project.ID); after.Read != 250 {
		t.Errorf("a stopped job still stamps: read %d", after.Read)
	}
}
