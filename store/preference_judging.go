package store

import (
	"context"
	"database/sql"
	"errors"
	"math/rand/v2"
	"time"

	"github.com/pertinent/pertinent/preference"
)

// ComparisonView is everything an assessor sees of a comparison while answering it: the
// query and the two documents in the placement drawn for them. Nothing in it tells what
// others answered.
type ComparisonView struct {
	ComparisonID int64
	ProjectID    int64
	Query        Query
	Left, Right  Document
	LeasedAt     time.Time
}

// PreferenceSubmission is an assessor's answer to a comparison: an outcome read in the
// placement shown (LeftDoc on the left), or a reason it cannot be judged.
type PreferenceSubmission struct {
	ComparisonID int64
	ProjectID    int64 // the project in the request's path: a comparison of another is not found
	UserID       int64
	LeftDoc      int64
	Outcome      string // one of PreferenceOutcomes, or empty with CannotJudge
	CannotJudge  string
	Flagged      bool // disturbing content on the screen, whatever the answer
	Note         string
	TimeSpentMs  int // measured on the page; 0 lets the store measure from the lease
}

// PreferenceAnswer is a stored answer.
type PreferenceAnswer struct {
	ID           int64
	ComparisonID int64
	UserID       int64
	LeftDoc      int64
	RightDoc     int64
	Outcome      string
	CannotJudge  string
	Flagged      bool
	Note         string
	TimeSpentMs  int
	Current      bool
	Withdrawn    bool
	CreatedAt    time.Time
}

// Statements of preference assignment. Parameters: ?1 project, ?2 user, ?3 now, ?4
// judgments per comparison. A comparison may be given to an assessor while the schedule
// waits for it, they have no current answer of it, and its answers plus the live leases of
// others are short of what the project needs.
const (
	resumeComparisonSQL = `SELECT l.comparison_id, l.left_doc, l.leased_at
		FROM preference_leases l JOIN preference_comparisons c ON c.id = l.comparison_id
		WHERE l.user_id = ?2 AND c.project_id = ?1 AND l.expires_at > ?3 AND c.open = 1
		AND NOT EXISTS (SELECT 1 FROM preference_answers a WHERE a.comparison_id = c.id AND a.user_id = ?2 AND a.current = 1)
		ORDER BY l.leased_at DESC LIMIT 1`
	openComparisonSQL = `SELECT c.id, c.doc_a, c.doc_b FROM preference_comparisons c
		WHERE c.project_id = ?1 AND c.open = 1 AND c.judged < ?4
		AND NOT EXISTS (SELECT 1 FROM preference_answers a WHERE a.comparison_id = c.id AND a.user_id = ?2 AND a.current = 1)
		AND c.judged + (SELECT COUNT(*) FROM preference_leases l WHERE l.comparison_id = c.id AND l.user_id != ?2 AND l.expires_at > ?3) < ?4
		ORDER BY c.query_id, c.id LIMIT 1`
)

