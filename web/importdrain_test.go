package web

import (
	"context"
	"database/sql"
	"fmt"
	"io"
	"log/slog"
	"net/http"
	"net/http/httptest"
	"os"
	"reflect"
	"strings"
	"testing"
	"time"

	"github.com/pertinent/pertinent/store"
)

// tableDump reads every row of every table of the database file, as text, in rowid order.
// Sessions are left out: reading a page may touch the caller's session.
func tableDump(t *testing.T, path string) map[string][]string {
	t.Helper()
	driver, dsn := "sqlite", "file:"+path+"?mode=ro"
	tablesSQL := `SELECT name FROM sqlite_schema WHERE type = 'table' AND name NOT LIKE 'sqlite_%' AND name != 'sessions'`
	if store.IsPostgres(path) {
		driver, dsn = "pgx", path
		tablesSQL = `SELECT tablename FROM pg_tables WHERE schemaname = current_schema() AND tablename != 'sessions'`
	}
	db, err := sql.Open(driver, dsn)
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	ctx := context.Background()
	rows, err := db.QueryContext(ctx, tablesSQL)
	if err != nil {
		t.Fatal(err)
	}
	var tables []string
	for rows.Next() {
		var n string
		rows.Scan(&n)
		tables = append(tables, n)
	}
	rows.Close()
	out := map[string][]string{}
	for _, name := range tables {
		// The names come from the schema itself, not from any input.
		rs, err := db.QueryContext(ctx, `SELECT * FROM "`+name+`"`)
		if err != nil {
			t.Fatal(name, err)
		}
		cols, _ := rs.Columns()
		for rs.Next() {
			vals := make([]any, len(cols))
			ptrs := make([]any, len(cols))
			for i := range vals {
				ptrs[i] = &vals[i]
			}
			if err := rs.Scan(ptrs...); err != nil {
				t.Fatal(err)
			}
			out[name] = append(out[name], fmt.Sprint(vals...))
		}
		rs.Close()
	}
	return out
}

// Stopping the server during a large import interrupts it: the import rolls back, so every
// table is as before, its uploaded file is removed, its status says so, and a new import
// is refused while the server stops.
func TestShutdownInterruptsAndRollsBackAnImport(t *testing.T) {
	a := newTestApp(t)
	uploads := t.TempDir()
	srv, err := New(context.Background(), a.store, Options{Logger: slog.New(slog.NewTextHandler(io.Discard, nil)),
		UploadDir: uploads, ImportWait: 50 * time.Millisecond})
	if err != nil {
		t.Fatal(err)
	}
	ts := httptest.NewUnstartedServer(nil)
	ts.Config = srv.HTTPServer()
	ts.Start()
	t.Cleanup(ts.Close)
	a.server = ts
	lead := a.signIn("lena")

	var rows strings.Builder
	rows.WriteString("query_id,query_text,doc_id,title,body,priority\n")
	for i := range 200_000 {
		fmt.Fprintf(&rows, "big%d,big query %d,bigdoc%d,Title %d,Body of document %d,%d\n", i/50, i/50, i, i, i, i%7)
	}
	before := tableDump(t, a.store.Path())
	res := a.postImport(lead, a.project.ID, map[string]string{"kind": "rows"}, "big.csv", rows.String())
	if res.StatusCode != http.StatusSeeOther {
		t.Fatalf("import post: %d", res.StatusCode)
	}
	loc := res.Header.Get("Location")
	job := srv.jobs.get(loc[strings.LastIndex(loc, "/")+1:], a.project.ID)
	if job == nil {
		t.Fatalf("no job behind %s", loc)
	}
	// Stop once a quarter of the file has been read, so rows have been written.
	for job.read.Load() < job.total/4 {
		if job.view(time.Now()).Done {
			t.Fatal("the import finished before a quarter of it was read")
		}
		time.Sleep(time.Millisecond)
	}
	if err := srv.Shutdown(context.Background()); err != nil {
		t.Fatal(err)
	}
	v := job.view(time.Now())
	if !v.Done || !strings.Contains(v.Failure, "interrupted") {
		t.Errorf("after the stop the job is done=%v failure=%q, want an interrupted job", v.Done, v.Failure)
	}
	// The database says so too, for every instance, and the job has left the stopped server.
	if srv.jobs.get(job.id, a.project.ID) != nil {
		t.Error("the interrupted job is still held by the stopped server")
	}
	if j, err := a.store.ImportJob(context.Background(), job.id, a.project.ID); err != nil || !j.Done ||
		j.Outcome.Failure != "The import was interrupted because the server stopped; nothing was changed." || j.Outcome.Report.Changed() {
		t.Errorf("after the stop the database holds %+v (%v), want an interrupted job", j, err)
	}
	after := tableDump(t, a.store.Path())
	// The job's own row is the one change: it records the interruption.
	if n := len(after["import_jobs"]); n != 1 {
		t.Errorf("%d import_jobs rows after the stop, want the interrupted job's", n)
	}
	delete(after, "import_jobs")
	if !reflect.DeepEqual(before, after) {
		for name := range after {
			if len(after[name]) != len(before[name]) {
				t.Errorf("table %s: %d rows before, %d after", name, len(before[name]), len(after[name]))
			}
		}
		t.Error("the interrupted import changed the database")
	}
	if left, _ := os.ReadDir(uploads); len(left) > 0 {
		t.Errorf("uploaded files left behind: %v", left)
	}
	// A stopping server takes no new import, and keeps none of its files.
	if res := a.postImport(lead, a.project.ID, map[string]string{"kind": "rows"}, "late.csv", webRows); res.StatusCode != http.StatusServiceUnavailable {
		t.Errorf("import during the stop: %d, want 503", res.StatusCode)
	}
	if left, _ := os.ReadDir(uploads); len(left) > 0 {
		t.Errorf("files of a refused upload left behind: %v", left)
	}
}
