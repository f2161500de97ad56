package store

import (
	"context"
	"database/sql"
	"errors"
	"strings"
)

// Project is one judging effort.
type Project struct {
	ID               int64
	Name             string
	Description      string
	JudgmentsPerPair int
	GoldRate         float64
	LeaseSeconds     int
	AllowChanges     bool
	Archived         bool
	// TaskKind is what assessors are asked: TaskGraded (a grade per pair) or TaskPreference
	// (which of two documents is better).
	TaskKind string
	// PreferenceThreshold is the lowest final grade a document needs to be compared; nil
	// means the top two levels of the scale (PreferenceFloor).
	PreferenceThreshold *int
}

// ScaleLevel is one grade of a project's scale.
type ScaleLevel struct {
	Grade       int
	Label       string
	Description string
}

// DefaultScale is the 0-4 scale a new project starts with.
func DefaultScale() []ScaleLevel {
	return []ScaleLevel{
		{0, "Off target", "Has nothing to do with what the searcher wants, or cannot help them at all."},
		{1, "Glancing", "Touches the topic, but the searcher would not be glad to have opened it."},
		{2, "Useful", "Answers part of the need, or answers it with something the searcher would have to adapt."},
		{3, "Strong", "A good answer to the need; the searcher could stop here, perhaps after comparing with one or two others."},
		{4, "Exact", "Precisely what the searcher is after: the best result one could hope for."},
	}
}

// NewProject holds the settings of a project to create; zero values take the defaults.
type NewProject struct {
	Name             string
	Description      string
	JudgmentsPerPair int
	GoldRate         float64
	LeaseSeconds     int
	AllowChanges     bool
	Scale            []ScaleLevel
	Guidelines       string
}

func validateScale(levels []ScaleLevel) error {
	if len(levels) < 2 || len(levels) > 11 {
		return errorf(CodeInvalid, "a scale needs between 2 and 11 levels")
	}
	for i, l := range levels {
		if l.Grade != i {
			return errorf(CodeInvalid, "scale levels must be numbered 0, 1, 2, ... without gaps")
		}
		if strings.TrimSpace(l.Label) == "" {
			return errorf(CodeInvalid, "every scale level needs a label")
		}
	}
	return nil
}

// CreateProject creates a project with its scale and first guidelines revision.
func (s *Store) CreateProject(ctx context.Context, p NewProject, by int64) (Project, error) {
	p.Name = strings.TrimSpace(p.Name)
	if p.Name == "" || len(p.Name) > 120 {
		return Project{}, errorf(CodeInvalid, "a project needs a name of 1 to 120 characters")
	}
	if p.JudgmentsPerPair == 0 {
		p.JudgmentsPerPair = 3
	}
	if p.LeaseSeconds == 0 {
		p.LeaseSeconds = 600
	}
	if p.Scale == nil {
		p.Scale = DefaultScale()
	}
	if err := validateScale(p.Scale); err != nil {
		return Project{}, err
	}
	var id int64
	err := s.write(ctx, func(tx *sql.Tx) error {
		err := tx.QueryRowContext(ctx, `INSERT INTO projects(name, description, judgments_per_pair, gold_rate, lease_seconds, allow_changes, created_at)
			VALUES (?, ?, ?, ?, ?, ?, ?) RETURNING id`,
			p.Name, p.Description, p.JudgmentsPerPair, p.GoldRate, p.LeaseSeconds, p.AllowChanges, s.now()).Scan(&id)
		if err != nil {
			return err
		}
		for _, l := range p.Scale {
			if _, err := tx.ExecContext(ctx, `INSERT INTO scale_levels(project_id, grade, label, description) VALUES (?, ?, ?, ?)`,
				id, l.Grade, l.Label, l.Description); err != nil {
				return err
			}
		}
		if _, err := tx.ExecContext(ctx, `INSERT INTO guideline_revisions(project_id, body, created_by, created_at) VALUES (?, ?, ?, ?)`,
			id, p.Guidelines, nullID(by), s.now()); err != nil {
			return err
		}
		return s.audit(ctx, tx, by, id, "project.create", p.Name, "")
	})
	if isUniqueViolation(err) {
		return Project{}, errorf(CodeConflict, "a project named "+p.Name+" exists already")
	}
	if err != nil {
		return Project{}, err
	}
	return s.Project(ctx, id)
}