// NextComparison leases the next comparison to an assessor: a live lease of theirs first
// (the comparison on screen, or one they undid), else the first open comparison they may
// answer, placed left and right at random. When none is open, the project's schedule is
// worked out again (grades may have come in since) before ErrNoWork. Everything runs in one
// write transaction (on PostgreSQL under the project's lock, as graded judging), so a
// comparison is never leased past what it needs.
func (s *Store) NextComparison(ctx context.Context, projectID, userID int64) (ComparisonView, error) {
	var id, left int64
	var leasedAt string
	var committed func()
	var noWork bool
	err := s.write(ctx, func(tx *sql.Tx) error {
		var k, leaseSeconds int
		var kind string
		var archived, member bool
		if err := s.lockProject(ctx, tx, projectID); err != nil {
			return err
		}
		err := tx.QueryRowContext(ctx, `SELECT judgments_per_pair, lease_seconds, task_kind, archived_at IS NOT NULL,
				EXISTS (SELECT 1 FROM project_members m WHERE m.project_id = ?1 AND m.user_id = ?2 AND m.role = 'assessor')
			FROM projects WHERE id = ?1`, projectID, userID).Scan(&k, &leaseSeconds, &kind, &archived, &member)
		if errors.Is(err, sql.ErrNoRows) {
			return ErrNotFound
		}
		if err != nil {
			return err
		}
		if !member {
			return errorf(CodeDenied, "only the project's assessors are given comparisons")
		}
		if archived || kind != TaskPreference {
			return ErrNoWork
		}
		t := s.clock()
		now := timeText(t)
		err = tx.QueryRowContext(ctx, resumeComparisonSQL, projectID, userID, now).Scan(&id, &left, &leasedAt)
		if err == nil || !errors.Is(err, sql.ErrNoRows) {
			return err
		}
		if _, err := tx.ExecContext(ctx, `DELETE FROM preference_leases WHERE user_id = ? AND expires_at <= ?`, userID, now); err != nil {
			return err
		}
		var a, b int64
		err = tx.QueryRowContext(ctx, openComparisonSQL, projectID, userID, now, k).Scan(&id, &a, &b)
		if errors.Is(err, sql.ErrNoRows) {
			// Nothing open for them: grades may have come in, or the judgments per pair
			// changed, since the schedule was last worked out. Answers and undo keep their
			// own query current, so the whole project is replayed only when its grades'
			// version (project_versions) or k differ from the last replay's.
			var version int64
			if err := tx.QueryRowContext(ctx, `SELECT COALESCE((SELECT version FROM project_versions WHERE project_id = ?), 0)`,
				projectID).Scan(&version); err != nil {
				return err
			}
			basis := [2]int64{version, int64(k)}
			if last, ok := s.scheduled.Load(projectID); ok && last.([2]int64) == basis {
				noWork = true
				return nil
			}
			if err := s.refreshComparisons(ctx, tx, projectID, 0); err != nil {
				return err
			}
			// Kept only once this transaction commits: a rolled-back replay must not count.
			committed = func() { s.scheduled.Store(projectID, basis) }
			err = tx.QueryRowContext(ctx, openComparisonSQL, projectID, userID, now, k).Scan(&id, &a, &b)
		}
		if errors.Is(err, sql.ErrNoRows) {
			// Committed all the same: the replay may have opened comparisons for others
			// (ones this assessor answered) or closed some.
			noWork = true
			return nil
		}
		if err != nil {
			return err
		}
		// Which document is on the left is drawn per assessor, so a position bias spreads
		// over both documents instead of favouring the one with the smaller id.
		left = a
		if rand.IntN(2) == 1 {
			left = b
		}
		leasedAt = now
		return s.leaseComparison(ctx, tx, id, userID, left, t, leaseSeconds)
	})
	if committed != nil && err == nil {
		committed()
	}
	if err == nil && noWork {
		err = ErrNoWork
	}
	if err != nil {
		return ComparisonView{}, err
	}
	v, err := s.comparisonView(ctx, id, left)
	v.LeasedAt = parseTime(leasedAt)
	return v, err
}

func (s *Store) leaseComparison(ctx context.Context, tx *sql.Tx, id, userID, left int64, t time.Time, seconds int) error {
	_, err := tx.ExecContext(ctx, `INSERT INTO preference_leases(comparison_id, user_id, left_doc, leased_at, expires_at)
		VALUES (?, ?, ?, ?, ?) ON CONFLICT (comparison_id, user_id) DO UPDATE SET left_doc = excluded.left_doc,
		leased_at = excluded.leased_at, expires_at = excluded.expires_at`,
		id, userID, left, timeText(t), timeText(t.Add(time.Duration(seconds)*time.Second)))
	return err
}

// comparisonView loads the query and both documents of a comparison, left as given.
func (s *Store) comparisonView(ctx context.Context, id, left int64) (ComparisonView, error) {
	v := ComparisonView{ComparisonID: id}
	var docs [2]Document
	err := s.readRow(ctx, `SELECT c.project_id, q.id, q.external_id, q.text, q.need,
			a.id, a.external_id, a.title, a.url, a.body, a.body_format,
			b.id, b.external_id, b.title, b.url, b.body, b.body_format
		FROM preference_comparisons c JOIN queries q ON q.id = c.query_id
		JOIN documents a ON a.id = c.doc_a JOIN documents b ON b.id = c.doc_b
		WHERE c.id = ?`, id).Scan(&v.ProjectID, &v.Query.ID, &v.Query.ExternalID, &v.Query.Text, &v.Query.Need,
		&docs[0].ID, &docs[0].ExternalID, &docs[0].Title, &docs[0].URL, &docs[0].Body, &docs[0].BodyFormat,
		&docs[1].ID, &docs[1].ExternalID, &docs[1].Title, &docs[1].URL, &docs[1].Body, &docs[1].BodyFormat)
	if errors.Is(err, sql.ErrNoRows) {
		return v, ErrNotFound
	}
	v.Left, v.Right = docs[0], docs[1]
	if left == docs[1].ID {
		v.Left, v.Right = docs[1], docs[0]
	}
	return v, err
}

