package store

import (
	"context"
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"reflect"
	"slices"
	"strings"
	"sync"
	"sync/atomic"
	"testing"

	"github.com/pertinent/pertinent/internal/pgtest"
)

// dump reads every row of every table as text, rows sorted (so any order of storage compares
// equal; a table may have a single column).
func dump(t *testing.T, s *Store) map[string][][]string {
	t.Helper()
	ctx := context.Background()
	tables, err := s.Tables(ctx)
	if err != nil {
		t.Fatal(err)
	}
	out := map[string][][]string{}
	for _, tbl := range tables {
		rows, err := s.r.QueryContext(ctx, fmt.Sprintf(`SELECT * FROM %q`, tbl))
		if err != nil {
			t.Fatal(tbl, err)
		}
		for rows.Next() {
			vals := scanAny(t, rows)
			row := make([]string, len(vals))
			for i, v := range vals {
				row[i] = fmt.Sprintf("%T:%v", v, v)
			}
			out[tbl] = append(out[tbl], row)
		}
		rows.Close()
		slices.SortFunc(out[tbl], slices.Compare)
	}
	return out
}

func TestBackupWhileWritingThenRestore(t *testing.T) {
	s := openSQLiteTest(t) // a file copy; PostgreSQL refuses it (TestBackupOnPostgresPointsToPgDump)
	ctx := context.Background()
	p, _, _, users := fixture(t, s, 20, 10, 6)
	dir := t.TempDir()

	// Assessors keep judging while the first backup is taken.
	var stop atomic.Bool
	var wg sync.WaitGroup
	for _, u := range users {
		wg.Add(1)
		go func(u int64) {
			defer wg.Done()
			for !stop.Load() {
				v, err := s.NextPair(ctx, p.ID, u)
				if err != nil {
					return
				}
				g := 1
				s.Submit(ctx, Submission{PairID: v.PairID, UserID: u, Grade: &g})
			}
		}(u)
	}
	online := filepath.Join(dir, "online.db")
	err := s.Backup(ctx, online)
	stop.Store(true)
	wg.Wait()
	if err != nil {
		t.Fatal(err)
	}
	if err := IntegrityCheck(ctx, online); err != nil {
		t.Fatalf("online copy: %v", err)
	}
	// Every judgment in the online copy is in the source, identical.
	copyOnline, err := Open(ctx, online)
	if err != nil {
		t.Fatal(err)
	}
	src := dump(t, s)
	got := dump(t, copyOnline)
	copyOnline.Close()
	srcJ := map[string]bool{}
	for _, r := range src["judgments"] {
		srcJ[fmt.Sprint(r[:9])] = true // the immutable columns (current may change later)
	}
	for _, r := range got["judgments"] {
		if !srcJ[fmt.Sprint(r[:9])] {
			t.Fatalf("online copy holds a judgment the source does not: %v", r)
		}
	}

	// At rest, a restored copy equals the source table by table.
	quiet := filepath.Join(dir, "quiet.db")
	if err := s.Backup(ctx, quiet); err != nil {
		t.Fatal(err)
	}
	restored, err := Open(ctx, quiet)
	if err != nil {
		t.Fatal(err)
	}
	defer restored.Close()
	want := dump(t, s)
	have := dump(t, restored)
	if len(want["judgments"]) == 0 {
		t.Fatal("the test wrote no judgments; it proves nothing")
	}
	for tbl := range want {
		if !reflect.DeepEqual(want[tbl], have[tbl]) {
			t.Errorf("table %s differs after restore: %d rows vs %d", tbl, len(want[tbl]), len(have[tbl]))
		}
	}
	if err := s.Backup(ctx, quiet); err == nil {
		t.Error("a backup over an existing file was allowed")
	}
}

// On PostgreSQL a backup is pg_dump's job: Backup says so and writes nothing.
func TestBackupOnPostgresPointsToPgDump(t *testing.T) {
	s := openAt(t, pgtest.New(t))
	path := filepath.Join(t.TempDir(), "copy.db")
	err := s.Backup(context.Background(), path)
	if !errors.Is(err, ErrBackupPostgres) || !strings.Contains(err.Error(), "pg_dump") {
		t.Fatalf("Backup on PostgreSQL: %v, want ErrBackupPostgres naming pg_dump", err)
	}
	if _, err := os.Stat(path); !os.IsNotExist(err) {
		t.Errorf("Backup on PostgreSQL left %s (stat: %v)", path, err)
	}
}
