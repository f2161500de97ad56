package main

import (
	"context"
	"fmt"
	"io"

	"github.com/pertinent/pertinent/store"
)

func runMigrate(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("migrate", stderr)
	db := dbFlag(fs, "pertinent.db")
	if err := fs.Parse(args); err != nil {
		return err
	}
	// Open applies every pending migration.
	st, err := store.Open(ctx, *db)
	if err != nil {
		return err
	}
	defer st.Close()
	v, err := st.SchemaVersion(ctx)
	if err != nil {
		return err
	}
	fmt.Fprintf(stdout, "%s is at schema version %d\n", *db, v)
	return nil
}
