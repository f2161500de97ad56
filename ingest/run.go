package ingest

import (
	"fmt"
	"io"
	"strings"
	"unicode/utf8"
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
	o = o.withDefaults()
	c := o.collector()
	dups := newSeen()
	var fields [6]string
	err := eachLine(r, o, c, false, func(line int, s string) error {
		if n := fieldsInto(fields[:], s); n != 6 {
			c.addf(line, "", "has %d columns, expected 6: <query-id> Q0 <doc-id> <rank> <score> <run-tag>", n)
			return nil
		}
		f := fields
		e, ok := RunEntry{QueryID: f[0], DocID: f[2], Tag: f[5], Line: line}, true
		ok = idField(c, line, 1, "query id", f[0]) && ok
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
		if fn != nil && !c.failed() {
			return fn(e)
		}
		return nil
	})
	if err != nil {
		return err
	}
	return c.err()
}

// asciiSpace is the white space strings.Fields splits at among ASCII bytes.
var asciiSpace = [256]bool{'\t': true, '\n': true, '\v': true, '\f': true, '\r': true, ' ': true}

// fieldsInto splits s as strings.Fields does, into dst as far as it goes, and returns the
// number of fields. A run file has millions of lines, and a slice of fields for each was
// more than 40% of what reading one allocated.
func fieldsInto(dst []string, s string) int {
	for i := 0; i < len(s); i++ {
		if s[i] >= utf8.RuneSelf {
			// Other white space than ASCII's: rare enough to take the general path.
			f := strings.Fields(s)
			copy(dst, f)
			return len(f)
		}
	}
	n := 0
	for i := 0; i < len(s); {
		for i < len(s) && asciiSpace[s[i]] {
			i++
		}
		if i == len(s) {
			break
		}
		j := i
		for j < len(s) && !asciiSpace[s[j]] {
			j++
		}
		if n < len(dst) {
			dst[n] = s[i:j]
		}
		n++
		i = j
	}
	return n
}
