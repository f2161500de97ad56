package ingest

import (
	"fmt"
	"io"
	"strconv"
	"strings"
)

// Feature is one sparse feature value; Index counts from 1.
type Feature struct {
	Index uint32
	Value float64
}

// FeatureRow holds the features of one pair.
type FeatureRow struct {
	QueryID  string
	DocID    string
	Grade    int       // SVMlight label; NoGrade for CSV
	Features []Feature // indexes strictly ascending
	// Names, for CSV input, names the features: Names[i] is feature i+1.
	// It is shared by all rows of a file. Nil for SVMlight.
	Names []string
	Line  int
}

// ReadFeatures reads per-pair features from SVMlight or CSV.
//
// SVMlight: `<grade> qid:<query-id> <index>:<value> ... # <doc-id>`. The
// grade is any integer (it is not the project's judgment and is not
// range-checked); indexes are strictly ascending integers from 1; values are
// finite numbers. The first token of the comment is the document id and
// the rest of the comment is ignored. Lines starting with '#' are skipped.
//
// CSV: columns query_id and doc_id, every other column is a feature named
// by its header, numbered 1.. in header order. Empty cells are left out.
//
// A (query, doc) may appear once.
func ReadFeatures(r io.Reader, f Format, o Options, fn func(FeatureRow) error) error {
	o = o.withDefaults()
	c := o.collector()
	dups := newSeen()
	emit := func(row FeatureRow) error {
		if first, dup := dups.add(dups.key(row.QueryID, row.DocID), row.Line); dup {
			c.addf(row.Line, "", "duplicate pair (%s, %s) (first at line %d)", quote(row.QueryID), quote(row.DocID), first)
			return nil
		}
		return deliver(c, fn, row)
	}
	switch f {
	case SVMlight:
		return eachLine(r, o, c, true, func(line int, s string) error {
			if row, ok := parseSVMlight(c, line, s); ok {
				return emit(row)
			}
			return nil
		})
	case CSV:
		return readFeatureCSV(r, o, c, emit)
	}
	return fmt.Errorf("%s: features come as SVMlight or CSV, not %v", o.File, f)
}

func parseSVMlight(c *collector, line int, s string) (FeatureRow, bool) {
	row := FeatureRow{Line: line}
	data, comment, hasComment := strings.Cut(s, "#")
	if cf := strings.Fields(comment); hasComment && len(cf) > 0 {
		row.DocID = cf[0]
	} else {
		c.add(line, "", "no document id: end the line with # <doc-id>")
		return row, false
	}
	ok := true
	if why := checkID(row.DocID); why != "" {
		c.add(line, "comment (doc id)", why)
		ok = false
	}
	f := strings.Fields(data)
	if len(f) < 2 {
		c.add(line, "", "expected <grade> qid:<query-id> before the features")
		return row, false
	}
	var why string
	if row.Grade, why = parseInt(f[0]); why != "" {
		c.add(line, column(1, "grade"), why)
		ok = false
	}
	if q, found := strings.CutPrefix(f[1], "qid:"); !found {
		c.addf(line, column(2, "qid"), "%s does not start with qid:", quote(f[1]))
		ok = false
	} else if why := checkID(q); why != "" {
		c.add(line, column(2, "qid"), why)
		ok = false
	} else {
		row.QueryID = q
	}
	if !ok {
		return row, false
	}
	row.Features = make([]Feature, 0, len(f)-2)
	prev := uint32(0)
	for i, tok := range f[2:] {
		where := column(i+3, "feature")
		is, vs, found := strings.Cut(tok, ":")
		if !found {
			c.addf(line, where, "%s is not <index>:<value>", quote(tok))
			return row, false
		}
		idx, err := strconv.ParseUint(is, 10, 32)
		if err != nil || idx == 0 {
			c.addf(line, where, "index %s is not an integer from 1 to %d", quote(is), uint32(1<<32-1))
			return row, false
		}
		if uint32(idx) <= prev {
			c.addf(line, where, "index %d does not follow %d: indexes must be strictly ascending", idx, prev)
			return row, false
		}
		prev = uint32(idx)
		v, why := parseFloat(vs)
		if why != "" {
			c.add(line, where, "value "+why)
			return row, false
		}
		row.Features = append(row.Features, Feature{Index: uint32(idx), Value: v})
	}
	return row, true
}

var featureSchema = newSchema(true, "query_id!", "doc_id!")

func readFeatureCSV(r io.Reader, o Options, c *collector, emit func(FeatureRow) error) error {
	t, err := newTableReader(r, CSV, o, c, featureSchema)
	if err != nil {
		return err
	}
	t.rawExtra = true
	var names []string
	for _, col := range t.extra {
		names = append(names, t.header[col])
	}
	if !t.done && len(names) == 0 {
		c.add(1, "", "no feature columns besides query_id and doc_id")
		return c.err()
	}
	return t.each(c, func(rec *record) error {
		row := FeatureRow{Grade: NoGrade, Names: names, Line: rec.line}
		ok := true
		row.QueryID, ok = rec.id(0, c)
		var ok2 bool
		row.DocID, ok2 = rec.id(1, c)
		ok = ok && ok2
		row.Features = make([]Feature, 0, len(names))
		for i, v := range rec.extra {
			if v == "" {
				continue
			}
			col := t.extra[i]
			x, why := parseFloat(v)
			if why != "" {
				c.add(rec.extraLines[i], column(col+1, t.header[col]), why)
				ok = false
				continue
			}
			row.Features = append(row.Features, Feature{Index: uint32(i + 1), Value: x})
		}
		if !ok {
			return nil
		}
		return emit(row)
	})
}
