package ingest

import (
	"fmt"
	"io"
)

// Qrel is one prior judgment from a qrels file.
type Qrel struct {
	QueryID string
	DocID   string
	Grade   int
	// Confidence is how sure the source was of the grade, in [0, 1], when the file gives
	// it (HasConfidence): an optional fifth column of our own, for machine sources.
	Confidence    float64
	HasConfidence bool
	Line          int
}

// ReadQrels reads a qrels file: `<query-id> <iteration> <doc-id> <grade>`,
// whitespace-separated, with an optional fifth column `<confidence>` in [0, 1].
// The iteration column may hold any token and is ignored. Grades must lie on
// the scale of Options.Scale; a (query, doc) may appear once.
func ReadQrels(r io.Reader, o Options, fn func(Qrel) error) error {
	scale := o.withDefaults().Scale
	return eachRow(r, o, "<query-id> <iteration> <doc-id> <grade> [<confidence>]", func(c *collector, dups *seen, line int, f []string) error {
		q := Qrel{QueryID: f[0], DocID: f[2], Line: line}
		ok := idField(c, line, 1, "query id", f[0])
		ok = idField(c, line, 3, "doc id", f[2]) && ok
		var why string
		if q.Grade, why = parseInt(f[3]); why == "" {
			why = checkGrade(q.Grade, scale)
		}
		if why != "" {
			c.add(line, column(4, "grade"), why)
			ok = false
		}
		if f[4] != "" {
			q.HasConfidence = true
			if q.Confidence, why = parseFloat(f[4]); why == "" && (q.Confidence < 0 || q.Confidence > 1) {
				why = fmt.Sprintf("confidence %s is outside 0..1", f[4])
			}
			if why != "" {
				c.add(line, column(5, "confidence"), why)
				ok = false
			}
		}
		if !ok {
			return nil
		}
		if first, dup := dups.add(dups.key(q.QueryID, q.DocID), line); dup {
			c.addf(line, "", "duplicate pair (%s, %s) (first at line %d)", quote(q.QueryID), quote(q.DocID), first)
			return nil
		}
		return deliver(c, fn, q)
	})
}
