package export

import (
	"bufio"
	"io"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent"
)

// QrelsWriter writes "<query-id> 0 <doc-id> <grade>" lines, the qrels
// format (iteration column always 0). Ids must not contain white space,
// since the format separates fields by it.
type QrelsWriter struct {
	bw   *bufio.Writer
	buf  []byte
	rows int
}

// NewQrelsWriter writes to w.
func NewQrelsWriter(w io.Writer) *QrelsWriter {
	return &QrelsWriter{bw: bufio.NewWriterSize(w, 64*1024)}
}

// Write appends one row; only query, document and final grade are used.
func (q *QrelsWriter) Write(r Row) error {
	if err := checkField("query id", r.QueryID); err != nil {
		return err
	}
	if err := checkField("document id", r.DocID); err != nil {
		return err
	}
	b := append(q.buf[:0], r.QueryID...)
	b = append(b, " 0 "...)
	b = append(b, r.DocID...)
	b = append(b, ' ')
	b = strconv.AppendInt(b, int64(r.Grade), 10)
	b = append(b, '\n')
	q.buf = b
	if _, err := q.bw.Write(b); err != nil {
		return err
	}
	q.rows++
	return nil
}

// Rows is the number of rows written so far.
func (q *QrelsWriter) Rows() int { return q.rows }

// Close flushes buffered output.
func (q *QrelsWriter) Close() error { return q.bw.Flush() }

func checkField(what, s string) error {
	if s == "" || strings.ContainsAny(s, " \t\r\n\v\f") {
		return pertinent.Errorf(pertinent.Invalid, "export", "qrels: %s %q is empty or has white space", what, s)
	}
	return nil
}
