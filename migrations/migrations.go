// Package migrations holds the numbered SQL files that build the schema, embedded in the binary.
// Files are named NNNN_words.sql and applied in number order by store.Migrate. The SQLite
// files sit in this folder; postgres/ holds the same sequence, file for file, for PostgreSQL.
package migrations

import (
	"embed"
	"io/fs"
)

// Files holds every SQLite migration; store reads them in name order.
//
//go:embed *.sql
var Files embed.FS

//go:embed postgres/*.sql
var postgresFiles embed.FS

// Postgres holds the PostgreSQL migrations, named exactly as their SQLite counterparts.
var Postgres = mustSub(postgresFiles, "postgres")

func mustSub(fsys fs.FS, dir string) fs.FS {
	sub, err := fs.Sub(fsys, dir)
	if err != nil {
		panic(err) // only for a malformed constant folder name
	}
	return sub
}
