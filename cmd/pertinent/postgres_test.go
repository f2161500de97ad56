package main

import (
	"bytes"
	"context"
	"errors"
	"io"
	"net/http"
	"os"
	"path/filepath"
	"regexp"
	"strings"
	"sync"
	"testing"
	"time"

	"golang.org/x/crypto/bcrypt"

	"github.com/pertinent/pertinent/internal/pgtest"
	"github.com/pertinent/pertinent/store"
)

// syncBuffer is a bytes.Buffer safe to read while a command writes to it.
type syncBuffer struct {
	mu sync.Mutex
	b  bytes.Buffer
}

func (s *syncBuffer) Write(p []byte) (int, error) {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.Write(p)
}

func (s *syncBuffer) String() string {
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.b.String()
}

// runDemoOnce runs `pertinent demo --db db` until it serves, fetches its sign-in page over
// loopback, and stops it as Ctrl-C would.
func runDemoOnce(t *testing.T, db string) {
	t.Helper()
	ctx, cancel := context.WithCancel(context.Background())
	defer cancel()
	var stdout, stderr syncBuffer
	done := make(chan error, 1)
	go func() { done <- run(ctx, []string{"demo", "--db", db, "--addr", "127.0.0.1:0"}, &stdout, &stderr) }()
	addr := regexp.MustCompile(`open http://([^/]+)/`)
	deadline := time.Now().Add(60 * time.Second)
	var m []string
	for m == nil {
		select {
		case err := <-done:
			t.Fatalf("demo ended before serving: %v\n%s", err, stderr.String())
		case <-time.After(20 * time.Millisecond):
		}
		if time.Now().After(deadline) {
			t.Fatalf("demo did not serve within a minute:\n%s\n%s", stdout.String(), stderr.String())
		}
		if strings.Contains(stdout.String(), "press Ctrl-C") {
			m = addr.FindStringSubmatch(stdout.String())
		}
	}
	if strings.Contains(stdout.String(), "password=") || strings.Contains(stdout.String(), ":secret@") {
		t.Errorf("demo printed a connection string's password:\n%s", stdout.String())
	}
	resp, err := http.Get("http://" + m[1] + "/signin")
	if err != nil {
		t.Fatal(err)
	}
	body, _ := io.ReadAll(resp.Body)
	resp.Body.Close()
	if resp.StatusCode != http.StatusOK || !bytes.Contains(body, []byte("<form")) {
		t.Errorf("demo's sign-in page: %d\n%.300s", resp.StatusCode, body)
	}
	cancel()
	if err := <-done; err != nil && !errors.Is(err, context.Canceled) {
		t.Fatalf("demo: %v\n%s", err, stderr.String())
	}
}

// exportFiles runs `pertinent export` of the demo project and returns every file it wrote
// but the manifest, which names the time of the export.
func exportFiles(t *testing.T, db, format string) map[string]string {
	t.Helper()
	out := t.TempDir()
	var stdout, stderr bytes.Buffer
	err := run(context.Background(), []string{"export", "--db", db, "--project", demoProjectName, "--format", format,
		"--out", out, "--split", "0.6,0.2,0.2"}, &stdout, &stderr)
	if err != nil {
		t.Fatalf("export %s: %v\n%s", format, err, stderr.String())
	}
	files := map[string]string{}
	entries, err := os.ReadDir(out)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range entries {
		if strings.Contains(e.Name(), "manifest") {
			continue
		}
		b, err := os.ReadFile(filepath.Join(out, e.Name()))
		if err != nil {
			t.Fatal(err)
		}
		files[e.Name()] = string(b)
	}
	if len(files) == 0 {
		t.Fatalf("export %s wrote nothing but the manifest", format)
	}
	return files
}

// The demo served from PostgreSQL exports the same training files as the demo from SQLite:
// the same collection, judgments, label policy and split, byte for byte.
func TestDemoAndExportOnPostgresMatchSQLite(t *testing.T) {
	store.SetPasswordCost(bcrypt.MinCost)
	lite := filepath.Join(t.TempDir(), "demo.db")
	pg := pgtest.New(t)
	runDemoOnce(t, lite)
	runDemoOnce(t, pg)
	for _, format := range []string{"qrels", "svmlight"} {
		want, got := exportFiles(t, lite, format), exportFiles(t, pg, format)
		for name, w := range want {
			g, ok := got[name]
			switch {
			case !ok:
				t.Errorf("%s: PostgreSQL's export has no %s", format, name)
			case g != w:
				t.Errorf("%s: %s differs between SQLite (%d bytes) and PostgreSQL (%d bytes)\nSQLite:\n%.400s\nPostgreSQL:\n%.400s",
					format, name, len(w), len(g), w, g)
			}
		}
		for name := range got {
			if _, ok := want[name]; !ok {
				t.Errorf("%s: PostgreSQL's export has %s, SQLite's does not", format, name)
			}
		}
	}
}

// backup on PostgreSQL says to use pg_dump, whatever else is given, and opens nothing.
func TestBackupOnPostgresPointsToPgDump(t *testing.T) {
	var stdout, stderr bytes.Buffer
	err := run(context.Background(), []string{"backup", "--db", "postgres://pertinent@localhost/nowhere"}, &stdout, &stderr)
	if err == nil || !strings.Contains(err.Error(), "pg_dump") {
		t.Fatalf("backup on PostgreSQL: %v, want a message naming pg_dump", err)
	}
}

// loadtest on PostgreSQL starts two instances on the database, spreads the assessors over
// them, and measures pgbench's insert rate on the same cluster as the ceiling.
func TestLoadtestOnTwoPostgresInstances(t *testing.T) {
	if testing.Short() {
		t.Skip("process test; runs without -short")
	}
	dsn := pgtest.New(t)
	bin := buildBinary(t)
	loadServerBinary = func() (string, error) { return bin, nil }
	t.Cleanup(func() { loadServerBinary = os.Executable })
	var stdout, stderr bytes.Buffer
	err := run(context.Background(), []string{"loadtest", "--db", dsn, "--instances", "2", "--assessors", "8", "--pairs", "200",
		"--count", "60", "--duration", "20s"}, &stdout, &stderr)
	if err != nil {
		t.Fatalf("loadtest: %v\n%s\n%s", err, stdout.String(), stderr.String())
	}
	out := stdout.String()
	for _, want := range []string{"on 2 instance(s)", ", 0 errors", "pgbench single-row insert transactions on the same cluster"} {
		if !strings.Contains(out, want) {
			t.Errorf("loadtest printed no %q:\n%s", want, out)
		}
	}
	if err := run(context.Background(), []string{"loadtest", "--instances", "2"}, &stdout, &stderr); err == nil {
		t.Error("two instances on a SQLite file were accepted")
	}
}
