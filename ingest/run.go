package ingest

import (
	"fmt"
	"io"
)

// RunEntry is one line of a run file.
type RunEntry struct {
	QueryID string
	DocID   string
	Rank    int // the file's rank column; pooling orders by Score
	Score   float64
	Tag     string
	Line    int
}

// ReadRun reads a run file: `<query-id> Q0 <doc-id> <rank> <score> <run-tag>`,
// whitespace-separated. Column 2 may hold any token and is ignored, since
// tools write Q0, 0 or other placeholders there. A (run-tag, query, doc)
// may appear once.
func ReadRun(r io.Reader, o Options, fn func(RunEntry) error) error {
	return eachRow(r, o, "<query-id> Q0 <doc-id> <rank> <score> <run-tag>", func(c *collector, dups *seen, line int, f []string) error {
		e := RunEntry{QueryID: f[0], DocID: f[2], Tag: f[5], Line: line}
		ok := idField(c, line, 1, "query id", f[0])
		ok = idField(c, line, 3, "doc id", f[2]) && ok
		var why string
		if e.Rank, why = parseInt(f[3]); why == "" && e.Rank < 0 {
			why = fmt.Sprintf("rank %d is negative", e.Rank)
		}
		if why != "" {
			c.add(line, column(4, "rank"), why)
			ok = false
		}
		if e.Score, why = parseFloat(f[4]); why != "" {
			c.add(line, column(5, "score"), why)
			ok = false
		}
		ok = idField(c, line, 6, "run tag", f[5]) && ok
		if !ok {
			return nil
		}
		if first, dup := dups.add(dups.key(e.Tag, e.QueryID, e.DocID), line); dup {
			c.addf(line, "", "duplicate document %s for query %s in run %s (first at line %d)", quote(e.DocID), quote(e.QueryID), quote(e.Tag), first)
			return nil
		}
		return deliver(c, fn, e)
	})
}
