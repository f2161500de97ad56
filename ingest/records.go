package ingest

import (
	"hash/maphash"
	"io"
	"slices"
)

// Query is one row of a queries file.
type Query struct {
	ID   string
	Text string
	Need string // optional description of the information need
	Line int    // line the row starts on
}

// Document is one row of a documents file.
type Document struct {
	ID         string
	Title      string
	URL        string
	Body       string
	BodyFormat string            // "text" or "html"
	Meta       map[string]string // nil when there is none
	Line       int
}

// Pair is one row of a pairs file.
type Pair struct {
	QueryID   string
	DocID     string
	Priority  int // higher is judged sooner; 0 when not given
	GoldGrade int // NoGrade unless the pair is a gold pair
	Line      int
}

// NoGrade marks an absent grade.
const NoGrade = -1

// PairRow is one row of a combined file carrying a pair with its query and
// document inline. NewQuery and NewDocument are true on the first row that
// names that query or document, so a caller inserts each only once.
// DocumentIndex numbers the file's distinct documents from 0 in the order
// they first appear, so a caller that stores them in that order can link a
// later row to its document without looking the id up.
type PairRow struct {
	Query         Query
	Document      Document
	Pair          Pair
	NewQuery      bool
	NewDocument   bool
	DocumentIndex int
}

var (
	querySchema   = newSchema(false, "query_id!", "text!", "need")
	docSchema     = newSchema(true, "doc_id!", "title", "url", "body", "body_format")
	pairSchema    = newSchema(false, "query_id!", "doc_id!", "priority", "gold_grade")
	pairRowSchema = newSchema(true, "query_id!", "query_text!", "query_need",
		"doc_id!", "title", "url", "body", "body_format", "priority", "gold_grade")
)

// ReadQueries reads a queries file (CSV or JSONL). Query ids must be unique.
func ReadQueries(r io.Reader, f Format, o Options, fn func(Query) error) error {
	return readUniqueID(r, f, o, querySchema, "query",
		func(rec *record, c *collector) (Query, bool) { return buildQuery(rec, 0, c) },
		func(q Query) string { return q.ID }, fn)
}

// ReadDocuments reads a documents file (CSV or JSONL). Document ids must be
// unique. CSV columns other than the known ones become Meta (empty cells
// are left out); JSONL carries them in a "meta" object.
func ReadDocuments(r io.Reader, f Format, o Options, fn func(Document) error) error {
	return readUniqueID(r, f, o, docSchema, "document",
		func(rec *record, c *collector) (Document, bool) { return buildDocument(rec, 0, c) },
		func(d Document) string { return d.ID }, fn)
}

// ReadPairs reads a pairs file (CSV or JSONL). A (query_id, doc_id) pair
// may appear once. gold_grade must lie on the scale of Options.Scale.
func ReadPairs(r io.Reader, f Format, o Options, fn func(Pair) error) error {
	return readUnique(r, f, o, pairSchema,
		func(rec *record, c *collector) (Pair, bool) {
			return buildPair(rec, 0, 1, 2, 3, o.withDefaults().Scale, c)
		},
		func(ids *seen, p Pair) uint64 { return ids.key(p.QueryID, p.DocID) },
		func(c *collector, rec *record, p Pair, first int) {
			c.addf(p.Line, "", "duplicate pair (%s, %s) (first at line %d)", quote(p.QueryID), quote(p.DocID), first)
		}, fn)
}

// readUnique drives a table file whose records carry a key that may appear once: each record
// is built, a repeated key is reported with the line of its first appearance, and records go
// to fn until the first problem (the rest of the file is still checked).
func readUnique[T interface{ line() int }](r io.Reader, f Format, o Options, s *schema,
	build func(*record, *collector) (T, bool), key func(*seen, T) uint64,
	dup func(c *collector, rec *record, v T, first int), fn func(T) error) error {
	o = o.withDefaults()
	c := o.collector()
	t, err := newTableReader(r, f, o, c, s)
	if err != nil {
		return err
	}
	ids := newSeen()
	return t.each(c, func(rec *record) error {
		v, ok := build(rec, c)
		if !ok {
			return nil
		}
		if first, isDup := ids.add(key(ids, v), v.line()); isDup {
			dup(c, rec, v, first)
			return nil
		}
		return deliver(c, fn, v)
	})
}

// readUniqueID is readUnique for a file whose records carry one id that may appear once.
func readUniqueID[T interface{ line() int }](r io.Reader, f Format, o Options, s *schema, what string,
	build func(*record, *collector) (T, bool), id func(T) string, fn func(T) error) error {
	return readUnique(r, f, o, s, build,
		func(ids *seen, v T) uint64 { return ids.key(id(v)) },
		func(c *collector, rec *record, v T, first int) {
			c.addf(rec.lines[0], rec.where(0), "duplicate %s id %s (first at line %d)", what, quote(id(v)), first)
		}, fn)
}

func (q Query) line() int    { return q.Line }
func (d Document) line() int { return d.Line }
func (p Pair) line() int     { return p.Line }

