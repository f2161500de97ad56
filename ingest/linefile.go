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
// set for the keys that may appear once. Columns the layout writes in brackets, at its end,
// may be left out; fn then sees them empty. It returns the problems collected.
func eachRow(r io.Reader, o Options, layout string, fn func(c *collector, dups *seen, line int, f []string) error) error {
	o = o.withDefaults()
	c := o.collector()
	dups := newSeen()
	n := strings.Count(layout, " ") + 1
	need := n - strings.Count(layout, "[")
	expected := fmt.Sprint(n)
	if need < n {
		expected = fmt.Sprintf("%d to %d", need, n)
	}
	f := make([]string, n) // reused from line to line: fn must not keep it
	return eachLine(r, o, c, false, func(line int, s string) error {
		got := fieldsInto(f, s)
		if got < need || got > n {
			c.addf(line, "", "has %d columns, expected %s: %s", got, expected, layout)
			return nil
		}
		clear(f[got:])
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
