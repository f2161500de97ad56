package store

import (
	"context"
	"database/sql"
	"fmt"
	"io/fs"
	"sort"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent/migrations"
)

// Migration is one numbered schema file.
type Migration struct {
	Version int
	Name    string
	SQL     string
}

// Migrations lists the embedded SQLite migrations in version order.
func Migrations() ([]Migration, error) { return migrationsIn(migrations.Files) }

// PostgresMigrations lists the embedded PostgreSQL migrations in version order: the same
// numbers and names as Migrations, each translated.
func PostgresMigrations() ([]Migration, error) { return migrationsIn(migrations.Postgres) }

func migrationsIn(files fs.FS) ([]Migration, error) {
	names, err := fs.Glob(files, "*.sql")
	if err != nil {
		return nil, err
	}
	sort.Strings(names)
	var out []Migration
	for _, name := range names {
		num, _, ok := strings.Cut(name, "_")
		v, err := strconv.Atoi(num)
		if !ok || err != nil {
			return nil, fmt.Errorf("store: migration %q is not named NNNN_words.sql", name)
		}
		body, err := fs.ReadFile(files, name)
		if err != nil {
			return nil, err
		}
		if len(out) > 0 && out[len(out)-1].Version == v {
			return nil, fmt.Errorf("store: two migrations numbered %d", v)
		}
		out = append(out, Migration{Version: v, Name: name, SQL: string(body)})
	}
	return out, nil
}

// Migrate applies every migration not yet recorded in schema_migrations, in number order,
// each in its own transaction together with its record, so a failure leaves the file at the
// last good step. Going by the record rather than by the highest number means a migration
// merged out of order is still applied.
func (s *Store) Migrate(ctx context.Context) error {
	if s.pg {
		return MigratePostgres(ctx, s.w)
	}
	if _, err := s.w.ExecContext(ctx, `CREATE TABLE IF NOT EXISTS schema_migrations (
		version INTEGER PRIMARY KEY, name TEXT NOT NULL, applied_at TEXT NOT NULL)`); err != nil {
		return fmt.Errorf("store: migrate: %w", err)
	}
	applied := map[int]bool{}
	versions, err := queryAll(ctx, s.w, `SELECT version FROM schema_migrations`, scanValue[int])
	if err != nil {
		return fmt.Errorf("store: migrate: %w", err)
	}
	for _, v := range versions {
		applied[v] = true
	}
	all, err := Migrations()
	if err != nil {
		return err
	}
	for _, m := range all {
		if applied[m.Version] {
			continue
		}
		err := s.write(ctx, func(tx *sql.Tx) error {
			if _, err := tx.ExecContext(ctx, m.SQL); err != nil {
				return err
			}
			_, err := tx.ExecContext(ctx, `INSERT INTO schema_migrations(version, name, applied_at) VALUES (?, ?, ?)`,
				m.Version, m.Name, s.now())
			return err
		})
		if err != nil {
			return fmt.Errorf("store: migration %s: %w", m.Name, err)
		}
	}
	return nil
}

// SchemaVersion is the newest applied migration, 0 for an empty file.
func (s *Store) SchemaVersion(ctx context.Context) (int, error) {
	var v sql.NullInt64
	err := s.w.QueryRowContext(ctx, `SELECT MAX(version) FROM schema_migrations`).Scan(&v)
	if err != nil {
		return 0, fmt.Errorf("store: schema version: %w", err)
	}
	return int(v.Int64), nil
}

// Tables lists the user tables of the database, for checks of the schema.
func (s *Store) Tables(ctx context.Context) ([]string, error) {
	return queryAll(ctx, s.r, s.dialect(sqliteTablesSQL, postgresTablesSQL), scanValue[string])
}

const (
	sqliteTablesSQL   = `SELECT name FROM sqlite_schema WHERE type = 'table' AND name NOT LIKE 'sqlite_%' ORDER BY name`
	postgresTablesSQL = `SELECT tablename FROM pg_tables WHERE schemaname = current_schema() ORDER BY tablename`
)
