package ingest

import (
	"encoding/json"
	"fmt"
	"io"
	"slices"
	"strings"
	"unicode/utf8"
)

// schema names the known columns of a table format (CSV header names and
// JSONL keys alike); a column's position in names is its slot.
type schema struct {
	names    []string
	required []bool
	meta     bool // documents: CSV extra columns and the JSONL "meta" object become Meta
	index    map[string]int
}

func newSchema(meta bool, cols ...string) *schema {
	s := &schema{meta: meta, index: map[string]int{}}
	for i, c := range cols {
		req := strings.HasSuffix(c, "!")
		c = strings.TrimSuffix(c, "!")
		s.names = append(s.names, c)
		s.required = append(s.required, req)
		s.index[c] = i
	}
	return s
}

func (s *schema) known() string { return strings.Join(s.names, ", ") }

// record is one row of a table, by slot.
type record struct {
	jsonl bool
	line  int
	vals  []string
	has   []bool
	lines []int // line each value starts on
	cols  []int // CSV: 1-based column of each slot
	names []string
	meta  map[string]string
	// extra and extraLines hold the extra CSV columns when rawExtra is set.
	extra      []string
	extraLines []int
}

func (r *record) where(slot int) string {
	if r.jsonl {
		return fmt.Sprintf("field %q", r.names[slot])
	}
	return column(r.cols[slot], r.names[slot])
}

func (r *record) id(slot int, c *collector) (string, bool) {
	v := r.vals[slot]
	if why := checkID(v); why != "" {
		c.add(r.lines[slot], r.where(slot), why)
		return "", false
	}
	return v, true
}

// text returns an optional (or, if req, non-empty) free-text value.
func (r *record) text(slot int, req bool, c *collector) (string, bool) {
	v := r.vals[slot]
	if req && v == "" {
		c.add(r.lines[slot], r.where(slot), "is empty")
		return "", false
	}
	if why := checkText(v); why != "" {
		c.add(r.lines[slot], r.where(slot), why)
		return "", false
	}
	return v, true
}

// optInt returns the integer in slot, or def when the value is absent or empty.
func (r *record) optInt(slot, def int, c *collector) (int, bool) {
	v := r.vals[slot]
	if v == "" {
		return def, true
	}
	n, why := parseInt(v)
	if why != "" {
		c.add(r.lines[slot], r.where(slot), why)
		return 0, false
	}
	return n, true
}

// tableReader yields the records of a CSV or JSONL table, reporting
// format-level problems itself and skipping the rows they concern.
type tableReader struct {
	format Format
	o      Options
	c      *collector
	sc     *schema
	csv    *csvReader
	lr     *lineReader
	colOf  []int // CSV: slot -> field index, -1 when the column is absent
	header []string
	extra  []int // CSV: field indexes of metadata columns
	done   bool
	rec    record
	// rawExtra hands extra columns over as rec.extra instead of Meta.
	rawExtra bool
}

func newTableReader(r io.Reader, f Format, o Options, c *collector, sc *schema) (*tableReader, error) {
	t := &tableReader{format: f, o: o, c: c, sc: sc}
	n := len(sc.names)
	t.rec = record{names: sc.names, vals: make([]string, n), has: make([]bool, n), lines: make([]int, n), cols: make([]int, n)}
	switch f {
	case CSV:
		t.csv = newCSVReader(r, o.MaxLineBytes)
		return t, t.readHeader()
	case JSONL:
		t.rec.jsonl = true
		t.lr = newLineReader(r, o.MaxLineBytes)
		return t, nil
	}
	return nil, fmt.Errorf("%s: %v is not a table format (use CSV or JSONL)", o.File, f)
}

