package export

import (
	"errors"
	"fmt"
	"iter"

	"github.com/pertinent/pertinent"
)

// Feature is one non-zero entry of a sparse feature vector. Index starts
// at 1, as the SVMlight format requires.
type Feature struct {
	Index int
	Value float64
}

// JudgmentDetail is one assessor's current answer for a pair: a grade, or
// "cannot judge" with a reason (then Grade is meaningless).
type JudgmentDetail struct {
	Assessor    string
	Grade       int
	CannotJudge bool
	Reason      string
}

// PairAgreement summarises how much the judgments of one pair agree.
type PairAgreement struct {
	Graded      int // judgments that gave a grade
	CannotJudge int // judgments that said "cannot judge"
	Spread      int // highest minus lowest grade; 0 with fewer than two grades
}

// Row is one exported pair.
type Row struct {
	QueryID   string
	DocID     string
	Grade     int       // final grade
	Features  []Feature // sparse, indices strictly ascending from 1
	Decided   string    // how the final grade was decided, e.g. "adjudicated", "median of 3"
	Judgments []JudgmentDetail
	Agreement PairAgreement
	Split     string // e.g. "train", "validation", "test", "fold-2"; empty when not split
}

// AgreementOf computes the pair agreement summary of a list of judgments.
func AgreementOf(js []JudgmentDetail) PairAgreement {
	var a PairAgreement
	lo, hi := 0, 0
	for _, j := range js {
		if j.CannotJudge {
			a.CannotJudge++
			continue
		}
		if a.Graded == 0 || j.Grade < lo {
			lo = j.Grade
		}
		if a.Graded == 0 || j.Grade > hi {
			hi = j.Grade
		}
		a.Graded++
	}
	if a.Graded > 1 {
		a.Spread = hi - lo
	}
	return a
}

// RowWriter consumes rows in query order. Close flushes buffered output and
// writes anything that can only be known at the end; it does not close the
// underlying io.Writer.
type RowWriter interface {
	Write(Row) error
	Close() error
}

var (
	_ RowWriter = (*SVMlightWriter)(nil)
	_ RowWriter = (*QrelsWriter)(nil)
	_ RowWriter = (*GroupWriter)(nil)
	_ RowWriter = (*CSVWriter)(nil)
	_ RowWriter = (*JSONLWriter)(nil)
	_ RowWriter = (*Tally)(nil)
)

// WriteAll pushes every row of rows to each writer in turn, then closes the
// writers. It stops at the first error (from the iterator or a writer) and
// returns the number of rows written to all writers.
func WriteAll(rows iter.Seq2[Row, error], ws ...RowWriter) (int, error) {
	n := 0
	for r, err := range rows {
		if err != nil {
			return n, fmt.Errorf("export: reading rows: %w", err)
		}
		for _, w := range ws {
			if err := w.Write(r); err != nil {
				return n, err
			}
		}
		n++
	}
	var errs []error
	for _, w := range ws {
		if err := w.Close(); err != nil {
			errs = append(errs, err)
		}
	}
	return n, errors.Join(errs...)
}

// contiguity enforces that the rows of one query are consecutive: once
// another query has started, an earlier one must not reappear.
type contiguity struct {
	cur  string
	seen map[string]struct{}
	any  bool
}

// next reports whether q starts a new query, or an error when q reappears.
func (c *contiguity) next(q string) (bool, error) {
	if c.any && q == c.cur {
		return false, nil
	}
	if c.seen == nil {
		c.seen = make(map[string]struct{})
	}
	if _, dup := c.seen[q]; dup {
		return false, pertinent.Errorf(pertinent.Invalid, "export", "query %q reappears after query %q started; rows must be grouped by query", q, c.cur)
	}
	c.seen[q] = struct{}{}
	c.cur, c.any = q, true
	return true, nil
}
