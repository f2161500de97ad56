package store

import (
	"context"
	"database/sql"
	"fmt"
)

// Task kinds: what a project asks its assessors.
const (
	TaskGraded     = "graded"     // a grade for each pair
	TaskPreference = "preference" // which of two documents of a query is better
)

// PreferenceFloor is the lowest final grade a document needs to be compared in a project
// with levels grades: the project's threshold, else the top two levels.
func PreferenceFloor(p Project, levels int) int {
	if p.PreferenceThreshold != nil {
		return *p.PreferenceThreshold
	}
	return max(levels-2, 0)
}

// SetTaskKind sets what a project asks (TaskGraded or TaskPreference) and, for
// preferences, the threshold of final grade (nil for the top two levels). The comparisons
// asked for are worked out again at once, so the change shows on the next screen.
func (s *Store) SetTaskKind(ctx context.Context, projectID int64, kind string, threshold *int, by int64) error {
	if kind != TaskGraded && kind != TaskPreference {
		return errorf(CodeInvalid, "a project asks for grades or for preferences, not "+kind)
	}
	return s.write(ctx, func(tx *sql.Tx) error {
		// The replay below rewrites which comparisons are open: not while one is leased
		// (lockedProject takes the project's lock on PostgreSQL).
		p, err := s.lockedProject(ctx, tx, projectID)
		if err != nil {
			return err
		}
		var levels int
		if err := tx.QueryRowContext(ctx, `SELECT COUNT(*) FROM scale_levels WHERE project_id = ?`, projectID).Scan(&levels); err != nil {
			return err
		}
		if threshold != nil && (*threshold < 0 || *threshold >= levels) {
			return errorf(CodeInvalid, fmt.Sprintf("the threshold must be a grade of the scale, 0 to %d", levels-1))
		}
		var t any
		if threshold != nil {
			t = *threshold
		}
		if _, err := tx.ExecContext(ctx, `UPDATE projects SET task_kind = ?, preference_threshold = ? WHERE id = ?`,
			kind, t, projectID); err != nil {
			return err
		}
		detail := "task: " + kind
		if kind == TaskPreference {
			p.TaskKind, p.PreferenceThreshold = kind, threshold
			detail += fmt.Sprintf(", documents graded %d or better", PreferenceFloor(p, levels))
		}
		if err := s.refreshComparisons(ctx, tx, projectID, 0); err != nil {
			return err
		}
		return s.audit(ctx, tx, by, projectID, "project.task", p.Name, detail)
	})
}