func (t *tableReader) readHeader() error {
	fields, lines, err := t.csv.read()
	switch e := err.(type) {
	case nil:
	case *csvSyntaxError:
		t.c.add(e.line, "", "header row: "+e.reason)
		t.done = true
		return nil
	default:
		if err == io.EOF {
			t.c.add(0, "", "empty file: a header row naming the columns is required")
			t.done = true
			return nil
		}
		if err == errTooLong {
			t.c.addf(t.csv.start, "", "header row longer than %d bytes", t.o.MaxLineBytes)
			t.done = true
			return nil
		}
		return fmt.Errorf("%s: %w", t.o.File, err)
	}
	line := lines[0]
	t.colOf = make([]int, len(t.sc.names))
	for i := range t.colOf {
		t.colOf[i] = -1
	}
	t.header = make([]string, len(fields))
	seen := map[string]int{}
	for i, f := range fields {
		name := strings.TrimSpace(f)
		t.header[i] = name
		where := fmt.Sprintf("column %d", i+1)
		if name == "" {
			t.c.add(line, where, "has no name")
			continue
		}
		if why := checkText(name); why != "" {
			t.c.add(line, where, "name "+why)
			continue
		}
		if first, ok := seen[name]; ok {
			t.c.addf(line, where, "%s repeats column %d", quote(name), first)
			continue
		}
		seen[name] = i + 1
		if slot, ok := t.sc.index[name]; ok {
			t.colOf[slot] = i
			continue
		}
		if t.sc.meta {
			t.extra = append(t.extra, i)
			continue
		}
		t.c.addf(line, where, "unknown column %s (known: %s)", quote(name), t.sc.known())
	}
	for slot, req := range t.sc.required {
		if req && t.colOf[slot] < 0 {
			t.c.addf(line, "", "missing column %s", quote(t.sc.names[slot]))
		}
	}
	if t.c.failed() {
		// Rows cannot be read against a header that is wrong.
		t.done = true
	}
	for slot, col := range t.colOf {
		t.rec.cols[slot] = col + 1
		t.rec.has[slot] = col >= 0
	}
	return nil
}

// each hands every well-formed record to fn, then returns the problems c collected; an I/O
// error or one from fn stops it.
func (t *tableReader) each(c *collector, fn func(*record) error) error {
	for {
		rec, err := t.next()
		if err == io.EOF {
			return c.err()
		}
		if err != nil {
			return err
		}
		if err := fn(rec); err != nil {
			return err
		}
	}
}

// next returns the next well-formed record, io.EOF at the end, or an I/O
// error. The record is reused by the following call.
func (t *tableReader) next() (*record, error) {
	for !t.done {
		var ok bool
		var err error
		if t.format == CSV {
			ok, err = t.nextCSV()
		} else {
			ok, err = t.nextJSONL()
		}
		if err != nil {
			return nil, err
		}
		if ok {
			return &t.rec, nil
		}
	}
	return nil, io.EOF
}

func (t *tableReader) nextCSV() (bool, error) {
	fields, lines, err := t.csv.read()
	if err != nil {
		if e, ok := err.(*csvSyntaxError); ok {
			t.c.add(e.line, "", e.reason)
			return false, nil
		}
		t.done = true
		switch err {
		case io.EOF:
			return false, nil
		case errTooLong:
			t.c.addf(t.csv.start, "", "row longer than %d bytes; reading stopped here", t.o.MaxLineBytes)
			return false, nil
		}
		return false, fmt.Errorf("%s: %w", t.o.File, err)
	}
	if len(fields) != len(t.header) {
		t.c.addf(lines[0], "", "%d fields, but the header has %d", len(fields), len(t.header))
		return false, nil
	}
	r := &t.rec
	r.line = lines[0]
	for slot, col := range t.colOf {
		if col >= 0 {
			r.vals[slot] = fields[col]
			r.lines[slot] = lines[col]
		} else {
			r.vals[slot] = ""
			r.lines[slot] = r.line
		}
	}
	r.meta = nil
	if t.rawExtra {
		r.extra, r.extraLines = r.extra[:0], r.extraLines[:0]
		for _, col := range t.extra {
			r.extra = append(r.extra, fields[col])
			r.extraLines = append(r.extraLines, lines[col])
		}
		return true, nil
	}
	bad := false
	for _, col := range t.extra {
		v := fields[col]
		if v == "" {
			continue
		}
		if why := checkText(v); why != "" {
			t.c.add(lines[col], column(col+1, t.header[col]), why)
			bad = true
			continue
		}
		if r.meta == nil {
			r.meta = make(map[string]string, len(t.extra))
		}
		r.meta[t.header[col]] = v
	}
	return !bad, nil
}

