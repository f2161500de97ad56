package export

import (
	"bufio"
	"errors"
	"io"
	"math"
	"runtime"
	"strconv"
	"strings"
	"sync"

	"github.com/pertinent/pertinent"
)

// SVMlightOptions tune an SVMlightWriter.
type SVMlightOptions struct {
	// Float32 formats values as float32 (shorter output), for features that
	// were float32 to begin with; each value then parses back to the same
	// float32. Otherwise values round-trip as float64.
	Float32 bool
	// Workers is the number of goroutines formatting rows; 0 means
	// GOMAXPROCS, 1 formats in the caller's goroutine. Output order is
	// always the order of Write calls.
	Workers int
}

// SVMlightWriter writes the SVMlight ranking format (Joachims):
//
//	<grade> qid:<n> <index>:<value> ... # <doc-id>
//
// Rows of one query must be consecutive; feature indices must be strictly
// ascending from 1; zero values are omitted. Values are written in the
// shortest form that parses back to the same float (strconv 'g', -1).
//
// Formatting floats is nearly all the cost, so by default rows are copied
// into batches and formatted on several goroutines, then written in order.
// Every check happens in Write, so a row that Write accepted is written;
// an error of the underlying io.Writer comes back from a later Write or
// from Close.
type SVMlightWriter struct {
	bw    *bufio.Writer
	qids  *QIDMap
	bits  int
	order contiguity
	qid   int
	rows  int
	pfx   [][]byte // pfx[i] = " <i>:", built once instead of per value
	line  []byte   // inline mode: the row being formatted

	// parallel mode
	cur     *svmBatch
	work    chan *svmBatch
	ordered chan *svmBatch
	free    chan *svmBatch
	wg      sync.WaitGroup
	done    chan struct{}
	mu      sync.Mutex
	err     error
	closed  bool
}

const svmBatchRows = 256

type svmRow struct {
	grade, qid       int
	featFrom, featTo int
	docFrom, docTo   int
}

type svmBatch struct {
	rows  []svmRow
	feats []Feature
	docs  []byte
	pfx   [][]byte // snapshot of the prefix table; entries are never changed
	out   []byte
	ready chan struct{}
}

// NewSVMlightWriter writes to w, numbering queries with qids (a new
// first-seen map when nil).
func NewSVMlightWriter(w io.Writer, qids *QIDMap, opt SVMlightOptions) *SVMlightWriter {
	if qids == nil {
		qids = NewQIDMap()
	}
	s := &SVMlightWriter{bw: bufio.NewWriterSize(w, 256*1024), qids: qids, bits: 64}
	if opt.Float32 {
		s.bits = 32
	}
	s.growPrefix(256)
	n := opt.Workers
	if n <= 0 {
		n = runtime.GOMAXPROCS(0)
	}
	if n == 1 {
		return s
	}
	inFlight := 2*n + 2
	s.work = make(chan *svmBatch, inFlight)
	s.ordered = make(chan *svmBatch, inFlight)
	s.free = make(chan *svmBatch, inFlight)
	for range inFlight {
		s.free <- &svmBatch{ready: make(chan struct{}, 1)}
	}
	for range n {
		s.wg.Add(1)
		go s.formatLoop()
	}
	s.done = make(chan struct{})
	go s.writeLoop()
	return s
}

// QIDs is the query-id mapping in use; write it beside the file with
// WriteTSV after Close.
func (s *SVMlightWriter) QIDs() *QIDMap { return s.qids }

// Rows is the number of rows accepted so far.
func (s *SVMlightWriter) Rows() int { return s.rows }

// Write appends one row. r.Features may be reused once Write returns.
func (s *SVMlightWriter) Write(r Row) error {
	if s.closed {
		return errors.New("export: svmlight: write after close")
	}
	if err := s.ioErr(); err != nil {
		return err
	}
	if strings.ContainsAny(r.DocID, "\r\n") {
		return pertinent.Errorf(pertinent.Invalid, "export", "svmlight: document id %q has a line break", r.DocID)
	}
	if err := checkFeatures(r); err != nil {
		return err
	}
	start, err := s.order.next(r.QueryID)
	if err != nil {
		return err
	}
	if start {
		s.qid = s.qids.QID(r.QueryID)
	}
	if n := len(r.Features); n > 0 {
		s.growPrefix(r.Features[n-1].Index)
	}
	s.rows++
	if s.work == nil {
		s.line = formatRow(s.line[:0], s.pfx, s.bits, r.Grade, s.qid, r.Features, r.DocID)
		_, err := s.bw.Write(s.line)
		return err
	}
	if s.cur == nil {
		s.cur = <-s.free
		s.cur.rows, s.cur.feats, s.cur.docs = s.cur.rows[:0], s.cur.feats[:0], s.cur.docs[:0]
	}
	b := s.cur
	b.rows = append(b.rows, svmRow{
		grade: r.Grade, qid: s.qid,
		featFrom: len(b.feats), featTo: len(b.feats) + len(r.Features),
		docFrom: len(b.docs), docTo: len(b.docs) + len(r.DocID),
	})
	b.feats = append(b.feats, r.Features...)
	b.docs = append(b.docs, r.DocID...)
	if len(b.rows) == svmBatchRows {
		s.dispatch()
	}
	return nil
}