func checkPreference(sub PreferenceSubmission) error {
	if (sub.Outcome == "") == (sub.CannotJudge == "") {
		return errorf(CodeInvalid, "give either an answer or a reason the comparison cannot be judged")
	}
	if _, ok := outcomes[sub.Outcome]; sub.Outcome != "" && !ok {
		return errorf(CodeInvalid, "unknown answer: "+sub.Outcome)
	}
	if sub.CannotJudge != "" && !validReason(sub.CannotJudge) {
		return errorf(CodeInvalid, "unknown reason: "+sub.CannotJudge)
	}
	if len(sub.Note) > 4000 {
		return errorf(CodeInvalid, "a note may have at most 4000 characters")
	}
	return nil
}

// AnswerComparison records an answer. An answer with an outcome counts towards the
// comparison's judgments per pair, checked in the same write transaction that stores it, so
// a comparison that filled up meanwhile refuses newcomers; a "cannot judge" is kept and
// counts for no one. The answer is committed before this returns, and the query's schedule
// moves on in the same transaction.
func (s *Store) AnswerComparison(ctx context.Context, sub PreferenceSubmission) (PreferenceAnswer, error) {
	if err := checkPreference(sub); err != nil {
		return PreferenceAnswer{}, err
	}
	var ans PreferenceAnswer
	err := s.write(ctx, func(tx *sql.Tx) error {
		var project, query, a, b int64
		var open, archived, member, answered bool
		var judged, k int
		var leasedAt sql.NullString
		if err := s.lockComparisonProject(ctx, tx, sub.ComparisonID, sub.ProjectID); err != nil {
			return err
		}
		err := tx.QueryRowContext(ctx, `SELECT c.project_id, c.query_id, c.doc_a, c.doc_b, c.open, c.judged,
				p.judgments_per_pair, p.archived_at IS NOT NULL,
				EXISTS (SELECT 1 FROM project_members m WHERE m.project_id = p.id AND m.user_id = ?2 AND m.role = 'assessor'),
				EXISTS (SELECT 1 FROM preference_answers x WHERE x.comparison_id = c.id AND x.user_id = ?2 AND x.current = 1),
				(SELECT leased_at FROM preference_leases l WHERE l.comparison_id = c.id AND l.user_id = ?2)
			FROM preference_comparisons c JOIN projects p ON p.id = c.project_id WHERE c.id = ?1`,
			sub.ComparisonID, sub.UserID).Scan(&project, &query, &a, &b, &open, &judged, &k, &archived, &member, &answered, &leasedAt)
		if errors.Is(err, sql.ErrNoRows) || (err == nil && sub.ProjectID != 0 && project != sub.ProjectID) {
			return ErrNotFound
		}
		if err != nil {
			return err
		}
		switch {
		case !member:
			return errorf(CodeDenied, "only the project's assessors can answer its comparisons")
		case archived:
			return errorf(CodeConflict, "the project is archived: it takes no more answers")
		case sub.LeftDoc != a && sub.LeftDoc != b:
			return errorf(CodeInvalid, "the form did not say which document was on the left")
		case answered:
			return errorf(CodeConflict, "you have answered this comparison already")
		case sub.Outcome != "" && (!open || judged >= k):
			return errorf(CodeConflict, "this comparison has all the answers it needs")
		}
		if sub.TimeSpentMs <= 0 && leasedAt.Valid {
			sub.TimeSpentMs = int(s.clock().Sub(parseTime(leasedAt.String)).Milliseconds())
		}
		right := a
		if sub.LeftDoc == a {
			right = b
		}
		var outcome, reason any
		if sub.Outcome != "" {
			outcome = sub.Outcome
		} else {
			reason = sub.CannotJudge
		}
		at := s.now()
		if err := tx.QueryRowContext(ctx, `INSERT INTO preference_answers(comparison_id, user_id, left_doc, right_doc,
				outcome, cannot_judge, flagged, note, time_spent_ms, created_at)
			VALUES (?, ?, ?, ?, ?, ?, ?, ?, ?, ?) RETURNING id`, sub.ComparisonID, sub.UserID, sub.LeftDoc, right,
			outcome, reason, sub.Flagged, sub.Note, max(sub.TimeSpentMs, 0), at).Scan(&ans.ID); err != nil {
			return err
		}
		if sub.Outcome != "" {
			if _, err := tx.ExecContext(ctx, `UPDATE preference_comparisons SET judged = judged + 1 WHERE id = ?`, sub.ComparisonID); err != nil {
				return err
			}
		}
		if _, err := tx.ExecContext(ctx, `DELETE FROM preference_leases WHERE comparison_id = ? AND user_id = ?`, sub.ComparisonID, sub.UserID); err != nil {
			return err
		}
		ans = PreferenceAnswer{ID: ans.ID, ComparisonID: sub.ComparisonID, UserID: sub.UserID, LeftDoc: sub.LeftDoc, RightDoc: right,
			Outcome: sub.Outcome, CannotJudge: sub.CannotJudge, Flagged: sub.Flagged, Note: sub.Note,
			TimeSpentMs: max(sub.TimeSpentMs, 0), Current: true, CreatedAt: parseTime(at)}
		return s.refreshComparisons(ctx, tx, project, query)
	})
	return ans, err
}

