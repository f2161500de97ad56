package export

import (
	"archive/zip"
	"compress/flate"
	"errors"
	"io"
	"os"
	"path/filepath"
	"time"
)

// Sink receives the files of an export. Sequential sinks (a zip stream) get one file at a
// time: each Create ends the previous file. Others (a directory) may hold several open.
type Sink interface {
	Create(name string) (io.Writer, error)
	Sequential() bool
}

// DirSink writes an export's files into a directory, several open at once.
type DirSink struct {
	Dir   string
	files []*os.File
}

// Create creates (or truncates) a file in the directory.
func (d *DirSink) Create(name string) (io.Writer, error) {
	f, err := os.Create(filepath.Join(d.Dir, name))
	if err != nil {
		return nil, err
	}
	d.files = append(d.files, f)
	return f, nil
}

// Sequential is false: a directory holds any number of open files.
func (d *DirSink) Sequential() bool { return false }

// Close syncs and closes every file created.
func (d *DirSink) Close() error {
	var errs []error
	for _, f := range d.files {
		errs = append(errs, f.Sync(), f.Close())
	}
	d.files = nil
	return errors.Join(errs...)
}

// ZipSink streams an export as a zip archive: each file is compressed as it is written, so
// nothing is held in memory but the compressor's window.
type ZipSink struct {
	zw       *zip.Writer
	Modified time.Time
}

// NewZipSink writes a zip archive to w; Close finishes it.
func NewZipSink(w io.Writer, modified time.Time) *ZipSink {
	zw := zip.NewWriter(w)
	// Feature files are large and repetitive: the fastest level keeps most of the gain
	// without making compression the slowest step of a download.
	zw.RegisterCompressor(zip.Deflate, func(out io.Writer) (io.WriteCloser, error) {
		return flate.NewWriter(out, flate.BestSpeed)
	})
	return &ZipSink{zw: zw, Modified: modified}
}

// Create starts the next file of the archive, ending the previous one.
func (z *ZipSink) Create(name string) (io.Writer, error) {
	return z.zw.CreateHeader(&zip.FileHeader{Name: name, Method: zip.Deflate, Modified: z.Modified})
}

// Sequential is true: a zip stream holds one open file at a time.
func (z *ZipSink) Sequential() bool { return true }

// Close writes the archive's central directory.
func (z *ZipSink) Close() error { return z.zw.Close() }
