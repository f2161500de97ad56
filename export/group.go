package export

import (
	"bufio"
	"io"
	"strconv"
)

// GroupWriter writes a group file: one line per query with the number of
// consecutive rows that belong to it, in file order (common practice for
// gradient-boosted rankers). Feed it the same rows, in the same order, as
// the data file it accompanies.
type GroupWriter struct {
	bw     *bufio.Writer
	order  contiguity
	count  int
	groups int
}

// NewGroupWriter writes to w.
func NewGroupWriter(w io.Writer) *GroupWriter {
	return &GroupWriter{bw: bufio.NewWriter(w)}
}

// Write counts one row.
func (g *GroupWriter) Write(r Row) error {
	start, err := g.order.next(r.QueryID)
	if err != nil {
		return err
	}
	if start && g.count > 0 {
		if err := g.emit(); err != nil {
			return err
		}
	}
	g.count++
	return nil
}

// Groups is the number of lines written so far (the last group is written
// by Close).
func (g *GroupWriter) Groups() int { return g.groups }

// Close writes the last group and flushes.
func (g *GroupWriter) Close() error {
	if g.count > 0 {
		if err := g.emit(); err != nil {
			return err
		}
	}
	return g.bw.Flush()
}

func (g *GroupWriter) emit() error {
	var b [24]byte
	line := append(strconv.AppendInt(b[:0], int64(g.count), 10), '\n')
	g.count = 0
	g.groups++
	_, err := g.bw.Write(line)
	return err
}
