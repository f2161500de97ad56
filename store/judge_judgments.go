package store

import (
	"context"
	"database/sql"
	"errors"
	"time"
)

// CannotJudgeReasons are the reasons an assessor may give instead of a grade.
var CannotJudgeReasons = []string{"broken", "language", "disturbing", "other"}

func validReason(r string) bool {
	for _, x := range CannotJudgeReasons {
		if r == x {
			return true
		}
	}
	return false
}

// Submission is an assessor's answer for a pair: a grade, or a reason it cannot be judged.
type Submission struct {
	PairID      int64
	UserID      int64
	Grade       *int
	CannotJudge string
	Note        string
	TimeSpentMs int // measured on the page; 0 lets the store measure from the lease
}

// Judgment is a stored judgment.
type Judgment struct {
	ID          int64
	PairID      int64
	UserID      int64
	Grade       *int
	CannotJudge string
	Note        string
	TimeSpentMs int
	Supersedes  int64
	Current     bool
	Withdrawn   bool
	CreatedAt   time.Time
}

// Submit records a judgment. A second answer by the same assessor supersedes the first
// (kept in history) while the project allows changes and no lead has adjudicated the pair; a
// pair that already has all the judgments it needs refuses newcomers.
func (s *Store) Submit(ctx context.Context, sub Submission) (Judgment, error) {
	return s.submit(ctx, sub, false)
}

// Revise changes an assessor's current judgment of a pair: the new answer supersedes it and
// the history stays. It refuses when there is nothing to change, when the project does not
// allow changes, or once a lead has adjudicated the pair.
func (s *Store) Revise(ctx context.Context, sub Submission) (Judgment, error) {
	return s.submit(ctx, sub, true)
}

func (s *Store) submit(ctx context.Context, sub Submission, revision bool) (Judgment, error) {
	if err := checkSubmission(sub); err != nil {
		return Judgment{}, err
	}
	var j Judgment
	err := s.grouped(ctx, func(ctx context.Context, tx *sql.Tx) error {
		var err error
		j, _, err = s.submitTx(ctx, tx, sub, revision, 0)
		return err
	}, nil)
	return j, err
}

// checkSubmission refuses what needs no database to refuse, before it takes the writer's time.
func checkSubmission(sub Submission) error {
	if (sub.Grade == nil) == (sub.CannotJudge == "") {
		return errorf(CodeInvalid, "give either a grade or a reason the pair cannot be judged")
	}
	if sub.CannotJudge != "" && !validReason(sub.CannotJudge) {
		return errorf(CodeInvalid, "unknown reason: "+sub.CannotJudge)
	}
	if len(sub.Note) > 4000 {
		return errorf(CodeInvalid, "a note may have at most 4000 characters")
	}
	return nil
}

// submitTx is submit, after checkSubmission, inside the caller's write transaction. Every
// refusal is returned before anything is written. With projectID set, a pair of another
// project is not found. counted reports a new current judgment of a pair that is not gold:
// one more towards the project's progress.
func (s *Store) submitTx(ctx context.Context, tx *sql.Tx, sub Submission, revision bool, projectID int64) (j Judgment, counted bool, err error) {
	var needed, judged, levels int
	var pairProject int64
	var archived, member, allowChanges, adjudicated bool
	var gold, current sql.NullInt64
	var leasedAt sql.NullString
	if err := s.lockPairProject(ctx, tx, sub.PairID, projectID); err != nil {
		return j, false, err
	}
	// One statement reads all that decides the answer, the assessor's current judgment of
	// the pair among it: under the project's lock on PostgreSQL, every round trip counts.
	err = s.txRow(ctx, tx, `SELECT p.id, p.judgments_per_pair, x.judged, x.gold_grade, p.archived_at IS NOT NULL,
			(SELECT COUNT(*) FROM scale_levels l WHERE l.project_id = p.id),
			EXISTS (SELECT 1 FROM project_members m WHERE m.project_id = p.id AND m.user_id = ?2 AND m.role = 'assessor'),
			(SELECT leased_at FROM leases WHERE pair_id = x.id AND user_id = ?2),
			p.allow_changes,
			EXISTS (SELECT 1 FROM adjudications a WHERE a.pair_id = x.id AND a.current = 1),
			(SELECT j.id FROM judgments j WHERE j.pair_id = x.id AND j.user_id = ?2 AND j.current = 1)
		FROM pairs x JOIN projects p ON p.id = x.project_id WHERE x.id = ?1`, sub.PairID, sub.UserID).
		Scan(&pairProject, &needed, &judged, &gold, &archived, &levels, &member, &leasedAt, &allowChanges, &adjudicated, &current)
	if errors.Is(err, sql.ErrNoRows) || (err == nil && projectID != 0 && pairProject != projectID) {
		return j, false, ErrNotFound
	}
	if err != nil {
		return j, false, err
	}
	if !member {
		return j, false, errorf(CodeDenied, "only the project's assessors can judge its pairs")
	}
	if archived {
		return j, false, errorf(CodeConflict, "the project is archived: it takes no more judgments")
	}
	if sub.Grade != nil && (*sub.Grade < 0 || *sub.Grade >= levels) {
		return j, false, errorf(CodeInvalid, "the grade is not on this project's scale")
	}
	if sub.TimeSpentMs <= 0 && leasedAt.Valid {
		sub.TimeSpentMs = int(time.Since(parseTime(leasedAt.String)).Milliseconds())
	}
	prev := current.Int64
	switch {
	case prev == 0 && revision:
		return j, false, errorf(CodeNotFound, "you have no judgment of this pair to change")
	case prev == 0 && !gold.Valid && judged >= needed:
		return j, false, errorf(CodeConflict, "this pair has all the judgments it needs")
	case prev != 0 && adjudicated:
		return j, false, errorf(CodeConflict, "a lead has settled this pair's grade: your judgment can no longer change")
	case prev != 0 && !allowChanges:
		return j, false, errorf(CodeConflict, "this project does not allow changing a judgment once made")
	}
	at := s.clock()
	j, err = s.insertJudgmentOver(ctx, tx, sub, timeText(at), prev)
	if err != nil {
		return j, false, err
	}
	err = s.dropLease(ctx, tx, sub.PairID, sub.UserID, at)
	return j, prev == 0 && !gold.Valid, err
}

