package store

import (
	"context"
	"database/sql"
	"encoding/json"
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
// everything given to one Load call is stored, or nothing is.
type Loader struct {
	ctx     context.Context
	s       *Store
	tx      *sql.Tx
	project int64
	query   *sql.Stmt
	doc     *sql.Stmt
	pair    *sql.Stmt
}

// Load runs fn with a Loader for the project and commits when fn returns nil.
func (s *Store) Load(ctx context.Context, projectID int64, fn func(*Loader) error) error {
	return s.write(ctx, func(tx *sql.Tx) error {
		l := &Loader{ctx: ctx, s: s, tx: tx, project: projectID}
		var err error
		if l.query, err = tx.PrepareContext(ctx, `INSERT INTO queries(project_id, external_id, text, need) VALUES (?, ?, ?, ?)
			ON CONFLICT (project_id, external_id) DO UPDATE SET text = excluded.text, need = excluded.need RETURNING id`); err != nil {
			return err
		}
		defer l.query.Close()
		if l.doc, err = tx.PrepareContext(ctx, `INSERT INTO documents(project_id, external_id, title, url, body, body_format, metadata)
			VALUES (?, ?, ?, ?, ?, ?, ?)
			ON CONFLICT (project_id, external_id) DO UPDATE SET title = excluded.title, url = excluded.url,
				body = excluded.body, body_format = excluded.body_format, metadata = excluded.metadata RETURNING id`); err != nil {
			return err
		}
		defer l.doc.Close()
		if l.pair, err = tx.PrepareContext(ctx, `INSERT INTO pairs(project_id, query_id, document_id, origin, priority, gold_grade, created_at)
			VALUES (?, ?, ?, ?, ?, ?, ?)
			ON CONFLICT (project_id, query_id, document_id) DO UPDATE SET priority = excluded.priority, gold_grade = excluded.gold_grade
			RETURNING id`); err != nil {
			return err
		}
		defer l.pair.Close()
		return fn(l)
	})
}

// Query adds or updates a query by its external id and returns its id.
func (l *Loader) Query(q Query) (int64, error) {
	var id int64
	err := l.query.QueryRowContext(l.ctx, l.project, q.ExternalID, q.Text, q.Need).Scan(&id)
	return id, err
}

// Document adds or updates a document by its external id and returns its id.
func (l *Loader) Document(d Document) (int64, error) {
	if d.BodyFormat == "" {
		d.BodyFormat = "text"
	}
	meta := []byte("{}")
	if len(d.Metadata) > 0 {
		meta, _ = json.Marshal(d.Metadata)
	}
	var id int64
	err := l.doc.QueryRowContext(l.ctx, l.project, d.ExternalID, d.Title, d.URL, d.Body, d.BodyFormat, string(meta)).Scan(&id)
	return id, err
}

// PairSpec describes a pair to add.
type PairSpec struct {
	QueryID, DocumentID int64
	Origin              string
	Priority            int
	GoldGrade           *int // set for a gold pair
}

// Pair adds a pair, or updates its priority and gold grade, and returns its id.
func (l *Loader) Pair(p PairSpec) (int64, error) {
	var gold any
	if p.GoldGrade != nil {
		gold = *p.GoldGrade
	}
	var id int64
	err := l.pair.QueryRowContext(l.ctx, l.project, p.QueryID, p.DocumentID, p.Origin, p.Priority, gold, now()).Scan(&id)
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
		at = now()
	}
	_, err := l.s.insertJudgment(l.ctx, l.tx, Submission{PairID: j.PairID, UserID: j.UserID, Grade: j.Grade,
		CannotJudge: j.CannotJudge, Note: j.Note, TimeSpentMs: j.TimeSpentMs}, at)
	return err
}
