package store

import (
	"context"
	"database/sql"
	"math"
	"strconv"
	"time"
)

// AuditEvent is one recorded administrative change.
type AuditEvent struct {
	ID         int64
	At         time.Time
	ActorID    int64  // 0 for the command line
	Actor      string // username; empty for the command line
	ProjectID  int64
	Project    string
	Action     string // e.g. project.settings, member.set, user.disable
	Target     string // what was changed, e.g. user:12 or a project name
	TargetName string // the username when Target is an account
	Detail     string
}

// AuditFilter narrows the audit trail; zero fields do not filter.
type AuditFilter struct {
	ActorID   int64
	ProjectID int64
	Action    string
	From      time.Time // inclusive
	Until     time.Time // exclusive
	Limit     int       // 0: no limit
	Offset    int
}

// EachAuditEvent calls fn for every event matching f, newest first, reading row by row so a
// long trail can be streamed without being held in memory.
func (s *Store) EachAuditEvent(ctx context.Context, f AuditFilter, fn func(AuditEvent) error) error {
	// No limit is the largest one: SQLite would take -1 too, PostgreSQL refuses a negative LIMIT.
	from, until, limit := "", "", math.MaxInt64
	if !f.From.IsZero() {
		from = timeText(f.From)
	}
	if !f.Until.IsZero() {
		until = timeText(f.Until)
	}
	if f.Limit > 0 {
		limit = f.Limit
	}
	// Zero-valued filters switch themselves off inside one constant statement.
	return eachRow(ctx, s.r, `SELECT e.id, e.at, COALESCE(e.actor_id, 0), COALESCE(a.username, ''), COALESCE(e.project_id, 0), COALESCE(p.name, ''),
			e.action, e.target, e.detail,
			CASE WHEN e.target LIKE 'user:%' THEN COALESCE((SELECT username FROM users WHERE id = CAST(substr(e.target, 6) AS INTEGER)), '') ELSE '' END
		FROM audit_events e LEFT JOIN users a ON a.id = e.actor_id LEFT JOIN projects p ON p.id = e.project_id
		WHERE (?1 = 0 OR e.actor_id = ?1) AND (?2 = 0 OR e.project_id = ?2) AND (?3 = '' OR e.action = ?3)
			AND (?4 = '' OR e.at >= ?4) AND (?5 = '' OR e.at < ?5)
		ORDER BY e.id DESC LIMIT ?6 OFFSET ?7`, func(r rowScanner) error {
		var e AuditEvent
		var at string
		if err := r.Scan(&e.ID, &at, &e.ActorID, &e.Actor, &e.ProjectID, &e.Project, &e.Action, &e.Target, &e.Detail, &e.TargetName); err != nil {
			return err
		}
		e.At = parseTime(at)
		return fn(e)
	}, f.ActorID, f.ProjectID, f.Action, from, until, limit, f.Offset)
}

// AuditEvents returns one page of the events matching f, newest first, and whether more
// follow.
func (s *Store) AuditEvents(ctx context.Context, f AuditFilter) (events []AuditEvent, more bool, err error) {
	if f.Limit > 0 {
		f.Limit++ // one extra row tells whether another page exists
	}
	err = s.EachAuditEvent(ctx, f, func(e AuditEvent) error {
		events = append(events, e)
		return nil
	})
	if f.Limit > 0 && len(events) == f.Limit {
		events, more = events[:f.Limit-1], true
	}
	return events, more, err
}

// AuditActions lists the action names recorded so far, for filtering.
func (s *Store) AuditActions(ctx context.Context) ([]string, error) {
	return queryAll(ctx, s.r, `SELECT DISTINCT action FROM audit_events ORDER BY action`, scanValue[string])
}

// audit records an administrative change inside the transaction that makes it, so the record
// and the change stand or fall together.
func (s *Store) audit(ctx context.Context, tx *sql.Tx, actor, projectID int64, action, target, detail string) error {
	_, err := tx.ExecContext(ctx, `INSERT INTO audit_events(at, actor_id, project_id, action, target, detail) VALUES (?, ?, ?, ?, ?, ?)`,
		s.now(), nullID(actor), nullID(projectID), action, target, detail)
	return err
}

func userRef(id int64) string { return "user:" + strconv.FormatInt(id, 10) }
