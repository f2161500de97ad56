package store

import (
	"cmp"
	"context"
	"database/sql"
	"errors"
	"fmt"
	"io"
	"path/filepath"
	"slices"
	"strings"

	"github.com/pertinent/pertinent/ingest"
)

// ImportKind names what a file brings into a project.
type ImportKind string

const (
	ImportQueries   ImportKind = "queries"
	ImportDocuments ImportKind = "documents"
	ImportPairs     ImportKind = "pairs"
	ImportRows      ImportKind = "rows" // combined pair rows: a pair with its query and document inline
	ImportRuns      ImportKind = "runs" // run files, pooled to a depth
	ImportQrels     ImportKind = "qrels"
	ImportFeatures  ImportKind = "features"
	// Calibration pairs: pairs with a known grade and its reason, for the calibration round.
	ImportCalibration ImportKind = "calibration"
)

// ImportKinds lists every kind in the order pages offer them.
var ImportKinds = []ImportKind{ImportRows, ImportQueries, ImportDocuments, ImportPairs, ImportRuns, ImportQrels, ImportFeatures, ImportCalibration}

// ImportSpec says what to import and how.
type ImportSpec struct {
	Kind ImportKind
	// Format is "csv", "jsonl" or "svmlight"; empty chooses by each file's extension
	// (.csv, .jsonl/.ndjson, .svm/.svmlight/.txt for features). Runs and qrels have one format.
	Format string
	DryRun bool   // validate and count, then roll back
	Depth  int    // runs: pool depth k; 0 means 10
	Source string // qrels: the name the judgments are recorded under
	Gold   bool   // qrels: also make each pair a gold pair with the qrels grade
	// SourceKind and SourceAbout, for qrels, say what the source is (SourceKinds) and where
	// its grades came from; given, they replace what was recorded of the source before.
	SourceKind  SourceKind
	SourceAbout map[string]string
	MaxProblems int // problems listed before counting the rest; 0 means 20
}

// DefaultPoolDepth is the depth used when a runs import names none.
const DefaultPoolDepth = 10

// ImportFile is one input; Name is shown in problems.
type ImportFile struct {
	Name string
	R    io.Reader
}

// ImportCount says how many rows of one kind an import added, changed and left as they were.
type ImportCount struct {
	What                    string
	New, Updated, Unchanged int
}

// tally counts one row by what the project held before: nothing (new), the same (unchanged)
// or something else (updated), and says whether the row must be written.
func (c *ImportCount) tally(had, same bool) bool {
	switch {
	case !had:
		c.New++
	case same:
		c.Unchanged++
		return false
	default:
		c.Updated++
	}
	return true
}

// ImportReport describes what an import did or, in a dry run, would do.
type ImportReport struct {
	Kind   ImportKind
	DryRun bool
	Files  []string
	Counts []ImportCount
	Notes  []string
}

// Count returns the counts for one kind of row, zero when absent.
func (r ImportReport) Count(what string) ImportCount {
	for _, c := range r.Counts {
		if c.What == what {
			return c
		}
	}
	return ImportCount{What: what}
}

// Changed reports whether the import added or updated anything.
func (r ImportReport) Changed() bool {
	for _, c := range r.Counts {
		if c.New+c.Updated > 0 {
			return true
		}
	}
	return false
}

// errDryRun rolls a dry run's transaction back after its counts are taken.
var errDryRun = errors.New("dry run")

// Import brings files into a project in one write transaction: everything is stored, or,
// when any file has a problem or anything fails, nothing is. Problems with the files come
// back as *ingest.Problems naming file, line, field and reason; the store adds its own (an
// unknown query id, say) in the same form. A dry run does all the same work and rolls back,
// so its counts are exact. Importing the same files again changes nothing; edited rows are
// updated in place by their external ids; judgments are never deleted.
func (s *Store) Import(ctx context.Context, projectID, by int64, spec ImportSpec, files []ImportFile) (ImportReport, error) {
	rep := ImportReport{Kind: spec.Kind, DryRun: spec.DryRun}
	if !slices.Contains(ImportKinds, spec.Kind) {
		return rep, errorf(CodeInvalid, fmt.Sprintf("unknown import kind %q", spec.Kind))
	}
	if len(files) == 0 {
		return rep, errorf(CodeInvalid, "choose at least one file to import")
	}
	if spec.Depth < 0 {
		return rep, errorf(CodeInvalid, "the pool depth must be at least 1")
	}
	if spec.Depth == 0 {
		spec.Depth = DefaultPoolDepth
	}
	if spec.Kind == ImportQrels {
		spec.Source = strings.TrimSpace(spec.Source)
		if err := validUsername(spec.Source); err != nil {
			return rep, errorf(CodeInvalid, "qrels need a source name (letters, digits, '.', '_', '-'): the judgments are recorded under it")
		}
		if err := validSourceDetails(spec.SourceKind, spec.SourceAbout); err != nil {
			return rep, err
		}
	}
	formats := make([]ingest.Format, len(files))
	for i, f := range files {
		rep.Files = append(rep.Files, f.Name)
		var err error
		if formats[i], err = importFormat(spec.Kind, spec.Format, f.Name); err != nil {
			return rep, err
		}
	}
	err := s.importTx(ctx, func(conn *sql.Conn, tx *sql.Tx) error {
		im, err := s.newImporter(ctx, conn, tx, projectID, by, spec)
		if err != nil {
			return err
		}
		defer im.close()
		if err := im.run(files, formats); err != nil {
			return err
		}
		if err := im.finish(); err != nil {
			return err
		}
		rep.Counts, rep.Notes = im.counts(), im.notes
		if spec.DryRun {
			return errDryRun
		}
		return s.audit(ctx, tx, by, projectID, "import."+string(spec.Kind), strings.Join(rep.Files, ", "), im.summary())
	})
	if errors.Is(err, errDryRun) {
		return rep, nil
	}
	if err != nil {
		rep.Counts, rep.Notes = nil, nil
		return rep, err
	}
	return rep, s.analyzeAfterLoad(ctx, rep.Changed())
}