// UndoPreference withdraws the assessor's latest answer in the project: the row stays with
// withdrawn_at set and no longer counts, and the comparison is leased back to them in the
// placement they saw, so it is the next one they are shown.
func (s *Store) UndoPreference(ctx context.Context, projectID, userID int64) (PreferenceAnswer, error) {
	var ans PreferenceAnswer
	err := s.write(ctx, func(tx *sql.Tx) error {
		var query int64
		var outcome, reason sql.NullString
		var at string
		var leaseSeconds int
		if err := s.lockProject(ctx, tx, projectID); err != nil {
			return err
		}
		err := tx.QueryRowContext(ctx, `SELECT a.id, a.comparison_id, c.query_id, a.left_doc, a.right_doc, a.outcome, a.cannot_judge,
				a.flagged, a.note, a.time_spent_ms, a.current, a.withdrawn_at IS NOT NULL, a.created_at, p.lease_seconds
			FROM preference_answers a JOIN preference_comparisons c ON c.id = a.comparison_id JOIN projects p ON p.id = c.project_id
			WHERE a.user_id = ?2 AND c.project_id = ?1 ORDER BY a.id DESC LIMIT 1`, projectID, userID).Scan(
			&ans.ID, &ans.ComparisonID, &query, &ans.LeftDoc, &ans.RightDoc, &outcome, &reason, &ans.Flagged, &ans.Note,
			&ans.TimeSpentMs, &ans.Current, &ans.Withdrawn, &at, &leaseSeconds)
		if errors.Is(err, sql.ErrNoRows) || (err == nil && (ans.Withdrawn || !ans.Current)) {
			return errorf(CodeConflict, "there is no answer to undo")
		}
		if err != nil {
			return err
		}
		ans.UserID, ans.Outcome, ans.CannotJudge, ans.CreatedAt = userID, outcome.String, reason.String, parseTime(at)
		t := s.clock()
		if _, err := tx.ExecContext(ctx, `UPDATE preference_answers SET current = 0, withdrawn_at = ? WHERE id = ?`, timeText(t), ans.ID); err != nil {
			return err
		}
		if outcome.Valid {
			if _, err := tx.ExecContext(ctx, `UPDATE preference_comparisons SET judged = judged - 1 WHERE id = ?`, ans.ComparisonID); err != nil {
				return err
			}
		}
		ans.Current, ans.Withdrawn = false, true
		if err := s.leaseComparison(ctx, tx, ans.ComparisonID, userID, ans.LeftDoc, t, leaseSeconds); err != nil {
			return err
		}
		return s.refreshComparisons(ctx, tx, projectID, query)
	})
	return ans, err
}

