package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"strings"

	"github.com/pertinent/pertinent/ingest"
)

// importer carries one import's transaction, prepared statements, id caches and counts.
type importer struct {
	// ctx runs the statements; it is never cancelled, since the driver watches a
	// cancellable context with a goroutine per statement, which costs more than the
	// statement itself in a bulk import. done is the caller's context, checked per batch.
	ctx     context.Context
	done    context.Context
	pg      bool      // PostgreSQL: no page cache to size, rows files by COPY
	conn    *sql.Conn // tx's connection, for COPY
	tx      *sql.Tx
	project int64
	by      int64
	spec    ImportSpec
	scale   int
	at      string
	ps      problemList
	stmts   map[string]*sql.Stmt

	// Rows with ids above these existed before the import began: an upsert that returns
	// such an id inserted the row, any other id it updated.
	maxQuery, maxDoc, maxPair int64

	queryIDs map[string]int64 // external id -> id, for queries met so far (0: not in the project)
	docIDs   map[string]int64

	// Pairs are counted from the changes SQLite reports, since a bulk import never asks
	// for their ids; finish turns these into new, updated and unchanged.
	pairsGiven, pairChanges int
	docs, rowPairs          *bulk // the bulk path's buffers; nil until used
	newDocs, newPairs       *bulk // the same for the fresh path (import_fresh.go)
	fresh                   bool  // the project had no documents or pairs: see import_fresh.go

	order []string
	count map[string]*ImportCount
	notes []string
}

func (s *Store) newImporter(ctx context.Context, conn *sql.Conn, tx *sql.Tx, projectID, by int64, spec ImportSpec) (*importer, error) {
	if err := s.lockProject(ctx, tx, projectID); err != nil {
		return nil, err
	}
	im := &importer{ctx: context.WithoutCancel(ctx), done: ctx, pg: s.pg, conn: conn, tx: tx, project: projectID, by: by, spec: spec, at: s.now(),
		stmts: map[string]*sql.Stmt{}, queryIDs: map[string]int64{}, docIDs: map[string]int64{}, count: map[string]*ImportCount{}}
	im.ps.max = spec.MaxProblems
	if im.ps.max <= 0 {
		im.ps.max = 20
	}
	var archived bool
	err := tx.QueryRowContext(ctx, `SELECT archived_at IS NOT NULL, (SELECT COUNT(*) FROM scale_levels WHERE project_id = ?1)
		FROM projects WHERE id = ?1`, projectID).Scan(&archived, &im.scale)
	if errors.Is(err, sql.ErrNoRows) {
		return nil, ErrNotFound
	}
	if err != nil {
		return nil, err
	}
	if archived {
		return nil, errorf(CodeConflict, "the project is archived: it takes no more imports")
	}
	err = tx.QueryRowContext(ctx, `SELECT (SELECT COALESCE(MAX(id), 0) FROM queries), (SELECT COALESCE(MAX(id), 0) FROM documents),
		(SELECT COALESCE(MAX(id), 0) FROM pairs)`).Scan(&im.maxQuery, &im.maxDoc, &im.maxPair)
	if err != nil {
		return nil, err
	}
	// 16 MiB of page cache: measured on the benchmark, a larger cache made a bulk import
	// no faster (the inserts touch few pages at a time) and only grew its memory.
	if !s.pg {
		if _, err := tx.ExecContext(ctx, `PRAGMA cache_size = -16384`); err != nil {
			return nil, err
		}
	}
	if err := tx.QueryRowContext(ctx, projectIsFresh, projectID).Scan(&im.fresh); err != nil {
		return nil, err
	}
	// The fresh path gives ids itself, past the highest of all projects; on PostgreSQL
	// another project's import may hold ids beyond it uncommitted, and the identity sequence
	// would not know of the given ones. There the bulk path, which lets the sequence number,
	// takes every import.
	im.fresh = im.fresh && !s.pg
	if err := im.beginProgress(); err != nil {
		return nil, err
	}
	return im, nil
}

func (im *importer) close() {
	for _, st := range im.stmts {
		st.Close()
	}
	// Back to SQLite's default (the store sets no other), on the one writer connection.
	if !im.pg {
		im.tx.ExecContext(context.WithoutCancel(im.ctx), `PRAGMA cache_size = -2000`)
	}
}

// stmt prepares a statement once per import.
func (im *importer) stmt(query string) (*sql.Stmt, error) {
	if st, ok := im.stmts[query]; ok {
		return st, nil
	}
	st, err := im.tx.PrepareContext(im.ctx, query)
	if err != nil {
		return nil, err
	}
	im.stmts[query] = st
	return st, nil
}

func (im *importer) counter(what string) *ImportCount {
	c, ok := im.count[what]
	if !ok {
		c = &ImportCount{What: what}
		im.count[what] = c
		im.order = append(im.order, what)
	}
	return c
}

func (im *importer) counts() []ImportCount {
	out := make([]ImportCount, 0, len(im.order))
	for _, w := range im.order {
		out = append(out, *im.count[w])
	}
	return out
}

func (im *importer) summary() string {
	var parts []string
	for _, c := range im.counts() {
		parts = append(parts, fmt.Sprintf("%s %d new, %d updated, %d unchanged", c.What, c.New, c.Updated, c.Unchanged))
	}
	return strings.Join(parts, "; ")
}

func (im *importer) options(name string) ingest.Options {
	return ingest.Options{File: name, Scale: im.scale, MaxProblems: im.ps.max}
}