// importTx is Store.write for imports, on a connection of its own, which fn gets beside
// the transaction: on PostgreSQL a rows file travels to the server as one COPY stream
// (import_copy.go), which pgx runs on the connection itself, not through database/sql.
// On SQLite every upsert keeps a statement journal (the pages it changes, as they were, so
// it can be undone alone); SQLite decides at BEGIN whether that journal lives in memory,
// following temp_store. By default it spills to a temporary file: two writes per changed
// page and statement, most of a bulk import's time. So the writer connection switches to
// in-memory temporary storage for the import's transaction.
func (s *Store) importTx(ctx context.Context, fn func(conn *sql.Conn, tx *sql.Tx) error) error {
	conn, err := s.w.Conn(ctx)
	if err != nil {
		return err
	}
	defer conn.Close()
	if !s.pg {
		if _, err := conn.ExecContext(ctx, `PRAGMA temp_store = MEMORY`); err != nil {
			return err
		}
		defer conn.ExecContext(context.WithoutCancel(ctx), `PRAGMA temp_store = DEFAULT`)
	}
	tx, err := conn.BeginTx(ctx, nil)
	if err != nil {
		return err
	}
	if err := fn(conn, tx); err != nil {
		tx.Rollback()
		return err
	}
	return tx.Commit()
}

// importFormat chooses the format of one file.
func importFormat(kind ImportKind, format, name string) (ingest.Format, error) {
	switch kind {
	case ImportRuns, ImportQrels:
		return 0, nil // one whitespace-separated format each
	}
	f := strings.ToLower(strings.TrimSpace(format))
	if f == "" {
		switch strings.ToLower(filepath.Ext(name)) {
		case ".csv":
			f = "csv"
		case ".jsonl", ".ndjson":
			f = "jsonl"
		case ".svm", ".svmlight", ".txt", ".libsvm":
			f = "svmlight"
		default:
			return 0, errorf(CodeInvalid, fmt.Sprintf("%s: cannot tell the format from the file name; choose csv, jsonl or svmlight", name))
		}
	}
	var out ingest.Format
	switch f {
	case "csv":
		out = ingest.CSV
	case "jsonl":
		out = ingest.JSONL
	case "svmlight":
		out = ingest.SVMlight
	default:
		return 0, errorf(CodeInvalid, fmt.Sprintf("unknown format %q: choose csv, jsonl or svmlight", format))
	}
	if kind == ImportFeatures && out == ingest.JSONL {
		return 0, errorf(CodeInvalid, name+": features come as SVMlight or CSV")
	}
	if kind != ImportFeatures && out == ingest.SVMlight {
		return 0, errorf(CodeInvalid, name+": only features come as SVMlight; "+string(kind)+" come as CSV or JSONL")
	}
	return out, nil
}

// problemList gathers the problems of one import in file order, up to a limit.
type problemList struct {
	max      int
	list     []ingest.Problem
	more     int
	file     []ingest.Problem // the store's problems with the current file
	fileMore int
}

// add records a problem the store found in the current file.
func (p *problemList) add(file string, line int, field, reason string) {
	if len(p.file) >= p.max {
		p.fileMore++
		return
	}
	p.file = append(p.file, ingest.Problem{File: file, Line: line, Field: field, Reason: reason})
}

// failed reports whether any problem has been found so far.
func (p *problemList) failed() bool {
	return len(p.list) > 0 || p.more > 0 || len(p.file) > 0 || p.fileMore > 0
}

// endFile merges the reader's problems (err, when it is *ingest.Problems) with the store's
// own for the file just read, in line order. Any other error is returned.
func (p *problemList) endFile(err error) error {
	var ps *ingest.Problems
	if err != nil && !errors.As(err, &ps) {
		return err
	}
	merged := p.file
	more := p.fileMore
	if ps != nil {
		merged = append(merged, ps.List...)
		more += ps.More
	}
	slices.SortStableFunc(merged, func(a, b ingest.Problem) int { return cmp.Compare(a.Line, b.Line) })
	for _, x := range merged {
		if len(p.list) < p.max {
			p.list = append(p.list, x)
		} else {
			p.more++
		}
	}
	p.more += more
	p.file, p.fileMore = nil, 0
	return nil
}

func (p *problemList) err() error {
	if len(p.list) == 0 && p.more == 0 {
		return nil
	}
	return &ingest.Problems{List: p.list, More: p.more}
}