// dropLeaseSQL ends an assessor's lease of a pair and, in the same statement, drops their
// expired leases, which are of no further use (assignTx need not then drop them itself).
const dropLeaseSQL = `DELETE FROM leases WHERE user_id = ?2 AND (pair_id = ?1 OR expires_at <= ?3)`

// dropLease is dropLeaseSQL at time t.
func (s *Store) dropLease(ctx context.Context, tx *sql.Tx, pairID, userID int64, t time.Time) error {
	_, err := s.txExec(ctx, tx, dropLeaseSQL, pairID, userID, timeText(t))
	return err
}

// The assessor's latest judgment in a project, for Undo; CROSS JOIN and + as in judge_mywork.go.
const (
	sqliteLatestJudgmentSQL = `SELECT j.id, j.pair_id, j.grade, COALESCE(j.cannot_judge, ''), j.note, j.time_spent_ms,
				COALESCE(j.supersedes, 0), j.current, j.withdrawn_at IS NOT NULL, j.created_at,
				EXISTS (SELECT 1 FROM adjudications a WHERE a.pair_id = j.pair_id AND a.current = 1),
				(SELECT lease_seconds FROM projects WHERE id = ?1)
			FROM judgments j CROSS JOIN pairs p ON p.id = j.pair_id
			WHERE j.user_id = ?2 AND +p.project_id = ?1
			ORDER BY j.id DESC LIMIT 1`
	postgresLatestJudgmentSQL = `SELECT j.id, j.pair_id, j.grade, COALESCE(j.cannot_judge, ''), j.note, j.time_spent_ms,
				COALESCE(j.supersedes, 0), j.current, j.withdrawn_at IS NOT NULL, j.created_at,
				EXISTS (SELECT 1 FROM adjudications a WHERE a.pair_id = j.pair_id AND a.current = 1),
				(SELECT lease_seconds FROM projects WHERE id = ?1)
			FROM judgments j JOIN pairs p ON p.id = j.pair_id
			WHERE j.user_id = ?2 AND p.project_id = ?1
			ORDER BY j.id DESC LIMIT 1`
)

// Undo withdraws the assessor's latest judgment in the project: the row stays with
// withdrawn_at set and no longer counts, and the pair is leased back to them so it is the
// next one they see. Only their own latest judgment can be withdrawn, and not once a lead
// has adjudicated the pair.
func (s *Store) Undo(ctx context.Context, projectID, userID int64) (Judgment, error) {
	var j Judgment
	err := s.write(ctx, func(tx *sql.Tx) error {
		var grade sql.NullInt64
		var at string
		var withdrawn, adjudicated bool
		var leaseSeconds int
		if err := s.lockProject(ctx, tx, projectID); err != nil {
			return err
		}
		err := s.txRow(ctx, tx, s.dialect(sqliteLatestJudgmentSQL, postgresLatestJudgmentSQL), projectID, userID).Scan(&j.ID, &j.PairID, &grade, &j.CannotJudge, &j.Note,
			&j.TimeSpentMs, &j.Supersedes, &j.Current, &withdrawn, &at, &adjudicated, &leaseSeconds)
		if errors.Is(err, sql.ErrNoRows) || (err == nil && (withdrawn || !j.Current)) {
			return errorf(CodeConflict, "there is no judgment to undo")
		}
		if err != nil {
			return err
		}
		if adjudicated {
			return errorf(CodeConflict, "a lead has settled this pair's grade: your judgment can no longer be undone")
		}
		j.UserID, j.Grade, j.CreatedAt = userID, gradeOf(grade), parseTime(at)
		t := s.clock()
		if _, err := s.txExec(ctx, tx, `UPDATE judgments SET current = 0, withdrawn_at = ? WHERE id = ?`, timeText(t), j.ID); err != nil {
			return err
		}
		if _, err := s.txExec(ctx, tx, `UPDATE pairs SET judged = judged - 1 WHERE id = ?`, j.PairID); err != nil {
			return err
		}
		j.Current, j.Withdrawn = false, true
		_, err = s.lease(ctx, tx, projectID, j.PairID, userID, t, leaseSeconds)
		return err
	})
	return j, err
}

