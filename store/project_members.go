package store

import (
	"context"
	"database/sql"
	"errors"
	"time"
)

// Member is a person's place in a project, with how much they have judged there.
type Member struct {
	User
	ProjectRole Role // lead or assessor
	AddedAt     time.Time
	Judgments   int // current judgments in this project
}

// Members lists a project's members: leads first, then assessors, by username.
func (s *Store) Members(ctx context.Context, projectID int64) ([]Member, error) {
	return queryAll(ctx, s.r, `SELECT u.id, u.username, u.display_name, u.role, u.disabled_at IS NOT NULL, m.role, m.added_at,
			(SELECT COUNT(*) FROM judgments j JOIN pairs x ON x.id = j.pair_id WHERE x.project_id = m.project_id AND j.user_id = u.id AND j.current = 1)
		FROM project_members m JOIN users u ON u.id = m.user_id
		WHERE m.project_id = ? ORDER BY m.role = 'assessor', u.username`, func(r rowScanner) (Member, error) {
		var m Member
		var role, pRole, at string
		err := r.Scan(&m.ID, &m.Username, &m.DisplayName, &role, &m.Disabled, &pRole, &at, &m.Judgments)
		m.Role, m.ProjectRole, m.AddedAt = Role(role), Role(pRole), parseTime(at)
		return m, err
	}, projectID)
}

// DeleteMember takes a person out of a project. Their judgments stay; the pairs they had
// leased go back to the pool at once.
func (s *Store) DeleteMember(ctx context.Context, projectID, userID int64, by int64) error {
	return s.write(ctx, func(tx *sql.Tx) error {
		p, err := s.lockedProject(ctx, tx, projectID)
		if err != nil {
			return err
		}
		var username, role string
		err = tx.QueryRowContext(ctx, `SELECT u.username, m.role FROM project_members m JOIN users u ON u.id = m.user_id
			WHERE m.project_id = ? AND m.user_id = ?`, projectID, userID).Scan(&username, &role)
		if errors.Is(err, sql.ErrNoRows) {
			return errorf(CodeNotFound, "that person is not a member of this project")
		}
		if err != nil {
			return err
		}
		if _, err := tx.ExecContext(ctx, `DELETE FROM project_members WHERE project_id = ? AND user_id = ?`, projectID, userID); err != nil {
			return err
		}
		if _, err := tx.ExecContext(ctx, `DELETE FROM leases WHERE user_id = ? AND pair_id IN (SELECT id FROM pairs WHERE project_id = ?)`,
			userID, projectID); err != nil {
			return err
		}
		return s.audit(ctx, tx, by, p.ID, "member.remove", userRef(userID), username+" was "+role)
	})
}
