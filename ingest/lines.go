package ingest

import (
	"bufio"
	"bytes"
	"errors"
	"io"
)

// errTooLong reports a line longer than Options.MaxLineBytes; the reader has
// already skipped the rest of it.
var errTooLong = errors.New("line too long")

const readBufSize = 64 << 10

// lineReader yields physical lines without their "\n" or "\r\n", counting
// them, and never holds more than max+readBufSize bytes of one line.
type lineReader struct {
	br   *bufio.Reader
	max  int
	line int // number of the line last returned
	long []byte
}

func newLineReader(r io.Reader, max int) *lineReader {
	return &lineReader{br: bufio.NewReaderSize(r, readBufSize), max: max}
}

var bom = []byte("\xef\xbb\xbf")

// next returns the next line; the slice is valid until the following call.
// At the end of input it returns io.EOF.
func (l *lineReader) next() ([]byte, error) {
	b, err := l.br.ReadSlice('\n')
	if err == bufio.ErrBufferFull {
		l.long = append(l.long[:0], b...)
		for err == bufio.ErrBufferFull {
			b, err = l.br.ReadSlice('\n')
			if len(l.long)+len(b) > l.max+2 {
				for err == bufio.ErrBufferFull {
					_, err = l.br.ReadSlice('\n')
				}
				if err != nil && err != io.EOF {
					return nil, err
				}
				l.line++
				return nil, errTooLong
			}
			l.long = append(l.long, b...)
		}
		b = l.long
	}
	if err == io.EOF {
		if len(b) == 0 {
			return nil, io.EOF
		}
	} else if err != nil {
		return nil, err
	}
	l.line++
	if n := len(b); n > 0 && b[n-1] == '\n' {
		b = b[:n-1]
		if n := len(b); n > 0 && b[n-1] == '\r' {
			b = b[:n-1]
		}
	}
	if l.line == 1 {
		// Spreadsheet programs start UTF-8 files with a byte order mark.
		b = bytes.TrimPrefix(b, bom)
	}
	if len(b) > l.max {
		return nil, errTooLong
	}
	return b, nil
}
