package main

import (
	"context"
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

// testProject finds the project of that name or fails the test.
func testProject(t *testing.T, st *store.Store, name string) store.Project {
	t.Helper()
	p, err := st.ProjectByName(context.Background(), name)
	if err != nil {
		t.Fatal(err)
	}
	return p
}