func (s *Store) currentJudgmentID(ctx context.Context, tx *sql.Tx, pairID, userID int64) (int64, error) {
	var id int64
	err := s.txRow(ctx, tx, `SELECT id FROM judgments WHERE pair_id = ? AND user_id = ? AND current = 1`, pairID, userID).Scan(&id)
	if errors.Is(err, sql.ErrNoRows) {
		return 0, nil
	}
	return id, err
}

// insertJudgment appends a judgment as the user's current one for the pair, retiring the
// previous current row and keeping the pair's count of judgments in step.
func (s *Store) insertJudgment(ctx context.Context, tx *sql.Tx, sub Submission, at string) (Judgment, error) {
	prev, err := s.currentJudgmentID(ctx, tx, sub.PairID, sub.UserID)
	if err != nil {
		return Judgment{}, err
	}
	return s.insertJudgmentOver(ctx, tx, sub, at, prev)
}

// insertJudgmentOver is insertJudgment when the caller has already looked up the current
// judgment (prev, 0 for none) in the same transaction: one lookup fewer on the hot path.
func (s *Store) insertJudgmentOver(ctx context.Context, tx *sql.Tx, sub Submission, at string, prev int64) (Judgment, error) {
	if prev != 0 {
		if _, err := s.txExec(ctx, tx, `UPDATE judgments SET current = 0 WHERE id = ?`, prev); err != nil {
			return Judgment{}, err
		}
	}
	var grade, reason any
	if sub.Grade != nil {
		grade = *sub.Grade
	} else {
		reason = sub.CannotJudge
	}
	var id int64
	err := s.txRow(ctx, tx, `INSERT INTO judgments(pair_id, user_id, grade, cannot_judge, note, time_spent_ms, guideline_id, supersedes, created_at)
		VALUES (?1, ?2, ?3, ?4, ?5, ?6,
			(SELECT MAX(g.id) FROM guideline_revisions g JOIN pairs x ON x.project_id = g.project_id WHERE x.id = ?1),
			?7, ?8) RETURNING id`,
		sub.PairID, sub.UserID, grade, reason, sub.Note, max(sub.TimeSpentMs, 0), nullID(prev), at).Scan(&id)
	if err != nil {
		return Judgment{}, err
	}
	if prev == 0 {
		if _, err := s.txExec(ctx, tx, `UPDATE pairs SET judged = judged + 1 WHERE id = ?`, sub.PairID); err != nil {
			return Judgment{}, err
		}
	}
	return Judgment{ID: id, PairID: sub.PairID, UserID: sub.UserID, Grade: sub.Grade, CannotJudge: sub.CannotJudge,
		Note: sub.Note, TimeSpentMs: max(sub.TimeSpentMs, 0), Supersedes: prev, Current: true, CreatedAt: parseTime(at)}, nil
}

// JudgmentHistory returns every judgment one user made of one pair, oldest first. It never
// returns another user's judgments.
func (s *Store) JudgmentHistory(ctx context.Context, pairID, userID int64) ([]Judgment, error) {
	return queryAll(ctx, s.r, `SELECT id, pair_id, user_id, grade, COALESCE(cannot_judge, ''), note, time_spent_ms,
			COALESCE(supersedes, 0), current, withdrawn_at IS NOT NULL, created_at
		FROM judgments WHERE pair_id = ? AND user_id = ? ORDER BY id`, func(r rowScanner) (Judgment, error) {
		var j Judgment
		var grade sql.NullInt64
		var at string
		err := r.Scan(&j.ID, &j.PairID, &j.UserID, &grade, &j.CannotJudge, &j.Note, &j.TimeSpentMs,
			&j.Supersedes, &j.Current, &j.Withdrawn, &at)
		j.Grade, j.CreatedAt = gradeOf(grade), parseTime(at)
		return j, err
	}, pairID, userID)
}