const projectColumns = `id, name, description, judgments_per_pair, gold_rate, lease_seconds, allow_changes, archived_at IS NOT NULL,
	task_kind, preference_threshold`

func scanProject(row interface{ Scan(...any) error }) (Project, error) {
	var p Project
	var threshold sql.NullInt64
	err := row.Scan(&p.ID, &p.Name, &p.Description, &p.JudgmentsPerPair, &p.GoldRate, &p.LeaseSeconds, &p.AllowChanges, &p.Archived,
		&p.TaskKind, &threshold)
	p.PreferenceThreshold = gradeOf(threshold)
	if errors.Is(err, sql.ErrNoRows) {
		return Project{}, ErrNotFound
	}
	return p, err
}

// Project looks a project up by id.
func (s *Store) Project(ctx context.Context, id int64) (Project, error) {
	return scanProject(s.readRow(ctx, `SELECT `+projectColumns+` FROM projects WHERE id = ?`, id))
}

// ProjectAndRole looks a project up with a user's role in it (member false when they have
// none): the check in front of every project page, so one statement rather than two.
func (s *Store) ProjectAndRole(ctx context.Context, projectID, userID int64) (p Project, role Role, member bool, err error) {
	var r sql.NullString
	var threshold sql.NullInt64
	err = s.readRow(ctx, `SELECT `+projectColumns+`,
			(SELECT m.role FROM project_members m WHERE m.project_id = projects.id AND m.user_id = ?2)
		FROM projects WHERE id = ?1`, projectID, userID).
		Scan(&p.ID, &p.Name, &p.Description, &p.JudgmentsPerPair, &p.GoldRate, &p.LeaseSeconds, &p.AllowChanges, &p.Archived,
			&p.TaskKind, &threshold, &r)
	p.PreferenceThreshold = gradeOf(threshold)
	if errors.Is(err, sql.ErrNoRows) {
		return Project{}, "", false, ErrNotFound
	}
	if err != nil {
		return Project{}, "", false, err
	}
	return p, Role(r.String), r.Valid, nil
}

// ProjectByName looks a project up by its unique name.
func (s *Store) ProjectByName(ctx context.Context, name string) (Project, error) {
	return scanProject(s.r.QueryRowContext(ctx, `SELECT `+projectColumns+` FROM projects WHERE name = ?`, name))
}

// ProjectListing is a project as listed for one user: their role in it and its progress.
type ProjectListing struct {
	Project
	Role       Role // the user's role in the project; admin for admins who are not members
	Pairs      int
	Judgments  int // current judgments by people
	Needed     int // pairs × judgments per pair
	MineToDate int // current judgments of this user
}

// ProjectsByUser lists the projects a user works on; admins see every project.
func (s *Store) ProjectsByUser(ctx context.Context, u User) ([]ProjectListing, error) {
	return queryAll(ctx, s.r, `SELECT p.id, p.name, p.description, p.judgments_per_pair, p.gold_rate, p.lease_seconds,
			p.allow_changes, p.archived_at IS NOT NULL, p.task_kind, COALESCE(m.role, ''),
			(SELECT COUNT(*) FROM pairs x WHERE x.project_id = p.id),
			(SELECT COALESCE(SUM(x.judged), 0) FROM pairs x WHERE x.project_id = p.id),
			(SELECT COUNT(*) FROM judgments j JOIN pairs x ON x.id = j.pair_id WHERE x.project_id = p.id AND j.user_id = ?1 AND j.current = 1)
		FROM projects p LEFT JOIN project_members m ON m.project_id = p.id AND m.user_id = ?1
		WHERE m.user_id IS NOT NULL OR ?2 = 1
		ORDER BY p.archived_at IS NOT NULL, p.name`, func(r rowScanner) (ProjectListing, error) {
		var l ProjectListing
		var role string
		err := r.Scan(&l.ID, &l.Name, &l.Description, &l.JudgmentsPerPair, &l.GoldRate, &l.LeaseSeconds,
			&l.AllowChanges, &l.Archived, &l.TaskKind, &role, &l.Pairs, &l.Judgments, &l.MineToDate)
		l.Role = Role(role)
		if l.Role == "" {
			l.Role = RoleAdmin
		}
		l.Needed = l.Pairs * l.JudgmentsPerPair
		return l, err
	}, u.ID, u.Role == RoleAdmin)
}

