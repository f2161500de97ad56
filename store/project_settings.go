package store

import (
	"context"
	"database/sql"
	"fmt"
	"slices"
	"strings"
)

// ProjectSettings are the settings of a project that a lead may change while it runs.
type ProjectSettings struct {
	Name             string
	Description      string
	JudgmentsPerPair int
	GoldRate         float64 // share of gold pairs mixed into each assessor's work, 0 to 1
	LeaseSeconds     int
	AllowChanges     bool // whether assessors may change a grade after submitting
}

// Settings returns the changeable settings of a project.
func (p Project) Settings() ProjectSettings {
	return ProjectSettings{Name: p.Name, Description: p.Description, JudgmentsPerPair: p.JudgmentsPerPair,
		GoldRate: p.GoldRate, LeaseSeconds: p.LeaseSeconds, AllowChanges: p.AllowChanges}
}

func (ps *ProjectSettings) validate() error {
	ps.Name = strings.TrimSpace(ps.Name)
	ps.Description = strings.TrimSpace(ps.Description)
	switch {
	case ps.Name == "" || len(ps.Name) > 120:
		return errorf(CodeInvalid, "a project needs a name of 1 to 120 characters")
	case len(ps.Description) > 2000:
		return errorf(CodeInvalid, "a description may have at most 2000 characters")
	case ps.JudgmentsPerPair < 1 || ps.JudgmentsPerPair > 50:
		return errorf(CodeInvalid, "judgments per pair must be between 1 and 50")
	case ps.GoldRate < 0 || ps.GoldRate > 1:
		return errorf(CodeInvalid, "the gold rate must be between 0% and 100%")
	case ps.LeaseSeconds < 60 || ps.LeaseSeconds > 24*3600:
		return errorf(CodeInvalid, "a lease must last between 1 minute and 24 hours")
	}
	return nil
}

// lockedProject reads a project inside a write transaction and refuses changes to an
// archived one: archived projects are read-only until restored. On PostgreSQL it takes the
// project's lock first (lockProject), so the change and the judging path never interleave.
func (s *Store) lockedProject(ctx context.Context, tx *sql.Tx, projectID int64) (Project, error) {
	if err := s.lockProject(ctx, tx, projectID); err != nil {
		return Project{}, err
	}
	p, err := scanProject(tx.QueryRowContext(ctx, `SELECT `+projectColumns+` FROM projects WHERE id = ?`, projectID))
	if err != nil {
		return p, err
	}
	if p.Archived {
		return p, errorf(CodeConflict, "the project "+p.Name+" is archived and read-only: restore it to change it")
	}
	return p, nil
}

// UpdateProject changes a project's settings and records what changed.
func (s *Store) UpdateProject(ctx context.Context, projectID int64, ps ProjectSettings, by int64) error {
	if err := ps.validate(); err != nil {
		return err
	}
	err := s.write(ctx, func(tx *sql.Tx) error {
		old, err := s.lockedProject(ctx, tx, projectID)
		if err != nil {
			return err
		}
		changes := settingsChanges(old.Settings(), ps)
		if len(changes) == 0 {
			return nil
		}
		if _, err := tx.ExecContext(ctx, `UPDATE projects SET name = ?, description = ?, judgments_per_pair = ?, gold_rate = ?,
			lease_seconds = ?, allow_changes = ? WHERE id = ?`,
			ps.Name, ps.Description, ps.JudgmentsPerPair, ps.GoldRate, ps.LeaseSeconds, ps.AllowChanges, projectID); err != nil {
			return err
		}
		return s.audit(ctx, tx, by, projectID, "project.settings", ps.Name, strings.Join(changes, "; "))
	})
	if isUniqueViolation(err) {
		return errorf(CodeConflict, "a project named "+ps.Name+" exists already")
	}
	return err
}

func settingsChanges(a, b ProjectSettings) []string {
	var out []string
	add := func(name string, x, y any) {
		if x != y {
			out = append(out, fmt.Sprintf("%s: %v → %v", name, x, y))
		}
	}
	add("name", a.Name, b.Name)
	if a.Description != b.Description {
		out = append(out, "description changed")
	}
	add("judgments per pair", a.JudgmentsPerPair, b.JudgmentsPerPair)
	add("gold rate", a.GoldRate, b.GoldRate)
	add("lease seconds", a.LeaseSeconds, b.LeaseSeconds)
	add("assessors may change grades", a.AllowChanges, b.AllowChanges)
	return out
}

// SetProjectArchived archives a project (read-only: no judging, no changes, still readable and
// exportable) or restores it.
func (s *Store) SetProjectArchived(ctx context.Context, projectID int64, archived bool, by int64) error {
	return s.write(ctx, func(tx *sql.Tx) error {
		p, err := scanProject(tx.QueryRowContext(ctx, `SELECT `+projectColumns+` FROM projects WHERE id = ?`, projectID))
		if err != nil {
			return err
		}
		if p.Archived == archived {
			return nil
		}
		action, at := "project.restore", any(nil)
		if archived {
			action, at = "project.archive", s.now()
			// Open leases would otherwise keep pairs "in progress" on a project nobody may judge.
			if _, err := tx.ExecContext(ctx, `DELETE FROM leases WHERE pair_id IN (SELECT id FROM pairs WHERE project_id = ?)`, projectID); err != nil {
				return err
			}
		}
		if _, err := tx.ExecContext(ctx, `UPDATE projects SET archived_at = ? WHERE id = ?`, at, projectID); err != nil {
			return err
		}
		return s.audit(ctx, tx, by, projectID, action, p.Name, "")
	})
}

