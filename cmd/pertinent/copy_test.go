package main

import (
	"bytes"
	"context"
	"path/filepath"
	"strings"
	"testing"

	"golang.org/x/crypto/bcrypt"

	"github.com/pertinent/pertinent/internal/pgtest"
	"github.com/pertinent/pertinent/store"
)

// `pertinent copy` moves the demo from its SQLite file into PostgreSQL: it reports every table
// checked, and the copy exports what the file exports, byte for byte. A second copy into the
// same database is refused and changes nothing.
func TestCopyMovesTheDemoIntoPostgres(t *testing.T) {
	store.SetPasswordCost(bcrypt.MinCost)
	lite := filepath.Join(t.TempDir(), "demo.db")
	pg := pgtest.New(t)
	runDemoOnce(t, lite)
	var stdout, stderr bytes.Buffer
	if err := run(context.Background(), []string{"copy", "--from", lite, "--to", pg}, &stdout, &stderr); err != nil {
		t.Fatalf("copy: %v\n%s", err, stderr.String())
	}
	if !strings.Contains(stdout.String(), "every table's count and checksum match") || !strings.Contains(stdout.String(), "judgments") {
		t.Fatalf("copy's report:\n%s", stdout.String())
	}
	for _, format := range []string{"qrels", "svmlight", "jsonl"} {
		want, got := exportFiles(t, lite, format), exportFiles(t, pg, format)
		if len(got) != len(want) {
			t.Errorf("%s: %d files from the copy, %d from the file", format, len(got), len(want))
		}
		for name, w := range want {
			if got[name] != w {
				t.Errorf("%s: %s differs between the file and its copy", format, name)
			}
		}
	}
	stdout.Reset()
	err := run(context.Background(), []string{"copy", "--from", lite, "--to", pg}, &stdout, &stderr)
	if err == nil || !strings.Contains(err.Error(), "already holds") {
		t.Fatalf("a second copy: %v", err)
	}
	if err := run(context.Background(), []string{"copy", "--from", pg, "--to", lite}, &stdout, &stderr); err == nil {
		t.Fatal("a copy from PostgreSQL into a file was accepted")
	}
}
