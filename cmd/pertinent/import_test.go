package main

import (
	"bytes"
	"context"
	"errors"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/store"
)

func TestImportCommandReportsAndRejects(t *testing.T) {
	ctx := context.Background()
	dir, db := newTestDB(t, "x.db", func(ctx context.Context, st *store.Store) {
		if _, err := st.CreateProject(ctx, store.NewProject{Name: "Boats"}, 0); err != nil {
			t.Fatal(err)
		}
	})
	rows := filepath.Join(dir, "rows.csv")
	os.WriteFile(rows, []byte("query_id,query_text,doc_id,title\nq1,dinghy,d1,Oars\nq1,dinghy,d2,Sail\n"), 0o600)

	run := func(args ...string) (string, error) {
		var out, errOut bytes.Buffer
		err := run(ctx, append([]string{"import"}, args...), &out, &errOut)
		if errOut.Len() > 0 && !strings.Contains(errOut.String(), "Usage") {
			t.Logf("stderr: %s", errOut.String())
		}
		return out.String(), err
	}
	out, err := run("rows", "--db", db, "--project", "Boats", "--dry-run", rows)
	if err != nil || !strings.Contains(out, "dry run") || !regexpLine(out, "pairs", "2", "0", "0") {
		t.Fatalf("dry run: %v\n%s", err, out)
	}
	out, err = run("rows", "--db", db, "--project", "Boats", rows)
	if err != nil || !regexpLine(out, "documents", "2", "0", "0") {
		t.Fatalf("import: %v\n%s", err, out)
	}
	out, err = run("rows", "--db", db, "--project", "Boats", rows)
	if err != nil || !regexpLine(out, "pairs", "0", "0", "2") {
		t.Fatalf("second import: %v\n%s", err, out)
	}
	bad := filepath.Join(dir, "bad.run")
	os.WriteFile(bad, []byte("q1 Q0 d1 1 2.0 bm25\nq1 Q0 d9 2 1.0 bm25\n"), 0o600)
	out, err = run("runs", "--db", db, "--project", "Boats", "--depth", "5", bad)
	if !errors.Is(err, errRejected) || !strings.Contains(out, bad+`:2: column 3 (doc id): no document "d9"`) {
		t.Fatalf("rejected run: %v\n%s", err, out)
	}
	if _, err := run("rows", "--db", db, "--project", "Nope", rows); err == nil {
		t.Error("an unknown project was accepted")
	}
}

// regexpLine reports whether out has a report line for what with these three counts.
func regexpLine(out, what string, counts ...string) bool {
	for _, line := range strings.Split(out, "\n") {
		f := strings.Fields(line)
		if len(f) == 4 && f[0] == what && f[1] == counts[0] && f[2] == counts[1] && f[3] == counts[2] {
			return true
		}
	}
	return false
}
