package export

import (
	"bufio"
	"fmt"
	"io"
	"strconv"
	"strings"
)

// SVMlightWriter writes the SVMlight ranking format (Joachims):
//
//	<grade> qid:<n> <index>:<value> ... # <doc-id>
//
// Rows of one query must be consecutive; feature indices must be strictly
// ascending from 1; zero values are omitted. Values are written in the
// shortest form that parses back to the same float (strconv 'g', -1).
type SVMlightWriter struct {
	bw    *bufio.Writer
	qids  *QIDMap
	bits  int
	order contiguity
	qid   int
	buf   []byte
	pfx   [][]byte // pfx[i] = " <i>:"; built once, saves formatting indices per value
	rows  int
}

// NewSVMlightWriter writes to w, numbering queries with qids (a new
// first-seen map when nil). Values are formatted as float64.
func NewSVMlightWriter(w io.Writer, qids *QIDMap) *SVMlightWriter {
	if qids == nil {
		qids = NewQIDMap()
	}
	return &SVMlightWriter{bw: bufio.NewWriterSize(w, 256*1024), qids: qids, bits: 64, buf: make([]byte, 0, 4096)}
}

// SetFloat32 makes the writer format values as float32 (shorter output),
// for features that were float32 to begin with; each written value then
// parses back to the same float32.
func (s *SVMlightWriter) SetFloat32() { s.bits = 32 }

// QIDs is the query-id mapping in use; write it beside the file with
// WriteTSV after Close.
func (s *SVMlightWriter) QIDs() *QIDMap { return s.qids }

// Rows is the number of rows written so far.
func (s *SVMlightWriter) Rows() int { return s.rows }

// Write appends one row.
func (s *SVMlightWriter) Write(r Row) error {
	if strings.ContainsAny(r.DocID, "\r\n") {
		return fmt.Errorf("export: svmlight: document id %q has a line break", r.DocID)
	}
	start, err := s.order.next(r.QueryID)
	if err != nil {
		return err
	}
	if start {
		s.qid = s.qids.QID(r.QueryID)
	}
	b := strconv.AppendInt(s.buf[:0], int64(r.Grade), 10)
	b = append(b, " qid:"...)
	b = strconv.AppendInt(b, int64(s.qid), 10)
	prev := 0
	for _, f := range r.Features {
		if f.Index <= prev {
			return fmt.Errorf("export: svmlight: query %q document %q: feature index %d after %d; indices must ascend from 1", r.QueryID, r.DocID, f.Index, prev)
		}
		prev = f.Index
		v := f.Value
		if v == 0 {
			continue
		}
		if v-v != 0 { // NaN or ±Inf: the format has no way to say it
			return fmt.Errorf("export: svmlight: query %q document %q: feature %d is %v", r.QueryID, r.DocID, f.Index, v)
		}
		b = append(b, s.prefix(f.Index)...)
		b = appendValue(b, v, s.bits)
	}
	b = append(b, " # "...)
	b = append(b, r.DocID...)
	b = append(b, '\n')
	s.buf = b
	if _, err := s.bw.Write(b); err != nil {
		return err
	}
	s.rows++
	return nil
}

// Close flushes buffered output.
func (s *SVMlightWriter) Close() error { return s.bw.Flush() }

func (s *SVMlightWriter) prefix(i int) []byte {
	if i >= len(s.pfx) {
		if i > 1<<16 { // very sparse, very wide vectors: do not grow a table for them
			return append(strconv.AppendInt([]byte{' '}, int64(i), 10), ':')
		}
		for n := len(s.pfx); n <= i; n++ {
			p := append([]byte{' '}, strconv.Itoa(n)...)
			s.pfx = append(s.pfx, append(p, ':'))
		}
	}
	return s.pfx[i]
}

// appendValue formats v like strconv.AppendFloat(b, v, 'g', -1, bits).
// Whole numbers below 1e6 print the same digits under 'g' (no exponent
// before 1e6), so they take the much cheaper integer path.
func appendValue(b []byte, v float64, bits int) []byte {
	if v > -1e6 && v < 1e6 {
		if i := int64(v); float64(i) == v {
			return strconv.AppendInt(b, i, 10)
		}
	}
	return strconv.AppendFloat(b, v, 'g', -1, bits)
}
