package store

import (
	"cmp"
	"context"
	"database/sql"
	"errors"
)

// Query is a searcher's query within a project.
type Query struct {
	ID         int64
	ExternalID string
	Text       string
	Need       string // description of the information need, may be empty
}

// Document is a candidate result within a project.
type Document struct {
	ID         int64
	ExternalID string
	Title      string
	URL        string
	Body       string
	BodyFormat string // "text" or "html"
	Metadata   map[string]string
}

// Loader adds queries, documents and pairs to one project inside a single transaction:
// everything given to one Load call is stored, or nothing is. It writes through the
// import's own statements (upsertQuery, upsertDocuments, upsertPair) and encodes documents
// as the import does, so a row added here and the same row imported end up the same; it is
// for code that builds a collection in Go (the demo, the load test, tests), while files go
// through Import.
type Loader struct {
	ctx      context.Context
	s        *Store
	tx       *sql.Tx
	project  int64
	query    *sql.Stmt
	findQ    *sql.Stmt
	doc      *sql.Stmt
	findD    *sql.Stmt
	pair     *sql.Stmt
	findPair *sql.Stmt
}

// Load runs fn with a Loader for the project and commits when fn returns nil.
func (s *Store) Load(ctx context.Context, projectID int64, fn func(*Loader) error) error {
	err := s.write(ctx, func(tx *sql.Tx) error {
		// The Loader writes pairs and judgments: one project's writer at a time, as for imports.
		if err := s.lockProject(ctx, tx, projectID); err != nil {
			return err
		}
		l := &Loader{ctx: ctx, s: s, tx: tx, project: projectID}
		var stmts []*sql.Stmt
		defer func() {
			for _, st := range stmts {
				st.Close()
			}
		}()
		var first error
		keep := func(st *sql.Stmt, err error) *sql.Stmt {
			if err != nil {
				first = cmp.Or(first, err)
				return nil
			}
			stmts = append(stmts, st)
			return st
		}
		l.query, l.findQ = keep(tx.PrepareContext(ctx, upsertQuery)), keep(tx.PrepareContext(ctx, findQuery))
		l.doc, l.findD = keep(tx.PrepareContext(ctx, upsertDocument)), keep(tx.PrepareContext(ctx, findDocument))
		l.pair, l.findPair = keep(tx.PrepareContext(ctx, upsertPair)), keep(tx.PrepareContext(ctx, findPair))
		if first != nil {
			return first
		}
		return fn(l)
	})
	if err != nil {
		return err
	}
	return s.analyzeAfterLoad(ctx, true)
}

// Query adds or updates a query by its external id and returns its id.
func (l *Loader) Query(q Query) (int64, error) {
	var id int64
	err := l.query.QueryRowContext(l.ctx, l.project, q.ExternalID, q.Text, q.Need).Scan(&id)
	if errors.Is(err, sql.ErrNoRows) { // unchanged: the upsert returns no row
		err = l.findQ.QueryRowContext(l.ctx, l.project, q.ExternalID).Scan(&id)
	}
	return id, err
}

// Document adds or updates a document by its external id and returns its id. Metadata
// that cannot be stored as given is a CodeInvalid error.
func (l *Loader) Document(d Document) (int64, error) {
	if d.BodyFormat == "" {
		d.BodyFormat = "text"
	}
	a, err := documentArgs(d.ExternalID, d.Title, d.URL, d.Body, d.BodyFormat, d.Metadata)
	if err != nil {
		return 0, err
	}
	if _, err := l.doc.ExecContext(l.ctx, l.project, a.id, a.title, a.url, a.body, a.format, a.meta); err != nil {
		return 0, err
	}
	var id int64
	err = l.findD.QueryRowContext(l.ctx, l.project, d.ExternalID).Scan(&id)
	return id, err
}

// PairSpec describes a pair to add.
type PairSpec struct {
	QueryID, DocumentID int64
	Origin              string
	Priority            int
	GoldGrade           *int // set for a gold pair
}

// Pair adds a pair, or updates its priority and, when given, its gold grade (a pair added
// again without one keeps the gold grade it has, as in a pairs import), and returns its id.
func (l *Loader) Pair(p PairSpec) (int64, error) {
	var gold any
	if p.GoldGrade != nil {
		gold = *p.GoldGrade
	}
	if _, err := l.pair.ExecContext(l.ctx, l.project, p.QueryID, p.DocumentID, p.Origin, p.Priority, gold, l.s.now()); err != nil {
		return 0, err
	}
	var id int64
	var had sql.NullInt64
	err := l.findPair.QueryRowContext(l.ctx, l.project, p.QueryID, p.DocumentID).Scan(&id, &had)
	return id, err
}

// RecordedJudgment is a judgment made elsewhere (a demo history, an earlier system) with its
// own time.
type RecordedJudgment struct {
	PairID, UserID int64
	Grade          *int
	CannotJudge    string
	Note           string
	TimeSpentMs    int
	At             string // RFC 3339 time text; empty means now
}

// Judgment stores a judgment made elsewhere as the user's current judgment of the pair.
func (l *Loader) Judgment(j RecordedJudgment) error {
	at := j.At
	if at == "" {
		at = l.s.now()
	}
	_, err := l.s.insertJudgment(l.ctx, l.tx, Submission{PairID: j.PairID, UserID: j.UserID, Grade: j.Grade,
		CannotJudge: j.CannotJudge, Note: j.Note, TimeSpentMs: j.TimeSpentMs}, at)
	return err
}
