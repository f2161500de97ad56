package store

import (
	"context"
	"database/sql"
	"errors"
	"strconv"
	"strings"
	"time"
)

// GuidelineRevision is one version of a project's guidelines with how many judgments were
// made while it was in force.
type GuidelineRevision struct {
	ID        int64
	Number    int // 1 for the first revision of the project
	Body      string
	Author    string // username; empty when written from the command line
	CreatedAt time.Time
	Judgments int // judgment rows (revisions included) that recorded this version
	Current   bool
}

const revisionColumns = `g.id, (SELECT COUNT(*) FROM guideline_revisions e WHERE e.project_id = g.project_id AND e.id <= g.id),
	g.body, COALESCE(u.username, ''), g.created_at,
	(SELECT COUNT(*) FROM judgments j WHERE j.guideline_id = g.id),
	g.id = (SELECT MAX(e.id) FROM guideline_revisions e WHERE e.project_id = g.project_id)`

func scanRevision(row interface{ Scan(...any) error }) (GuidelineRevision, error) {
	var g GuidelineRevision
	var at string
	err := row.Scan(&g.ID, &g.Number, &g.Body, &g.Author, &at, &g.Judgments, &g.Current)
	if errors.Is(err, sql.ErrNoRows) {
		return g, ErrNotFound
	}
	g.CreatedAt = parseTime(at)
	return g, err
}

// GuidelineHistory lists every revision of a project's guidelines, newest first.
func (s *Store) GuidelineHistory(ctx context.Context, projectID int64) ([]GuidelineRevision, error) {
	return queryAll(ctx, s.r, `SELECT `+revisionColumns+` FROM guideline_revisions g LEFT JOIN users u ON u.id = g.created_by
		WHERE g.project_id = ? ORDER BY g.id DESC`, scanRevision, projectID)
}

// GuidelineRevision returns one revision of a project's guidelines.
func (s *Store) GuidelineRevision(ctx context.Context, projectID, revisionID int64) (GuidelineRevision, error) {
	return scanRevision(s.r.QueryRowContext(ctx, `SELECT `+revisionColumns+` FROM guideline_revisions g LEFT JOIN users u ON u.id = g.created_by
		WHERE g.project_id = ? AND g.id = ?`, projectID, revisionID))
}

// ReviseGuidelines adds a revision of a project's guidelines, which judgments made from now
// on record. Text equal to the current revision adds nothing.
func (s *Store) ReviseGuidelines(ctx context.Context, projectID int64, body string, by int64) (Guidelines, error) {
	body = strings.ReplaceAll(body, "\r\n", "\n")
	if len(body) > 200_000 {
		return Guidelines{}, errorf(CodeInvalid, "guidelines may have at most 200,000 characters")
	}
	var g Guidelines
	err := s.write(ctx, func(tx *sql.Tx) error {
		p, err := s.lockedProject(ctx, tx, projectID)
		if err != nil {
			return err
		}
		err = tx.QueryRowContext(ctx, `SELECT id, body FROM guideline_revisions WHERE project_id = ? ORDER BY id DESC LIMIT 1`, projectID).Scan(&g.ID, &g.Body)
		if err != nil && !errors.Is(err, sql.ErrNoRows) {
			return err
		}
		if err == nil && g.Body == body {
			return nil
		}
		if err := tx.QueryRowContext(ctx, `INSERT INTO guideline_revisions(project_id, body, created_by, created_at) VALUES (?, ?, ?, ?) RETURNING id`,
			projectID, body, nullID(by), s.now()).Scan(&g.ID); err != nil {
			return err
		}
		g.Body = body
		return s.audit(ctx, tx, by, p.ID, "guidelines.revise", p.Name, "revision id "+strconv.FormatInt(g.ID, 10))
	})
	return g, err
}
