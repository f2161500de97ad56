// Package ingest parses the files engineers bring into a project: queries,
// documents, pairs (alone or with the query and document inline), run files,
// qrels and per-pair features, and pools runs to depth k.
//
// Every reader streams: it calls fn once per valid record and keeps only
// what duplicate detection needs, so memory stays flat for large files.
// Readers keep scanning after the first problem so that one pass reports
// everything wrong with a file, but they stop calling fn at the first
// problem: a caller that writes records inside a transaction rolls it back
// when the reader returns a *Problems. A nil fn makes a validate-only pass.
//
// The field names of every format are listed in FORMATS.md.
package ingest