// PreferenceProgress counts a project's open comparisons and the answers they still need.
func (s *Store) PreferenceProgress(ctx context.Context, projectID int64) (open, answers, needed int, err error) {
	err = s.r.QueryRowContext(ctx, `SELECT COUNT(*), COALESCE(SUM(c.judged), 0),
			COALESCE(SUM(CASE WHEN p.judgments_per_pair > c.judged THEN p.judgments_per_pair - c.judged ELSE 0 END), 0)
		FROM preference_comparisons c JOIN projects p ON p.id = c.project_id
		WHERE c.project_id = ? AND c.open = 1`, projectID).Scan(&open, &answers, &needed)
	return open, answers, needed, err
}

// PreferenceAnswersByAssessor returns every answer one assessor gave in a project, withdrawn
// ones too, oldest first. It never returns another assessor's answers.
func (s *Store) PreferenceAnswersByAssessor(ctx context.Context, projectID, userID int64) ([]PreferenceAnswer, error) {
	return queryAll(ctx, s.r, `SELECT a.id, a.comparison_id, a.user_id, a.left_doc, a.right_doc, COALESCE(a.outcome, ''),
			COALESCE(a.cannot_judge, ''), a.flagged, a.note, a.time_spent_ms, a.current, a.withdrawn_at IS NOT NULL, a.created_at
		FROM preference_answers a JOIN preference_comparisons c ON c.id = a.comparison_id
		WHERE c.project_id = ? AND a.user_id = ? ORDER BY a.id`, func(r rowScanner) (PreferenceAnswer, error) {
		var a PreferenceAnswer
		var at string
		err := r.Scan(&a.ID, &a.ComparisonID, &a.UserID, &a.LeftDoc, &a.RightDoc, &a.Outcome, &a.CannotJudge, &a.Flagged,
			&a.Note, &a.TimeSpentMs, &a.Current, &a.Withdrawn, &at)
		a.CreatedAt = parseTime(at)
		return a, err
	}, projectID, userID)
}

// PreferenceJudgments returns the current answers with an outcome of a project, as the
// preference package reads them: query and documents by their external ids, the assessor by
// username, in the order they were given.
func (s *Store) PreferenceJudgments(ctx context.Context, projectID int64) ([]preference.Judgment, error) {
	return queryAll(ctx, s.r, `SELECT q.external_id, l.external_id, r.external_id, a.outcome, u.username
		FROM preference_answers a JOIN preference_comparisons c ON c.id = a.comparison_id
		JOIN queries q ON q.id = c.query_id JOIN documents l ON l.id = a.left_doc JOIN documents r ON r.id = a.right_doc
		JOIN users u ON u.id = a.user_id
		WHERE c.project_id = ? AND a.current = 1 AND a.outcome IS NOT NULL ORDER BY a.id`, func(r rowScanner) (preference.Judgment, error) {
		var j preference.Judgment
		var o string
		err := r.Scan(&j.Query, &j.Left, &j.Right, &o, &j.Assessor)
		j.Outcome = outcomes[o]
		return j, err
	}, projectID)
}

// MyComparison is one of an assessor's current answers as their My work page lists it.
type MyComparison struct {
	QueryText   string
	LeftTitle   string
	RightTitle  string
	Outcome     string
	CannotJudge string
	Flagged     bool
	Note        string
	CreatedAt   time.Time
}

// ComparisonsByAssessor returns up to limit of one assessor's current answers in a project,
// newest first, with the documents as they were placed for them. Nothing of anyone else's.
func (s *Store) ComparisonsByAssessor(ctx context.Context, projectID, userID int64, limit int) ([]MyComparison, error) {
	return queryAll(ctx, s.r, `SELECT q.text, l.title, r.title, COALESCE(a.outcome, ''), COALESCE(a.cannot_judge, ''), a.flagged, a.note, a.created_at
		FROM preference_answers a JOIN preference_comparisons c ON c.id = a.comparison_id JOIN queries q ON q.id = c.query_id
		JOIN documents l ON l.id = a.left_doc JOIN documents r ON r.id = a.right_doc
		WHERE a.user_id = ?2 AND c.project_id = ?1 AND a.current = 1 ORDER BY a.id DESC LIMIT ?3`, func(r rowScanner) (MyComparison, error) {
		var m MyComparison
		var at string
		err := r.Scan(&m.QueryText, &m.LeftTitle, &m.RightTitle, &m.Outcome, &m.CannotJudge, &m.Flagged, &m.Note, &at)
		m.CreatedAt = parseTime(at)
		return m, err
	}, projectID, userID, limit)
}
