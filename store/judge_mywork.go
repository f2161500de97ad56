package store

import (
	"context"
	"database/sql"
	"time"
)

// MyJudgment is one of an assessor's own current judgments, as listed on their "My work"
// page. It carries nothing of any other assessor.
type MyJudgment struct {
	Judgment
	QueryText     string
	DocumentTitle string
	Revised       bool // supersedes an earlier answer
	Changeable    bool // the project allows changes and no lead has adjudicated the pair
}

// An assessor's judgments in a project: SQLite is told to start from the assessor's
// judgments (CROSS JOIN, and + to keep it off the project's index); PostgreSQL, which has
// neither hint, plans that from its statistics.
const (
	sqliteMyJudgmentsSQL = `SELECT j.id, j.pair_id, j.grade, COALESCE(j.cannot_judge, ''), j.note, j.time_spent_ms,
			COALESCE(j.supersedes, 0), j.created_at, q.text, d.title,
			pr.allow_changes = 1 AND NOT EXISTS (SELECT 1 FROM adjudications a WHERE a.pair_id = j.pair_id AND a.current = 1)
		FROM judgments j CROSS JOIN pairs p ON p.id = j.pair_id JOIN queries q ON q.id = p.query_id
			JOIN documents d ON d.id = p.document_id JOIN projects pr ON pr.id = p.project_id
		WHERE j.user_id = ?2 AND +p.project_id = ?1 AND j.current = 1
		ORDER BY j.id DESC LIMIT ?3`
	postgresMyJudgmentsSQL = `SELECT j.id, j.pair_id, j.grade, COALESCE(j.cannot_judge, ''), j.note, j.time_spent_ms,
			COALESCE(j.supersedes, 0), j.created_at, q.text, d.title,
			pr.allow_changes = 1 AND NOT EXISTS (SELECT 1 FROM adjudications a WHERE a.pair_id = j.pair_id AND a.current = 1)
		FROM judgments j JOIN pairs p ON p.id = j.pair_id JOIN queries q ON q.id = p.query_id
			JOIN documents d ON d.id = p.document_id JOIN projects pr ON pr.id = p.project_id
		WHERE j.user_id = ?2 AND p.project_id = ?1 AND j.current = 1
		ORDER BY j.id DESC LIMIT ?3`
	sqliteMyCountsSQL = `SELECT
			COUNT(*) FILTER (WHERE j.created_at >= ?3 AND j.supersedes IS NULL AND j.withdrawn_at IS NULL),
			COALESCE(SUM(j.current), 0)
		FROM judgments j CROSS JOIN pairs p ON p.id = j.pair_id
		WHERE j.user_id = ?2 AND +p.project_id = ?1`
	postgresMyCountsSQL = `SELECT
			COUNT(*) FILTER (WHERE j.created_at >= ?3 AND j.supersedes IS NULL AND j.withdrawn_at IS NULL),
			COALESCE(SUM(j.current), 0)
		FROM judgments j JOIN pairs p ON p.id = j.pair_id
		WHERE j.user_id = ?2 AND p.project_id = ?1`
	sqliteFlaggedSQL = `SELECT p.id, q.text, d.title, j.cannot_judge, COUNT(*)
		FROM judgments j CROSS JOIN pairs p ON p.id = j.pair_id JOIN queries q ON q.id = p.query_id JOIN documents d ON d.id = p.document_id
		WHERE j.current = 1 AND j.cannot_judge IS NOT NULL AND p.project_id = ?1
		GROUP BY p.id, j.cannot_judge
		ORDER BY j.cannot_judge = 'disturbing' DESC, COUNT(*) DESC, p.id LIMIT ?2`
	postgresFlaggedSQL = `SELECT p.id, q.text, d.title, j.cannot_judge, COUNT(*)
		FROM judgments j JOIN pairs p ON p.id = j.pair_id JOIN queries q ON q.id = p.query_id JOIN documents d ON d.id = p.document_id
		WHERE j.current = 1 AND j.cannot_judge IS NOT NULL AND p.project_id = ?1
		GROUP BY p.id, q.text, d.title, j.cannot_judge
		ORDER BY j.cannot_judge = 'disturbing' DESC, COUNT(*) DESC, p.id LIMIT ?2`
)

// JudgmentsByAssessor lists an assessor's current judgments in a project, newest first.
func (s *Store) JudgmentsByAssessor(ctx context.Context, projectID, userID int64, limit int) ([]MyJudgment, error) {
	if limit <= 0 || limit > 500 {
		limit = 50
	}
	return queryAll(ctx, s.r, s.dialect(sqliteMyJudgmentsSQL, postgresMyJudgmentsSQL), func(r rowScanner) (MyJudgment, error) {
		var m MyJudgment
		var grade sql.NullInt64
		var at string
		err := r.Scan(&m.ID, &m.PairID, &grade, &m.CannotJudge, &m.Note, &m.TimeSpentMs, &m.Supersedes, &at,
			&m.QueryText, &m.DocumentTitle, &m.Changeable)
		m.UserID = userID
		m.Current = true
		m.Revised = m.Supersedes != 0
		m.Grade, m.CreatedAt = gradeOf(grade), parseTime(at)
		return m, err
	}, projectID, userID, limit)
}

// JudgmentCountsByAssessor returns how many pairs an assessor has a current judgment of in a project, and
// how many first answers (not revisions, not withdrawn) they gave since the given time (the
// start of their day, chosen by the caller).
func (s *Store) JudgmentCountsByAssessor(ctx context.Context, projectID, userID int64, since time.Time) (today, overall int, err error) {
	err = s.r.QueryRowContext(ctx, s.dialect(sqliteMyCountsSQL, postgresMyCountsSQL), projectID, userID, timeText(since)).Scan(&today, &overall)
	return today, overall, err
}

// FlaggedPair is a pair assessors said they cannot judge, for a reason, with how many said so.
// It names no assessor.
type FlaggedPair struct {
	PairID        int64
	QueryText     string
	DocumentTitle string
	Reason        string
	Count         int
}

// FlaggedPairs lists the project's pairs with current "cannot judge" answers, disturbing
// content first, then by how many assessors flagged them.
func (s *Store) FlaggedPairs(ctx context.Context, projectID int64, limit int) ([]FlaggedPair, error) {
	if limit <= 0 || limit > 1000 {
		limit = 100
	}
	return queryAll(ctx, s.r, s.dialect(sqliteFlaggedSQL, postgresFlaggedSQL), func(r rowScanner) (FlaggedPair, error) {
		var f FlaggedPair
		err := r.Scan(&f.PairID, &f.QueryText, &f.DocumentTitle, &f.Reason, &f.Count)
		return f, err
	}, projectID, limit)
}
