package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"time"

	"github.com/pertinent/pertinent/store"
)

// runMigrate applies pending migrations and prints the schema version reached.
func runMigrate(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newDBFlags("migrate", stderr)
	// Opening applies every pending migration.
	st, err := fs.parseOpen(ctx, args)
	if err != nil {
		return err
	}
	defer st.Close()
	v, err := st.SchemaVersion(ctx)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "%s is at schema version %d\n", store.DatabaseName(*fs.db), v)
	return nil
}

// runBackup copies a live database to a new file, safe to run while the server serves.
func runBackup(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newDBFlags("backup", stderr)
	to := fs.String("to", "", "file to write the copy to; it must not exist")
	if err := fs.Parse(args); err != nil {
		return err
	}
	// Said before anything else: no --to makes a PostgreSQL database copyable here.
	if store.IsPostgres(*fs.db) {
		return store.ErrBackupPostgres
	}
	if *to == "" {
		return errors.New("backup: --to FILE is required")
	}
	st, err := fs.open(ctx)
	if err != nil {
		return err
	}
	defer st.Close()
	start := time.Now()
	if err := st.Backup(ctx, *to); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "copied %s to %s in %s; the copy passed its integrity check\n", *fs.db, *to, time.Since(start).Round(time.Millisecond))
	return nil
}
