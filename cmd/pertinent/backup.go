package main

import (
	"context"
	"errors"
	"fmt"
	"io"
	"time"

	"github.com/pertinent/pertinent/store"
)

// runBackup copies a live database to a new file, safe to run while the server serves.
func runBackup(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := newFlags("backup", stderr)
	db := dbFlag(fs, "pertinent.db")
	to := fs.String("to", "", "file to write the copy to; it must not exist")
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *to == "" {
		return errors.New("backup: --to FILE is required")
	}
	st, err := store.Open(ctx, *db)
	if err != nil {
		return err
	}
	defer st.Close()
	start := time.Now()
	if err := st.Backup(ctx, *to); err != nil {
		return err
	}
	fmt.Fprintf(stdout, "copied %s to %s in %s; the copy passed its integrity check\n", *db, *to, time.Since(start).Round(time.Millisecond))
	return nil
}