// Close writes what is left, flushes, and stops the formatting goroutines.
func (s *SVMlightWriter) Close() error {
	if s.closed {
		return s.ioErr()
	}
	s.closed = true
	if s.work != nil {
		if s.cur != nil {
			s.dispatch()
		}
		close(s.work)
		close(s.ordered)
		s.wg.Wait()
		<-s.done
		if err := s.ioErr(); err != nil {
			return err
		}
	}
	return s.bw.Flush()
}

func (s *SVMlightWriter) dispatch() {
	b := s.cur
	s.cur = nil
	b.pfx = s.pfx
	s.ordered <- b // before work, so the writer sees batches in Write order
	s.work <- b
}

func (s *SVMlightWriter) formatLoop() {
	defer s.wg.Done()
	for b := range s.work {
		out := b.out[:0]
		for _, r := range b.rows {
			out = formatRow(out, b.pfx, s.bits, r.grade, r.qid, b.feats[r.featFrom:r.featTo], b.docs[r.docFrom:r.docTo])
		}
		b.out = out
		b.ready <- struct{}{}
	}
}

func (s *SVMlightWriter) writeLoop() {
	defer close(s.done)
	for b := range s.ordered {
		<-b.ready
		if s.ioErr() == nil {
			if _, err := s.bw.Write(b.out); err != nil {
				s.setErr(err)
			}
		}
		s.free <- b
	}
}

func (s *SVMlightWriter) ioErr() error {
	if s.work == nil {
		return nil
	}
	s.mu.Lock()
	defer s.mu.Unlock()
	return s.err
}

func (s *SVMlightWriter) setErr(err error) {
	s.mu.Lock()
	s.err = err
	s.mu.Unlock()
}

func checkFeatures(r Row) error {
	prev := 0
	for _, f := range r.Features {
		if f.Index <= prev {
			return pertinent.Errorf(pertinent.Invalid, "export", "svmlight: query %q document %q: feature index %d after %d; indices must ascend from 1", r.QueryID, r.DocID, f.Index, prev)
		}
		prev = f.Index
		if v := f.Value; v-v != 0 { // NaN or ±Inf: the format has no way to say it
			return pertinent.Errorf(pertinent.Invalid, "export", "svmlight: query %q document %q: feature %d is %v", r.QueryID, r.DocID, f.Index, v)
		}
	}
	return nil
}

// maxPrefix bounds the prefix table; wider, very sparse vectors format
// their indices on the fly.
const maxPrefix = 1 << 16

func (s *SVMlightWriter) growPrefix(i int) {
	for n := len(s.pfx); n <= min(i, maxPrefix); n++ {
		p := append([]byte{' '}, strconv.Itoa(n)...)
		s.pfx = append(s.pfx, append(p, ':'))
	}
}

func formatRow[D string | []byte](b []byte, pfx [][]byte, bits, grade, qid int, feats []Feature, doc D) []byte {
	b = strconv.AppendInt(b, int64(grade), 10)
	b = append(b, " qid:"...)
	b = strconv.AppendInt(b, int64(qid), 10)
	for _, f := range feats {
		v := f.Value
		if v == 0 {
			continue
		}
		if f.Index < len(pfx) {
			b = append(b, pfx[f.Index]...)
		} else {
			b = append(strconv.AppendInt(append(b, ' '), int64(f.Index), 10), ':')
		}
		b = appendValue(b, v, bits)
	}
	b = append(b, " # "...)
	b = append(b, doc...)
	return append(b, '\n')
}

// appendValue formats v exactly like strconv.AppendFloat(b, v, 'g', -1,
// bits), taking cheaper paths for the values most feature files hold.
//
// Whole numbers below 1e6 print the same digits under 'g' (no exponent
// before 1e6), so they go through AppendInt.
//
// For float64 in [1e-4, 1e6) with at most nine decimals: 'g' prints such
// numbers without exponent, and a grid of step 1e-9 is coarser than the
// spacing of doubles below 2^20 (at most 2^-33), so at most one nine-decimal
// number parses to v. If k/1e9 == v (k below 2^53 and 1e9 exact, so this
// division is the correctly rounded parse of "k e-9"), k with trailing
// zeros trimmed is that number, and no shorter form can exist, since a
// shorter form would be a nine-decimal number too. Anything else (or a k
// off by one from rounding v*1e9) falls back to strconv.
func appendValue(b []byte, v float64, bits int) []byte {
	if v > -1e6 && v < 1e6 {
		if i := int64(v); float64(i) == v {
			return strconv.AppendInt(b, i, 10)
		}
		if bits == 64 {
			a := math.Abs(v)
			if a >= 1e-4 {
				k := math.Round(a * 1e9)
				if k/1e9 == a {
					return appendNanos(b, v < 0, uint64(k))
				}
			}
		}
	}
	return strconv.AppendFloat(b, v, 'g', -1, bits)
}

// appendNanos writes k * 10^-9 as a plain decimal with no trailing zeros;
// k is not a multiple of 1e9 (whole numbers took another path).
func appendNanos(b []byte, neg bool, k uint64) []byte {
	if neg {
		b = append(b, '-')
	}
	b = strconv.AppendUint(b, k/1e9, 10)
	frac := k % 1e9
	d := 9
	for frac%10 == 0 {
		frac /= 10
		d--
	}
	b = append(b, '.')
	var tmp [9]byte
	for i := d - 1; i >= 0; i-- {
		tmp[i] = byte('0' + frac%10)
		frac /= 10
	}
	return append(b, tmp[:d]...)
}
