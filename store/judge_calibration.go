package store

import (
	"context"
	"database/sql"
	"errors"
	"slices"
)

// CalibrationPair is a pair of the calibration round as an assessor sees it before answering:
// nothing in it gives its known grade away.
type CalibrationPair struct {
	ID        int64
	ProjectID int64
	Number    int // 1-based: the assessor's how-many-th pair of the round
	Total     int
	Query     Query
	Document  Document
}

// CalibrationFeedback is what an assessor is shown after answering a calibration pair: their
// answer beside the known grade and its reason.
type CalibrationFeedback struct {
	Pair        CalibrationPair
	Grade       *int   // the assessor's grade; nil when they could not judge
	CannotJudge string // why not, when they could not
	Known       int
	Reason      string
	Remaining   int // calibration pairs still to answer
}

// Matched reports whether the assessor's grade is the known one.
func (f CalibrationFeedback) Matched() bool { return f.Grade != nil && *f.Grade == f.Known }

const (
	// The round is owed by an assessor who has pairs of it left, unless they judged in the
	// project before the round was set up: it starts new assessors, it does not interrupt
	// those already at work.
	nextCalibrationSQL = `SELECT c.id, c.project_id,
			(SELECT COUNT(*) FROM calibration_answers a JOIN calibration_pairs x ON x.id = a.pair_id WHERE x.project_id = ?1 AND a.user_id = ?2),
			(SELECT COUNT(*) FROM calibration_pairs x WHERE x.project_id = ?1),
			q.id, q.external_id, q.text, q.need, d.id, d.external_id, d.title, d.url, d.body, d.body_format
		FROM calibration_pairs c JOIN queries q ON q.id = c.query_id JOIN documents d ON d.id = c.document_id
		WHERE c.project_id = ?1
		AND NOT EXISTS (SELECT 1 FROM calibration_answers a WHERE a.pair_id = c.id AND a.user_id = ?2)
		AND NOT EXISTS (SELECT 1 FROM judgments j JOIN pairs p ON p.id = j.pair_id
			WHERE j.user_id = ?2 AND p.project_id = ?1
			AND j.created_at < (SELECT MIN(x.created_at) FROM calibration_pairs x WHERE x.project_id = ?1))
		ORDER BY c.position LIMIT 1`
	calibrationFeedbackSQL = `SELECT c.id, c.project_id, c.position, (SELECT COUNT(*) FROM calibration_pairs x WHERE x.project_id = c.project_id),
			q.id, q.external_id, q.text, q.need, d.id, d.external_id, d.title, d.url, d.body, d.body_format,
			a.grade, COALESCE(a.cannot_judge, ''), c.grade, c.reason,
			(SELECT COUNT(*) FROM calibration_pairs x WHERE x.project_id = c.project_id
				AND NOT EXISTS (SELECT 1 FROM calibration_answers b WHERE b.pair_id = x.id AND b.user_id = a.user_id))
		FROM calibration_answers a JOIN calibration_pairs c ON c.id = a.pair_id
		JOIN queries q ON q.id = c.query_id JOIN documents d ON d.id = c.document_id
		WHERE a.pair_id = ?1 AND a.user_id = ?2 AND c.project_id = ?3`
	insertCalibrationAnswer = `INSERT INTO calibration_answers(pair_id, user_id, grade, cannot_judge, answered_at)
		SELECT c.id, ?2, ?3, ?4, ?5 FROM calibration_pairs c WHERE c.id = ?1 AND c.project_id = ?6
		ON CONFLICT (pair_id, user_id) DO NOTHING`
	calibrationPairInProject = `SELECT EXISTS (SELECT 1 FROM calibration_pairs WHERE id = ? AND project_id = ?)`
)

