package ingest

import (
	"fmt"
	"io"
	"strings"
	"unicode/utf8"
)

// eachLine feeds the non-blank lines of a whitespace-separated format to fn,
// reporting overlong lines and bad UTF-8 itself, then returns the problems c
// collected. With comments, lines whose first non-blank character is '#' are
// skipped too.
func eachLine(r io.Reader, o Options, c *collector, comments bool, fn func(line int, s string) error) error {
	lr := newLineReader(r, o.MaxLineBytes)
	for {
		b, err := lr.next()
		if err == errTooLong {
			c.addf(lr.line, "", "line longer than %d bytes", o.MaxLineBytes)
			continue
		}
		if err == io.EOF {
			return c.err()
		}
		if err != nil {
			return fmt.Errorf("%s: %w", o.File, err)
		}
		if !utf8.Valid(b) {
			c.addf(lr.line, "", "is not valid UTF-8 at byte %d", invalidAt(b))
			continue
		}
		s := string(b)
		t := strings.TrimSpace(s)
		if t == "" || (comments && t[0] == '#') {
			continue
		}
		if err := fn(lr.line, s); err != nil {
			return err
		}
	}
}

// eachRow reads a whitespace-separated file with the columns layout names, such as a run or
// qrels file: fn gets the columns of each line that has that many, with the collector and a
// set for the keys that may appear once. It returns the problems collected.
func eachRow(r io.Reader, o Options, layout string, fn func(c *collector, dups *seen, line int, f []string) error) error {
	o = o.withDefaults()
	c := o.collector()
	dups := newSeen()
	n := strings.Count(layout, " ") + 1
	return eachLine(r, o, c, false, func(line int, s string) error {
		f := strings.Fields(s)
		if len(f) != n {
			c.addf(line, "", "has %d columns, expected %d: %s", len(f), n, layout)
			return nil
		}
		return fn(c, dups, line, f)
	})
}

// deliver hands v to fn, unless there is no fn or a problem has been found: after the first
// problem the rest of the file is only checked.
func deliver[T any](c *collector, fn func(T) error, v T) error {
	if fn == nil || c.failed() {
		return nil
	}
	return fn(v)
}

// idField checks the id in column n of a whitespace-separated line.
func idField(c *collector, line, n int, name, v string) bool {
	if why := checkID(v); why != "" {
		c.add(line, column(n, name), why)
		return false
	}
	return true
}