// Scale returns a project's grade levels in grade order.
func (s *Store) Scale(ctx context.Context, projectID int64) ([]ScaleLevel, error) {
	return scaleOf(ctx, readerFunc(s.readRows), projectID)
}

func scaleOf(ctx context.Context, q querier, projectID int64) ([]ScaleLevel, error) {
	return queryAll(ctx, q, `SELECT grade, label, description FROM scale_levels WHERE project_id = ? ORDER BY grade`,
		func(r rowScanner) (ScaleLevel, error) {
			var l ScaleLevel
			err := r.Scan(&l.Grade, &l.Label, &l.Description)
			return l, err
		}, projectID)
}

// Guidelines is one revision of a project's guidelines, in Markdown.
type Guidelines struct {
	ID   int64
	Body string
}

// CurrentGuidelines returns the newest guidelines revision of a project.
func (s *Store) CurrentGuidelines(ctx context.Context, projectID int64) (Guidelines, error) {
	var g Guidelines
	err := s.readRow(ctx, `SELECT id, body FROM guideline_revisions WHERE project_id = ? ORDER BY id DESC LIMIT 1`, projectID).Scan(&g.ID, &g.Body)
	if errors.Is(err, sql.ErrNoRows) {
		return Guidelines{}, nil
	}
	return g, err
}

// SetMember gives a user a role in a project, replacing any role they had there. A project
// lead must hold a lead or admin account; anyone who can sign in may assess.
func (s *Store) SetMember(ctx context.Context, projectID, userID int64, role Role, by int64) error {
	if role != RoleLead && role != RoleAssessor {
		return errorf(CodeInvalid, "a project member is a lead or an assessor")
	}
	return s.write(ctx, func(tx *sql.Tx) error {
		p, err := s.lockedProject(ctx, tx, projectID)
		if err != nil {
			return err
		}
		u, err := scanUser(tx.QueryRowContext(ctx, `SELECT `+userColumns+` FROM users WHERE id = ?`, userID))
		if err != nil {
			return err
		}
		switch {
		case !u.Role.Valid():
			return errorf(CodeInvalid, u.Username+" is not a person and cannot join a project")
		case u.Disabled:
			return errorf(CodeConflict, "the account of "+u.Username+" is disabled: enable it first")
		case role == RoleLead && u.Role == RoleAssessor:
			return errorf(CodeInvalid, u.Username+" has an assessor account; only lead and admin accounts can lead a project")
		}
		_, err = tx.ExecContext(ctx, `INSERT INTO project_members(project_id, user_id, role, added_at) VALUES (?, ?, ?, ?)
			ON CONFLICT (project_id, user_id) DO UPDATE SET role = excluded.role`, projectID, userID, string(role), s.now())
		if err != nil {
			return err
		}
		return s.audit(ctx, tx, by, p.ID, "member.set", userRef(userID), u.Username+" as "+string(role))
	})
}

// MemberRole returns a user's role in a project; ok is false when they are not a member.
func (s *Store) MemberRole(ctx context.Context, projectID, userID int64) (role Role, ok bool, err error) {
	var r string
	err = s.readRow(ctx, `SELECT role FROM project_members WHERE project_id = ? AND user_id = ?`, projectID, userID).Scan(&r)
	if errors.Is(err, sql.ErrNoRows) {
		return "", false, nil
	}
	return Role(r), err == nil, err
}

func nullID(id int64) any {
	if id == 0 {
		return nil
	}
	return id
}
