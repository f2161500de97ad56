// Package migrations holds the numbered SQL files that build the schema, embedded in the binary.
// Files are named NNNN_words.sql and applied in number order by store.Migrate.
package migrations

import "embed"

// Files holds every migration; store reads them in name order.
//
//go:embed *.sql
var Files embed.FS