// NextCalibrationPair returns the next pair of the project's calibration round the assessor
// owes, in the round's order; ErrNoWork when they owe none (no round, done, or they were at
// work before it was set up).
func (s *Store) NextCalibrationPair(ctx context.Context, projectID, userID int64) (CalibrationPair, error) {
	var p CalibrationPair
	err := s.readRow(ctx, nextCalibrationSQL, projectID, userID).Scan(&p.ID, &p.ProjectID, &p.Number, &p.Total,
		&p.Query.ID, &p.Query.ExternalID, &p.Query.Text, &p.Query.Need,
		&p.Document.ID, &p.Document.ExternalID, &p.Document.Title, &p.Document.URL, &p.Document.Body, &p.Document.BodyFormat)
	if errors.Is(err, sql.ErrNoRows) {
		return CalibrationPair{}, ErrNoWork
	}
	p.Number++
	return p, err
}

// CalibrationAnswer is one answer to a calibration pair: a grade or a cannot-judge reason.
type CalibrationAnswer struct {
	PairID      int64
	UserID      int64
	Grade       *int
	CannotJudge string
}

// AnswerCalibration records an assessor's answer to a calibration pair and returns the
// feedback. The first answer stands: a second one (a form sent twice) changes nothing and
// gets the same feedback. The assessor must be one of the project's assessors.
func (s *Store) AnswerCalibration(ctx context.Context, projectID int64, a CalibrationAnswer) (CalibrationFeedback, error) {
	if (a.Grade == nil) == (a.CannotJudge == "") {
		return CalibrationFeedback{}, errorf(CodeInvalid, "give a grade or a reason why the pair cannot be judged")
	}
	if a.CannotJudge != "" && !slices.Contains(CannotJudgeReasons, a.CannotJudge) {
		return CalibrationFeedback{}, errorf(CodeInvalid, "unknown reason "+a.CannotJudge)
	}
	err := s.write(ctx, func(tx *sql.Tx) error {
		var member bool
		var levels int
		if err := tx.QueryRowContext(ctx, `SELECT EXISTS (SELECT 1 FROM project_members WHERE project_id = ?1 AND user_id = ?2 AND role = 'assessor'),
			(SELECT COUNT(*) FROM scale_levels WHERE project_id = ?1)`, projectID, a.UserID).Scan(&member, &levels); err != nil {
			return err
		}
		if !member {
			return errorf(CodeDenied, "only the project's assessors take its calibration round")
		}
		if a.Grade != nil && (*a.Grade < 0 || *a.Grade >= levels) {
			return errorf(CodeInvalid, "the grade is outside the project's scale")
		}
		var in bool
		if err := tx.QueryRowContext(ctx, calibrationPairInProject, a.PairID, projectID).Scan(&in); err != nil {
			return err
		}
		if !in {
			return ErrNotFound
		}
		var grade, reason any
		if a.Grade != nil {
			grade = *a.Grade
		} else {
			reason = a.CannotJudge
		}
		_, err := tx.ExecContext(ctx, insertCalibrationAnswer, a.PairID, a.UserID, grade, reason, s.now(), projectID)
		return err
	})
	if err != nil {
		return CalibrationFeedback{}, err
	}
	return s.CalibrationFeedbackFor(ctx, projectID, a.UserID, a.PairID)
}

// CalibrationFeedbackFor returns the feedback on a calibration pair the assessor has
// answered; ErrNotFound for one they have not, so a known grade is never shown before.
func (s *Store) CalibrationFeedbackFor(ctx context.Context, projectID, userID, pairID int64) (CalibrationFeedback, error) {
	var f CalibrationFeedback
	var g sql.NullInt64
	p := &f.Pair
	err := s.readRow(ctx, calibrationFeedbackSQL, pairID, userID, projectID).Scan(&p.ID, &p.ProjectID, &p.Number, &p.Total,
		&p.Query.ID, &p.Query.ExternalID, &p.Query.Text, &p.Query.Need,
		&p.Document.ID, &p.Document.ExternalID, &p.Document.Title, &p.Document.URL, &p.Document.Body, &p.Document.BodyFormat,
		&g, &f.CannotJudge, &f.Known, &f.Reason, &f.Remaining)
	if errors.Is(err, sql.ErrNoRows) {
		return CalibrationFeedback{}, ErrNotFound
	}
	f.Grade = gradeOf(g)
	return f, err
}
