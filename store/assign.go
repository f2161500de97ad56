package store

import (
	"context"
	"database/sql"
	"errors"
	"time"
)

// PairView is everything an assessor sees of a pair while judging it.
type PairView struct {
	PairID    int64
	ProjectID int64
	Query     Query
	Document  Document
	LeasedAt  time.Time
}

// openPair is the condition for a pair this assessor may be given: not judged by them, and
// its judgments plus the live leases of others still short of what the project needs.
const openPair = `p.project_id = ?1 AND p.gold_grade IS NULL
	AND NOT EXISTS (SELECT 1 FROM judgments j WHERE j.pair_id = p.id AND j.user_id = ?2 AND j.current = 1)
	AND p.judged + (SELECT COUNT(*) FROM leases l WHERE l.pair_id = p.id AND l.user_id != ?2 AND l.expires_at > ?3) < ?4`

// shuffle orders a query's pairs differently for every assessor, so no document's position
// in an import decides who sees it first.
const shuffle = `(p.id * 1103515245 + ?2 * 12345) % 2147483647`

// NextPair leases the next pair to an assessor. It resumes a live lease first; then it keeps
// the assessor on the query they were judging until its open pairs run out; then it starts
// the query with the fewest judgments so far. ErrNoWork means nothing is left for them.
func (s *Store) NextPair(ctx context.Context, projectID, userID int64) (PairView, error) {
	var pairID int64
	var leasedAt string
	err := s.write(ctx, func(tx *sql.Tx) error {
		var needed, leaseSeconds int
		var archived, member bool
		err := tx.QueryRowContext(ctx, `SELECT judgments_per_pair, lease_seconds, archived_at IS NOT NULL,
				EXISTS (SELECT 1 FROM project_members m WHERE m.project_id = ?1 AND m.user_id = ?2 AND m.role = 'assessor')
			FROM projects WHERE id = ?1`, projectID, userID).Scan(&needed, &leaseSeconds, &archived, &member)
		if errors.Is(err, sql.ErrNoRows) {
			return ErrNotFound
		}
		if err != nil {
			return err
		}
		if !member {
			return errorf(CodeDenied, "only the project's assessors are given pairs to judge")
		}
		if archived {
			return ErrNoWork
		}
		t := time.Now()
		nowText := timeText(t)
		err = tx.QueryRowContext(ctx, `SELECT l.pair_id, l.leased_at FROM leases l JOIN pairs p ON p.id = l.pair_id
			WHERE p.project_id = ?1 AND l.user_id = ?2 AND l.expires_at > ?3
			AND NOT EXISTS (SELECT 1 FROM judgments j WHERE j.pair_id = p.id AND j.user_id = ?2 AND j.current = 1)
			ORDER BY l.leased_at LIMIT 1`, projectID, userID, nowText).Scan(&pairID, &leasedAt)
		if err == nil {
			return nil
		}
		if !errors.Is(err, sql.ErrNoRows) {
			return err
		}
		args := []any{projectID, userID, nowText, needed}
		// Stay with the query of this assessor's latest judgment while it has open pairs.
		err = tx.QueryRowContext(ctx, `SELECT p.id FROM pairs p WHERE `+openPair+`
			AND p.query_id = (SELECT x.query_id FROM judgments j JOIN pairs x ON x.id = j.pair_id
				WHERE j.user_id = ?2 AND x.project_id = ?1 ORDER BY j.id DESC LIMIT 1)
			ORDER BY p.priority DESC, `+shuffle+` LIMIT 1`, args...).Scan(&pairID)
		if errors.Is(err, sql.ErrNoRows) {
			err = tx.QueryRowContext(ctx, `SELECT p.id FROM pairs p
				JOIN (SELECT query_id, SUM(judged) AS coverage, MAX(priority) AS top FROM pairs WHERE project_id = ?1 GROUP BY query_id) q
					ON q.query_id = p.query_id
				WHERE `+openPair+`
				ORDER BY q.top DESC, q.coverage, p.query_id, p.priority DESC, `+shuffle+` LIMIT 1`, args...).Scan(&pairID)
		}
		if errors.Is(err, sql.ErrNoRows) {
			return ErrNoWork
		}
		if err != nil {
			return err
		}
		leasedAt = nowText
		_, err = tx.ExecContext(ctx, `INSERT INTO leases(pair_id, user_id, leased_at, expires_at) VALUES (?, ?, ?, ?)
			ON CONFLICT (pair_id, user_id) DO UPDATE SET leased_at = excluded.leased_at, expires_at = excluded.expires_at`,
			pairID, userID, nowText, timeText(t.Add(time.Duration(leaseSeconds)*time.Second)))
		return err
	})
	if err != nil {
		return PairView{}, err
	}
	v, err := s.pairView(ctx, pairID)
	v.LeasedAt = parseTime(leasedAt)
	return v, err
}

// pairView loads the query and document of a pair.
func (s *Store) pairView(ctx context.Context, pairID int64) (PairView, error) {
	var v PairView
	err := s.r.QueryRowContext(ctx, `SELECT p.id, p.project_id,
			q.id, q.external_id, q.text, q.need,
			d.id, d.external_id, d.title, d.url, d.body, d.body_format
		FROM pairs p JOIN queries q ON q.id = p.query_id JOIN documents d ON d.id = p.document_id
		WHERE p.id = ?`, pairID).Scan(&v.PairID, &v.ProjectID,
		&v.Query.ID, &v.Query.ExternalID, &v.Query.Text, &v.Query.Need,
		&v.Document.ID, &v.Document.ExternalID, &v.Document.Title, &v.Document.URL, &v.Document.Body, &v.Document.BodyFormat)
	if errors.Is(err, sql.ErrNoRows) {
		return PairView{}, ErrNotFound
	}
	return v, err
}

// Progress counts a project's pairs by state.
type Progress struct {
	Pairs      int // all pairs that are not gold
	Done       int // pairs with every judgment they need
	InProgress int // pairs with some judgments
	Untouched  int
	Judgments  int
	Needed     int
}

// ProjectProgress counts the project's pairs by how far their judging has come.
func (s *Store) ProjectProgress(ctx context.Context, projectID int64) (Progress, error) {
	var p Progress
	err := s.r.QueryRowContext(ctx, `SELECT COUNT(x.id),
			COALESCE(SUM(x.judged >= pr.judgments_per_pair), 0),
			COALESCE(SUM(x.judged > 0 AND x.judged < pr.judgments_per_pair), 0),
			COALESCE(SUM(x.judged = 0), 0),
			COALESCE(SUM(x.judged), 0),
			COUNT(x.id) * pr.judgments_per_pair
		FROM projects pr LEFT JOIN pairs x ON x.project_id = pr.id AND x.gold_grade IS NULL
		WHERE pr.id = ?`, projectID).Scan(&p.Pairs, &p.Done, &p.InProgress, &p.Untouched, &p.Judgments, &p.Needed)
	return p, err
}

// PairProject returns the project a pair belongs to.
func (s *Store) PairProject(ctx context.Context, pairID int64) (int64, error) {
	var id int64
	err := s.r.QueryRowContext(ctx, `SELECT project_id FROM pairs WHERE id = ?`, pairID).Scan(&id)
	if errors.Is(err, sql.ErrNoRows) {
		return 0, ErrNotFound
	}
	return id, err
}