// run reads every file; problems are gathered across files before rolling back.
func (im *importer) run(files []ImportFile, formats []ingest.Format) error {
	if im.spec.Kind == ImportRuns {
		return im.runs(files)
	}
	for i, f := range files {
		var err error
		switch im.spec.Kind {
		case ImportQueries:
			err = im.queries(f, formats[i])
		case ImportDocuments:
			err = im.documents(f, formats[i])
		case ImportPairs:
			err = im.pairs(f, formats[i])
		case ImportRows:
			err = im.rows(f, formats[i])
		case ImportQrels:
			err = im.qrels(f)
		case ImportFeatures:
			err = im.features(f, formats[i])
		case ImportCalibration:
			err = im.calibration(f, formats[i])
		}
		if err := im.ps.endFile(err); err != nil {
			return err
		}
	}
	if err := im.ps.err(); err != nil || im.spec.Kind != ImportCalibration {
		return err
	}
	return im.orderCalibration(files[len(files)-1].Name)
}

// finish settles the counts that come from totals rather than single rows.
func (im *importer) finish() error {
	var docsGiven, docChanges int
	for _, b := range [...]*bulk{im.rowPairs, im.newPairs, im.docs, im.newDocs} {
		if b == nil {
			continue
		}
		if b == im.docs || b == im.newDocs {
			docsGiven += b.given
			docChanges += b.changes
			continue
		}
		im.pairsGiven += b.given
		im.pairChanges += b.changes
	}
	if docsGiven > 0 {
		var added int
		if err := im.tx.QueryRowContext(im.ctx, `SELECT COUNT(*) FROM documents WHERE id > ? AND project_id = ?`, im.maxDoc, im.project).Scan(&added); err != nil {
			return err
		}
		settle(im.counter("documents"), docsGiven, docChanges, added)
	}
	if im.pairsGiven > 0 {
		var added int
		if err := im.tx.QueryRowContext(im.ctx, `SELECT COUNT(*) FROM pairs WHERE id > ? AND project_id = ?`, im.maxPair, im.project).Scan(&added); err != nil {
			return err
		}
		settle(im.counter("pairs"), im.pairsGiven, im.pairChanges, added)
	}
	return im.settleProgress()
}

// settle turns rows given, rows changed and rows added into new, updated and unchanged.
func settle(c *ImportCount, given, changes, added int) {
	c.New += added
	c.Updated += changes - added
	c.Unchanged += given - changes
}

// upsertID runs an upsert that returns the row's id when it inserted or changed the row,
// and nothing when the row was already as given; find then looks the id up. seen holds the
// ids met in this import, so a row given twice counts as updated, not new; nil keeps none
// (the readers have rejected repeats within a file already).
func (im *importer) upsertID(c *ImportCount, maxBefore int64, seen map[string]int64, ext string, upsert, find string, args ...any) (int64, error) {
	st, err := im.stmt(upsert)
	if err != nil {
		return 0, err
	}
	var id int64
	err = st.QueryRowContext(im.ctx, args...).Scan(&id)
	switch {
	case errors.Is(err, sql.ErrNoRows):
		c.Unchanged++
		fs, err := im.stmt(find)
		if err != nil {
			return 0, err
		}
		if err := fs.QueryRowContext(im.ctx, im.project, ext).Scan(&id); err != nil {
			return 0, err
		}
	case err != nil:
		return 0, err
	case id > maxBefore && seen[ext] == 0:
		c.New++
	default:
		c.Updated++
	}
	if seen != nil {
		seen[ext] = id
	}
	return id, nil
}

// pipe reads records in one goroutine and writes them in this one, so parsing a large
// file overlaps with the database's work on the previous records. A write error stops the
// reader.
func pipe[T any](ctx context.Context, read func(emit func(T) error) error, write func(T) error) error {
	p := pull(ctx, read)
	for {
		x, ok, err := p.next()
		if ok && err == nil {
			err = write(x)
		}
		if err != nil {
			p.close()
			return err
		}
		if !ok {
			return p.close()
		}
	}
}

// puller runs a reader in its own goroutine and hands its records to a writer that asks for
// them one at a time (pipe's loop, or COPY pulling its rows). Records travel in batches to
// keep channel traffic low.
type puller[T any] struct {
	ctx     context.Context
	ch      chan []T
	stop    chan struct{}
	stopped bool
	batch   []T
	err     error // the reader's; read only once ch is closed
}

func pull[T any](ctx context.Context, read func(emit func(T) error) error) *puller[T] {
	const batch = 512
	p := &puller[T]{ctx: ctx, ch: make(chan []T, 4), stop: make(chan struct{})}
	go func() {
		defer close(p.ch)
		buf := make([]T, 0, batch)
		send := func() error {
			select {
			case p.ch <- buf:
				buf = make([]T, 0, batch)
				return nil
			case <-p.stop:
				return errStopped
			}
		}
		p.err = read(func(x T) error {
			buf = append(buf, x)
			if len(buf) == batch {
				return send()
			}
			return nil
		})
		// The rows read before a problem go too, so the writer checks them (their ids)
		// whatever the batch boundaries; once stopped, send returns at once.
		if len(buf) > 0 {
			send()
		}
	}()
	return p
}

// next returns the next record, ok false once the reader has ended; err when ctx is done.
func (p *puller[T]) next() (x T, ok bool, err error) {
	for len(p.batch) == 0 {
		if err := p.ctx.Err(); err != nil {
			return x, false, err
		}
		b, more := <-p.ch
		if !more {
			return x, false, nil
		}
		p.batch = b
	}
	x, p.batch = p.batch[0], p.batch[1:]
	return x, true, nil
}

// close stops the reader, waits for it to end and returns its error.
func (p *puller[T]) close() error {
	if !p.stopped {
		close(p.stop)
		p.stopped = true
	}
	for range p.ch {
	}
	return p.err
}

var errStopped = errors.New("import stopped")
