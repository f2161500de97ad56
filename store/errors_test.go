package store

import (
	"context"
	"database/sql"
	"errors"
	"path/filepath"
	"testing"
)

// A duplicate username is a conflict, found from the driver's error code.
func TestDuplicateUsernameIsConflict(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	if _, err := s.CreateUser(ctx, "mara", "", RoleAssessor, "long enough password"); err != nil {
		t.Fatal(err)
	}
	_, err := s.CreateUser(ctx, "mara", "", RoleAssessor, "long enough password")
	if ErrorCode(err) != CodeConflict {
		t.Fatalf("second mara: %v (code %d), want CodeConflict", err, ErrorCode(err))
	}
}

// isUniqueViolation answers from the driver's code: unique and primary-key violations
// are, other constraint errors are not, even when their message reads like one.
func TestIsUniqueViolationByCode(t *testing.T) {
	ctx := context.Background()
	db, err := sql.Open("sqlite", "file:"+filepath.Join(t.TempDir(), "c.db")+"?_pragma=foreign_keys(1)")
	if err != nil {
		t.Fatal(err)
	}
	defer db.Close()
	db.SetMaxOpenConns(1)
	for _, q := range []string{
		`CREATE TABLE parent(id INTEGER PRIMARY KEY, name TEXT NOT NULL UNIQUE)`,
		`CREATE TABLE keyed(k TEXT PRIMARY KEY) WITHOUT ROWID`,
		`CREATE TABLE child(parent_id INTEGER NOT NULL REFERENCES parent(id), v INTEGER CHECK (v >= 0))`,
		`CREATE TRIGGER child_says BEFORE INSERT ON child WHEN NEW.v = 99 BEGIN SELECT RAISE(ABORT, 'UNIQUE constraint failed: child.v'); END`,
		`INSERT INTO parent(id, name) VALUES (1, 'a')`,
		`INSERT INTO keyed(k) VALUES ('a')`,
	} {
		if _, err := db.ExecContext(ctx, q); err != nil {
			t.Fatal(q, err)
		}
	}
	cases := []struct {
		name, sql string
		unique    bool
	}{
		{"unique column", `INSERT INTO parent(id, name) VALUES (2, 'a')`, true},
		{"integer primary key", `INSERT INTO parent(id, name) VALUES (1, 'b')`, true},
		{"text primary key", `INSERT INTO keyed(k) VALUES ('a')`, true},
		{"foreign key", `INSERT INTO child(parent_id, v) VALUES (7, 1)`, false},
		{"not null", `INSERT INTO parent(id, name) VALUES (3, NULL)`, false},
		{"check", `INSERT INTO child(parent_id, v) VALUES (1, -1)`, false},
		{"trigger with a unique-sounding message", `INSERT INTO child(parent_id, v) VALUES (1, 99)`, false},
	}
	for _, c := range cases {
		_, err := db.ExecContext(ctx, c.sql)
		if err == nil {
			t.Errorf("%s: no error", c.name)
			continue
		}
		if got := isUniqueViolation(err); got != c.unique {
			t.Errorf("%s (%v): isUniqueViolation = %v, want %v", c.name, err, got, c.unique)
		}
	}
	if isUniqueViolation(nil) || isUniqueViolation(errors.New("UNIQUE constraint failed: users.username")) {
		t.Error("an error that is not the driver's counts as a unique violation")
	}
}
