package main

import (
	"context"
	"os"
	"path/filepath"
	"testing"

	"golang.org/x/crypto/bcrypt"

	"github.com/pertinent/pertinent/store"
)

// openTestStore opens (creating it if need be) the database file at path with cheap
// password hashing, and closes it when the test ends.
func openTestStore(t *testing.T, path string) *store.Store {
	t.Helper()
	store.SetPasswordCost(bcrypt.MinCost)
	st, err := store.Open(context.Background(), path)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { st.Close() })
	return st
}

// newTestDB creates the database file name in a new temporary directory with cheap password
// hashing, lets fill add to it, and closes it again, so that the command under test has the
// file to itself. It returns the directory and the file's path.
func newTestDB(t *testing.T, name string, fill func(ctx context.Context, st *store.Store)) (dir, path string) {
	t.Helper()
	store.SetPasswordCost(bcrypt.MinCost)
	dir = t.TempDir()
	path = filepath.Join(dir, name)
	st, err := store.Open(context.Background(), path)
	if err != nil {
		t.Fatal(err)
	}
	defer st.Close()
	fill(context.Background(), st)
	return dir, path
}

// writeFile writes body to a file of that name in a new temporary directory.
func writeFile(t *testing.T, name, body string) string {
	t.Helper()
	p := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(p, []byte(body), 0o644); err != nil {
		t.Fatal(err)
	}
	return p
}

// testProject finds the project of that name or fails the test.
func testProject(t *testing.T, st *store.Store, name string) store.Project {
	t.Helper()
	p, err := st.ProjectByName(context.Background(), name)
	if err != nil {
		t.Fatal(err)
	}
	return p
}