// ReadPairRows reads a combined file (CSV or JSONL) in which every row
// carries a pair with its query and document. A pair may appear once; a
// query or document repeated on later rows must repeat the same content.
// Duplicate and consistency checks keep two 64-bit hashes per query and per
// document and one per pair (about 40 MB per million pairs).
func ReadPairRows(r io.Reader, f Format, o Options, fn func(PairRow) error) error {
	o = o.withDefaults()
	c := o.collector()
	t, err := newTableReader(r, f, o, c, pairRowSchema)
	if err != nil {
		return err
	}
	pairs := newSeen()
	queries := newContentSeen()
	docs := newContentSeen()
	return t.each(c, func(rec *record) error {
		q, okq := buildQuery(rec, 0, c)
		d, okd := buildDocument(rec, 3, c)
		p, okp := buildPair(rec, 0, 3, 8, 9, o.Scale, c)
		if !okq || !okd || !okp {
			return nil
		}
		row := PairRow{Query: q, Document: d, Pair: p}
		var first int
		var dup bool
		if first, dup = pairs.add(pairs.key(q.ID, d.ID), p.Line); dup {
			c.addf(p.Line, "", "duplicate pair (%s, %s) (first at line %d)", quote(q.ID), quote(d.ID), first)
			return nil
		}
		first, row.NewQuery, _ = queries.add(q.ID, p.Line, queries.ids.key(q.Text, q.Need))
		if first > 0 {
			c.addf(p.Line, "", "query %s differs from its row at line %d (text or need)", quote(q.ID), first)
			return nil
		}
		first, row.NewDocument, row.DocumentIndex = docs.add(d.ID, p.Line, docSum(&docs.ids.h, d))
		if first > 0 {
			c.addf(p.Line, "", "document %s differs from its row at line %d (title, url, body, body_format or metadata)", quote(d.ID), first)
			return nil
		}
		return deliver(c, fn, row)
	})
}

func buildQuery(rec *record, base int, c *collector) (Query, bool) {
	id, ok1 := rec.id(base, c)
	text, ok2 := rec.text(base+1, true, c)
	need, ok3 := rec.text(base+2, false, c)
	return Query{ID: id, Text: text, Need: need, Line: rec.line}, ok1 && ok2 && ok3
}

func buildDocument(rec *record, base int, c *collector) (Document, bool) {
	id, ok := rec.id(base, c)
	title, ok2 := rec.text(base+1, false, c)
	url, ok3 := rec.text(base+2, false, c)
	body, ok4 := rec.text(base+3, false, c)
	ok = ok && ok2 && ok3 && ok4
	format := rec.vals[base+4]
	switch format {
	case "":
		format = "text"
	case "text", "html":
	default:
		c.addf(rec.lines[base+4], rec.where(base+4), "%s is not one of text, html", quote(format))
		ok = false
	}
	return Document{ID: id, Title: title, URL: url, Body: body, BodyFormat: format, Meta: rec.meta, Line: rec.line}, ok
}

func buildPair(rec *record, qslot, dslot, pslot, gslot, scale int, c *collector) (Pair, bool) {
	q, ok1 := rec.id(qslot, c)
	d, ok2 := rec.id(dslot, c)
	prio, ok3 := rec.optInt(pslot, 0, c)
	gold, ok4 := rec.optInt(gslot, NoGrade, c)
	if ok4 && gold != NoGrade {
		if why := checkGrade(gold, scale); why != "" {
			c.add(rec.lines[gslot], rec.where(gslot), why)
			ok4 = false
		}
	}
	return Pair{QueryID: q, DocID: d, Priority: prio, GoldGrade: gold, Line: rec.line}, ok1 && ok2 && ok3 && ok4
}

// docSum hashes a document's content; meta keys are sorted so the sum does
// not depend on map order.
func docSum(h *maphash.Hash, d Document) uint64 {
	h.Reset()
	for _, p := range [...]string{d.Title, d.URL, d.Body, d.BodyFormat} {
		h.WriteString(p)
		h.WriteByte(0)
	}
	switch len(d.Meta) {
	case 0:
	case 1:
		for k, v := range d.Meta {
			h.WriteString(k)
			h.WriteByte(0)
			h.WriteString(v)
		}
	default:
		keys := make([]string, 0, len(d.Meta))
		for k := range d.Meta {
			keys = append(keys, k)
		}
		slices.Sort(keys)
		for _, k := range keys {
			h.WriteString(k)
			h.WriteByte(0)
			h.WriteString(d.Meta[k])
			h.WriteByte(0)
		}
	}
	return h.Sum64()
}

// contentSeen remembers, per id, the line it first appeared on, a hash of
// its content and its number among the distinct ids, from 0.
type contentSeen struct {
	ids *seen
	m   map[uint64]contentEntry
}

type contentEntry struct {
	line int
	sum  uint64
	num  int
}

func newContentSeen() *contentSeen {
	return &contentSeen{ids: newSeen(), m: map[uint64]contentEntry{}}
}

// add returns (0, true, num) for a new id, (0, false, num) for a repeat with
// the same content sum and (first line, false, num) for a repeat with
// different content.
func (s *contentSeen) add(id string, line int, sum uint64) (int, bool, int) {
	k := s.ids.key(id)
	if e, ok := s.m[k]; ok {
		if e.sum != sum {
			return e.line, false, e.num
		}
		return 0, false, e.num
	}
	n := len(s.m)
	s.m[k] = contentEntry{line, sum, n}
	return 0, true, n
}
