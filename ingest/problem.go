package ingest

import (
	"fmt"
	"strings"
)

// Problem is one thing wrong with an input file.
type Problem struct {
	File   string
	Line   int    // 1-based; 0 when the problem concerns the whole file
	Field  string // e.g. `column 4 (rank)` or `field "doc_id"`; empty when unknown
	Reason string
}

func (p Problem) Error() string {
	var b strings.Builder
	b.WriteString(p.File)
	if p.Line > 0 {
		fmt.Fprintf(&b, ":%d", p.Line)
	}
	b.WriteString(": ")
	if p.Field != "" {
		b.WriteString(p.Field)
		b.WriteString(": ")
	}
	b.WriteString(p.Reason)
	return b.String()
}

// Problems is the error a reader returns when its input is invalid. List
// holds the first problems in file order (up to Options.MaxProblems); More
// counts the ones left out.
type Problems struct {
	List []Problem
	More int
}

func (ps *Problems) Error() string {
	lines := make([]string, 0, len(ps.List)+1)
	for _, p := range ps.List {
		lines = append(lines, p.Error())
	}
	if ps.More == 1 {
		lines = append(lines, "... and 1 more problem")
	} else if ps.More > 1 {
		lines = append(lines, fmt.Sprintf("... and %d more problems", ps.More))
	}
	return strings.Join(lines, "\n")
}

// collector gathers problems for one file.
type collector struct {
	file string
	max  int
	ps   Problems
}

func (c *collector) add(line int, field, reason string) {
	if len(c.ps.List) < c.max {
		c.ps.List = append(c.ps.List, Problem{File: c.file, Line: line, Field: field, Reason: reason})
		return
	}
	c.ps.More++
}

func (c *collector) addf(line int, field, format string, args ...any) {
	c.add(line, field, fmt.Sprintf(format, args...))
}

func (c *collector) failed() bool { return len(c.ps.List) > 0 }

func (c *collector) err() error {
	if !c.failed() {
		return nil
	}
	ps := c.ps
	return &ps
}
