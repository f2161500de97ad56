package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"os"
	"path/filepath"
)

// ErrBackupPostgres is Backup's answer on PostgreSQL.
var ErrBackupPostgres = errorf(CodeInvalid, "backup copies a SQLite file; this database is PostgreSQL: "+
	"use pg_dump (for example pg_dump --format=custom --file=pertinent.dump DBNAME) and pg_restore to restore")

// Backup writes a consistent copy of the database to path while the server keeps serving.
// VACUUM INTO reads one snapshot of the database in a single read transaction, so writers
// carry on meanwhile and the copy holds every transaction committed before it started.
// The copy is written beside the target and renamed into place only once it is complete and
// passes SQLite's integrity check, so a failed backup never leaves a half-written file.
//
// On PostgreSQL it refuses with ErrBackupPostgres: the server's own pg_dump takes a
// consistent copy of a live database, and the store has no file to copy.
func (s *Store) Backup(ctx context.Context, path string) error {
	if s.pg {
		return ErrBackupPostgres
	}
	if _, err := os.Stat(path); err == nil {
		return fmt.Errorf("store: backup: %s exists already; choose a new file", path)
	}
	tmp, err := os.CreateTemp(filepath.Dir(path), ".backup-*.db")
	if err != nil {
		return fmt.Errorf("store: backup: %w", err)
	}
	tmpName := tmp.Name()
	tmp.Close()
	os.Remove(tmpName) // VACUUM INTO wants to create the file itself
	defer os.Remove(tmpName)

	// A connection of its own: the writer stays free for judgments, and the read-only pool
	// refuses VACUUM.
	db, err := sql.Open("sqlite", dsn(s.path, false))
	if err != nil {
		return err
	}
	defer db.Close()
	db.SetMaxOpenConns(1)
	if _, err := db.ExecContext(ctx, `VACUUM INTO ?`, tmpName); err != nil {
		return fmt.Errorf("store: backup: %w", err)
	}
	if err := IntegrityCheck(ctx, tmpName); err != nil {
		return fmt.Errorf("store: backup copy failed its check: %w", err)
	}
	if err := os.Rename(tmpName, path); err != nil {
		return fmt.Errorf("store: backup: %w", err)
	}
	return nil
}

// IntegrityCheck runs SQLite's full integrity check on a database file.
func IntegrityCheck(ctx context.Context, path string) error {
	db, err := sql.Open("sqlite", "file:"+path+"?mode=ro")
	if err != nil {
		return err
	}
	defer db.Close()
	var res string
	if err := db.QueryRowContext(ctx, `PRAGMA integrity_check`).Scan(&res); err != nil {
		return err
	}
	if res != "ok" {
		return errors.New(res)
	}
	return nil
}