func (t *tableReader) nextJSONL() (bool, error) {
	line, err := t.lr.next()
	if err != nil {
		if err == errTooLong {
			t.c.addf(t.lr.line, "", "line longer than %d bytes", t.o.MaxLineBytes)
			return false, nil
		}
		t.done = true
		if err == io.EOF {
			return false, nil
		}
		return false, fmt.Errorf("%s: %w", t.o.File, err)
	}
	n := t.lr.line
	if len(strings.TrimSpace(string(line))) == 0 {
		return false, nil
	}
	if !utf8.Valid(line) {
		t.c.addf(n, "", "is not valid UTF-8 at byte %d", invalidAt(line))
		return false, nil
	}
	var m map[string]json.RawMessage
	if err := json.Unmarshal(line, &m); err != nil || m == nil {
		why := "is not a JSON object"
		if err != nil {
			why += ": " + err.Error()
		}
		t.c.add(n, "", why)
		return false, nil
	}
	r := &t.rec
	r.line = n
	for i := range r.vals {
		r.vals[i], r.has[i], r.lines[i] = "", false, n
	}
	r.meta = nil
	bad := false
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	for _, k := range keys {
		raw := m[k]
		where := fmt.Sprintf("field %q", k)
		if k == "meta" && t.sc.meta {
			meta, ok := t.jsonMeta(n, raw)
			r.meta = meta
			bad = bad || !ok
			continue
		}
		slot, known := t.sc.index[k]
		if !known {
			t.c.addf(n, where, "unknown field (known: %s)", t.sc.known())
			bad = true
			continue
		}
		v, present, why := jsonScalar(raw)
		if why != "" {
			t.c.add(n, where, why)
			r.has[slot] = true // present, if wrong: not also "missing"
			bad = true
			continue
		}
		r.vals[slot], r.has[slot] = v, present
	}
	for slot, req := range t.sc.required {
		if req && !r.has[slot] {
			t.c.add(n, fmt.Sprintf("field %q", t.sc.names[slot]), "is missing")
			bad = true
		}
	}
	return !bad, nil
}

func (t *tableReader) jsonMeta(line int, raw json.RawMessage) (map[string]string, bool) {
	var m map[string]json.RawMessage
	if err := json.Unmarshal(raw, &m); err != nil {
		t.c.add(line, `field "meta"`, "must be an object of strings, numbers or booleans")
		return nil, false
	}
	if len(m) == 0 {
		return nil, true
	}
	keys := make([]string, 0, len(m))
	for k := range m {
		keys = append(keys, k)
	}
	slices.Sort(keys)
	out := make(map[string]string, len(m))
	ok := true
	for _, k := range keys {
		raw := m[k]
		where := fmt.Sprintf("field %q", "meta."+k)
		v, present, why := jsonScalar(raw)
		if why == "" && !present {
			why = "is null"
		}
		if why == "" && k == "" {
			why = "has an empty name"
		}
		if why == "" {
			why = checkText(k)
			if why != "" {
				why = "name " + why
			}
		}
		if why == "" {
			why = checkText(v)
		}
		if why != "" {
			t.c.add(line, where, why)
			ok = false
			continue
		}
		out[k] = v
	}
	return out, ok
}

// jsonScalar turns a JSON string, number or boolean into text; null is
// treated as absent.
func jsonScalar(raw json.RawMessage) (v string, present bool, why string) {
	if len(raw) == 0 {
		return "", false, ""
	}
	switch raw[0] {
	case '"':
		if err := json.Unmarshal(raw, &v); err != nil {
			return "", false, "is not a valid JSON string"
		}
		return v, true, ""
	case 'n':
		return "", false, ""
	case '{', '[':
		return "", false, "must be a string, number or boolean"
	}
	return string(raw), true, ""
}

func invalidAt(b []byte) int {
	for i := 0; i < len(b); {
		r, n := utf8.DecodeRune(b[i:])
		if r == utf8.RuneError && n == 1 {
			return i + 1
		}
		i += n
	}
	return 0
}
