package store

import (
	"context"
	"database/sql"
	"fmt"
	"time"
)

// PostgreSQL's schema_migrations holds the same columns as SQLite's (migrate.go).
const (
	pgCreateMigrations = `CREATE TABLE IF NOT EXISTS schema_migrations (
		version bigint PRIMARY KEY, name text NOT NULL, applied_at text NOT NULL)`
	// Two processes starting together must not both apply a migration: the second waits here
	// for the first's transaction, then finds the version recorded.
	pgLockMigrations   = `LOCK TABLE schema_migrations IN SHARE ROW EXCLUSIVE MODE`
	pgMigrationApplied = `SELECT EXISTS (SELECT 1 FROM schema_migrations WHERE version = $1)`
	pgRecordMigration  = `INSERT INTO schema_migrations(version, name, applied_at) VALUES ($1, $2, $3)`
	// The key is any constant of our own: advisory locks are per database.
	pgLockMigrate   = `SELECT pg_advisory_lock(7250101)`
	pgUnlockMigrate = `SELECT pg_advisory_unlock(7250101)`
)

// MigratePostgres applies to db every PostgreSQL migration not yet recorded in
// schema_migrations, in number order, each in its own transaction together with its record,
// as Migrate does for SQLite (PostgreSQL's DDL is transactional, so a failure leaves the
// schema at the last good step). db is a database/sql handle of a PostgreSQL driver, such
// as github.com/jackc/pgx/v5/stdlib's; migrations with several statements run as one
// statement without parameters, which pgx sends over the simple protocol.
func MigratePostgres(ctx context.Context, db *sql.DB) error {
	// Instances starting together on a new database would race on creating
	// schema_migrations itself (PostgreSQL's CREATE TABLE IF NOT EXISTS is not safe against
	// a concurrent one), so the whole migration holds a session advisory lock on one
	// connection; a second instance waits, then finds everything recorded.
	conn, err := db.Conn(ctx)
	if err != nil {
		return fmt.Errorf("store: migrate: %w", err)
	}
	defer conn.Close()
	if _, err := conn.ExecContext(ctx, pgLockMigrate); err != nil {
		return fmt.Errorf("store: migrate: %w", err)
	}
	defer conn.ExecContext(context.WithoutCancel(ctx), pgUnlockMigrate)
	if _, err := conn.ExecContext(ctx, pgCreateMigrations); err != nil {
		return fmt.Errorf("store: migrate: %w", err)
	}
	all, err := PostgresMigrations()
	if err != nil {
		return err
	}
	for _, m := range all {
		if err := pgApply(ctx, conn, m); err != nil {
			return fmt.Errorf("store: migration %s: %w", m.Name, err)
		}
	}
	return nil
}

// pgApply runs one migration and records it, unless it is recorded already.
func pgApply(ctx context.Context, db *sql.Conn, m Migration) error {
	tx, err := db.BeginTx(ctx, nil)
	if err != nil {
		return err
	}
	defer tx.Rollback() // ends a failed transaction; a no-op after Commit
	if _, err := tx.ExecContext(ctx, pgLockMigrations); err != nil {
		return err
	}
	var applied bool
	if err := tx.QueryRowContext(ctx, pgMigrationApplied, m.Version).Scan(&applied); err != nil {
		return err
	}
	if applied {
		return tx.Commit()
	}
	if _, err := tx.ExecContext(ctx, m.SQL); err != nil {
		return err
	}
	if _, err := tx.ExecContext(ctx, pgRecordMigration, m.Version, m.Name, timeText(time.Now())); err != nil {
		return err
	}
	return tx.Commit()
}