// GradeUses counts what in a project depends on the meaning of its grades: judgments (every
// revision), adjudications and gold pairs. While any exist, the number of levels is fixed.
func (s *Store) GradeUses(ctx context.Context, projectID int64) (int, error) {
	return s.gradeUses(ctx, s.r, projectID)
}

type queryRower interface {
	QueryRowContext(ctx context.Context, query string, args ...any) *sql.Row
}

const (
	sqliteGradeUsesSQL = `SELECT
		(SELECT COUNT(*) FROM judgments j JOIN pairs x ON x.id = j.pair_id WHERE x.project_id = ?1 AND j.grade IS NOT NULL)
		+ (SELECT COUNT(*) FROM adjudications a JOIN pairs x ON x.id = a.pair_id WHERE x.project_id = ?1)
		+ (SELECT COUNT(*) FROM pairs INDEXED BY pairs_gold WHERE project_id = ?1 AND gold_grade IS NOT NULL)`
	postgresGradeUsesSQL = `SELECT
		(SELECT COUNT(*) FROM judgments j JOIN pairs x ON x.id = j.pair_id WHERE x.project_id = ?1 AND j.grade IS NOT NULL)
		+ (SELECT COUNT(*) FROM adjudications a JOIN pairs x ON x.id = a.pair_id WHERE x.project_id = ?1)
		+ (SELECT COUNT(*) FROM pairs WHERE project_id = ?1 AND gold_grade IS NOT NULL)`
)

func (s *Store) gradeUses(ctx context.Context, q queryRower, projectID int64) (int, error) {
	var n int
	err := q.QueryRowContext(ctx, s.dialect(sqliteGradeUsesSQL, postgresGradeUsesSQL), projectID).Scan(&n)
	return n, err
}

// SetScale replaces a project's scale. Once grades have been stored, only labels and
// descriptions may change: adding or removing levels would silently change what the stored
// grades mean.
func (s *Store) SetScale(ctx context.Context, projectID int64, levels []ScaleLevel, by int64) error {
	for i := range levels {
		levels[i].Label = strings.TrimSpace(levels[i].Label)
		levels[i].Description = strings.TrimSpace(levels[i].Description)
		if len(levels[i].Label) > 60 || len(levels[i].Description) > 1000 {
			return errorf(CodeInvalid, "a level's label may have at most 60 characters and its description 1000")
		}
	}
	if err := validateScale(levels); err != nil {
		return err
	}
	return s.write(ctx, func(tx *sql.Tx) error {
		p, err := s.lockedProject(ctx, tx, projectID)
		if err != nil {
			return err
		}
		current, err := scaleOf(ctx, tx, projectID)
		if err != nil {
			return err
		}
		if slices.Equal(current, levels) {
			return nil
		}
		old := len(current)
		action := "scale.relabel"
		if old != len(levels) {
			action = "scale.change"
			uses, err := s.gradeUses(ctx, tx, projectID)
			if err != nil {
				return err
			}
			if uses > 0 {
				return errorf(CodeConflict, fmt.Sprintf("The scale of %s cannot go from %d to %d levels: %d stored grades (judgments, "+
					"adjudications or gold answers) were given on the %d-level scale, and changing the number of levels would silently "+
					"change what they mean. You can still change the labels and descriptions. For a different scale, start a new project.",
					p.Name, old, len(levels), uses, old))
			}
		}
		if _, err := tx.ExecContext(ctx, `DELETE FROM scale_levels WHERE project_id = ?`, projectID); err != nil {
			return err
		}
		labels := make([]string, len(levels))
		for i, l := range levels {
			if _, err := tx.ExecContext(ctx, `INSERT INTO scale_levels(project_id, grade, label, description) VALUES (?, ?, ?, ?)`,
				projectID, l.Grade, l.Label, l.Description); err != nil {
				return err
			}
			labels[i] = fmt.Sprintf("%d %s", l.Grade, l.Label)
		}
		return s.audit(ctx, tx, by, projectID, action, p.Name, fmt.Sprintf("%d levels: %s", len(levels), strings.Join(labels, ", ")))
	})
}

// PairCount counts a project's pairs, gold pairs included.
func (s *Store) PairCount(ctx context.Context, projectID int64) (int, error) {
	var n int
	err := s.r.QueryRowContext(ctx, `SELECT COUNT(*) FROM pairs WHERE project_id = ?`, projectID).Scan(&n)
	return n, err
}

// Projects lists every project by name, for an admin's filters and lists.
func (s *Store) Projects(ctx context.Context) ([]Project, error) {
	return queryAll(ctx, s.r, `SELECT `+projectColumns+` FROM projects ORDER BY name`, scanProject)
}
