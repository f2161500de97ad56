package ingest

import "io"

// CalibrationPair is one row of a calibration file: a pair with its known grade and the
// reason for it, which an assessor reads after answering.
type CalibrationPair struct {
	QueryID string
	DocID   string
	Grade   int
	Reason  string
	Line    int
}

func (p CalibrationPair) line() int { return p.Line }

var calibrationSchema = newSchema(false, "query_id!", "doc_id!", "grade!", "reason!")

// ReadCalibration reads a calibration file (CSV or JSONL): query_id, doc_id, grade and
// reason, all required. A (query_id, doc_id) pair may appear once; grades must lie on the
// scale of Options.Scale.
func ReadCalibration(r io.Reader, f Format, o Options, fn func(CalibrationPair) error) error {
	scale := o.withDefaults().Scale
	return readUnique(r, f, o, calibrationSchema,
		func(rec *record, c *collector) (CalibrationPair, bool) {
			q, ok1 := rec.id(0, c)
			d, ok2 := rec.id(1, c)
			g, ok3 := rec.optInt(2, NoGrade, c)
			if ok3 && rec.vals[2] == "" {
				c.add(rec.lines[2], rec.where(2), "is empty")
				ok3 = false
			} else if ok3 {
				if why := checkGrade(g, scale); why != "" {
					c.add(rec.lines[2], rec.where(2), why)
					ok3 = false
				}
			}
			reason, ok4 := rec.text(3, true, c)
			return CalibrationPair{QueryID: q, DocID: d, Grade: g, Reason: reason, Line: rec.line}, ok1 && ok2 && ok3 && ok4
		},
		func(ids *seen, p CalibrationPair) uint64 { return ids.key(p.QueryID, p.DocID) },
		func(c *collector, rec *record, p CalibrationPair, first int) {
			c.addf(p.Line, "", "duplicate pair (%s, %s) (first at line %d)", quote(p.QueryID), quote(p.DocID), first)
		}, fn)
}
