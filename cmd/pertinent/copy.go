package main

import (
	"context"
	"errors"
	"flag"
	"fmt"
	"io"
	"os"
	"text/tabwriter"
	"time"

	"github.com/pertinent/pertinent/store"
)

// runCopy moves an installation from its SQLite file into a PostgreSQL database: every row of
// every table, checked by count and checksum, in one transaction on the target.
func runCopy(ctx context.Context, args []string, stdout, stderr io.Writer) error {
	fs := flag.NewFlagSet("copy", flag.ContinueOnError)
	fs.SetOutput(stderr)
	from := fs.String("from", "", "the SQLite file to copy (stop the server on it first)")
	to := fs.String("to", os.Getenv("PERTINENT_DB"), "the PostgreSQL database to copy into: postgres://user@host/db?sslmode=... (env PERTINENT_DB); empty or freshly migrated")
	fs.Usage = func() {
		fmt.Fprintln(stderr, "usage: pertinent copy --from FILE.db --to postgres://USER@HOST/DB")
		fs.PrintDefaults()
	}
	if err := fs.Parse(args); err != nil {
		return err
	}
	if *from == "" || *to == "" {
		return errors.New("copy: --from FILE and --to postgres://... are both needed")
	}
	if store.IsPostgres(*from) || !store.IsPostgres(*to) {
		return errors.New("copy: --from is a SQLite file and --to a postgres:// connection string")
	}
	if _, err := os.Stat(*from); err != nil {
		return fmt.Errorf("copy: %w", err)
	}
	src, err := store.Open(ctx, *from)
	if err != nil {
		return err
	}
	defer src.Close()
	dst, err := store.Open(ctx, *to)
	if err != nil {
		return err
	}
	defer dst.Close()
	start := time.Now()
	tables, err := store.Copy(ctx, src, dst)
	if err != nil {
		return fmt.Errorf("copy: %w (nothing was written)", err)
	}
	tw := tabwriter.NewWriter(stdout, 0, 4, 2, ' ', 0)
	fmt.Fprintln(tw, "TABLE\tROWS\tCHECKSUM")
	var rows int64
	for _, t := range tables {
		fmt.Fprintf(tw, "%s\t%d\t%s\n", t.Name, t.Rows, t.Checksum)
		rows += t.Rows
	}
	tw.Flush()
	fmt.Fprintf(stdout, "copied %d rows of %d tables in %s; every table's count and checksum match the file's\n",
		rows, len(tables), time.Since(start).Round(time.Millisecond))
	return nil
}
