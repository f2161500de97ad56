package store

import (
	"context"
	"database/sql"
	"errors"
	"strconv"
	"strings"
	"time"

	"github.com/pertinent/pertinent/agreement"
)

// Adjudication is a lead's final grade for a pair. The table is append-only: a later
// adjudication inserts a new row and clears current on the previous one; grade and rationale
// are never changed.
type Adjudication struct {
	ID        int64
	PairID    int64
	LeadID    int64
	Lead      string // username
	Grade     int
	Rationale string
	Current   bool
	CreatedAt time.Time
}

// Adjudicate records a final grade for a pair, superseding any earlier one, with an audit
// event in the same transaction.
func (s *Store) Adjudicate(ctx context.Context, pairID, leadID int64, grade int, rationale string) (Adjudication, error) {
	rationale = strings.TrimSpace(rationale)
	if len(rationale) > 2000 {
		return Adjudication{}, errorf(CodeInvalid, "a rationale may have at most 2000 characters")
	}
	var a Adjudication
	err := s.write(ctx, func(tx *sql.Tx) error {
		var projectID int64
		var levels int
		err := tx.QueryRowContext(ctx, `SELECT p.project_id, (SELECT COUNT(*) FROM scale_levels l WHERE l.project_id = p.project_id)
			FROM pairs p WHERE p.id = ?`, pairID).Scan(&projectID, &levels)
		if errors.Is(err, sql.ErrNoRows) {
			return ErrNotFound
		}
		if err != nil {
			return err
		}
		if grade < 0 || grade >= levels {
			return errorf(CodeInvalid, "the grade is not on this project's scale")
		}
		if _, err := tx.ExecContext(ctx, `UPDATE adjudications SET current = 0 WHERE pair_id = ? AND current = 1`, pairID); err != nil {
			return err
		}
		at := s.now()
		if err := tx.QueryRowContext(ctx, `INSERT INTO adjudications(pair_id, lead_id, grade, rationale, current, created_at)
			VALUES (?, ?, ?, ?, 1, ?) RETURNING id`, pairID, leadID, grade, rationale, at).Scan(&a.ID); err != nil {
			return err
		}
		a = Adjudication{ID: a.ID, PairID: pairID, LeadID: leadID, Grade: grade, Rationale: rationale, Current: true, CreatedAt: parseTime(at)}
		return s.audit(ctx, tx, leadID, projectID, "pair.adjudicate", "pair:"+strconv.FormatInt(pairID, 10), "grade "+strconv.Itoa(grade))
	})
	return a, err
}

// Adjudications returns a pair's adjudication history, newest first.
func (s *Store) Adjudications(ctx context.Context, pairID int64) ([]Adjudication, error) {
	return queryAll(ctx, s.r, `SELECT a.id, a.pair_id, a.lead_id, COALESCE(u.username, ''), a.grade, a.rationale, a.current, a.created_at
		FROM adjudications a LEFT JOIN users u ON u.id = a.lead_id WHERE a.pair_id = ? ORDER BY a.id DESC`, func(r rowScanner) (Adjudication, error) {
		var a Adjudication
		var at string
		err := r.Scan(&a.ID, &a.PairID, &a.LeadID, &a.Lead, &a.Grade, &a.Rationale, &a.Current, &at)
		a.CreatedAt = parseTime(at)
		return a, err
	}, pairID)
}

// PairJudgment is a current judgment as a lead sees it when adjudicating: with its assessor.
type PairJudgment struct {
	Judgment
	Username string
}

// PairReview is everything the adjudication screen shows of a pair.
type PairReview struct {
	PairView
	Gold      *int
	Judgments []PairJudgment // current judgments, oldest first
	History   []Adjudication // newest first
	Consensus *agreement.ItemConsensus
}

// PairReview loads a pair for adjudication. Only leads may be shown it: it names assessors.
func (s *Store) PairReview(ctx context.Context, pairID int64) (PairReview, error) {
	v, err := s.pairView(ctx, pairID)
	if err != nil {
		return PairReview{}, err
	}
	r := PairReview{PairView: v}
	var gold sql.NullInt64
	var levels int
	if err := s.r.QueryRowContext(ctx, `SELECT gold_grade, (SELECT COUNT(*) FROM scale_levels l WHERE l.project_id = p.project_id)
		FROM pairs p WHERE id = ?`, pairID).Scan(&gold, &levels); err != nil {
		return PairReview{}, err
	}
	r.Gold = gradeOf(gold)
	d := agreement.NewData(max(levels, 2))
	err = eachRow(ctx, s.r, `SELECT j.id, j.user_id, u.username, j.grade, COALESCE(j.cannot_judge, ''), j.note, j.time_spent_ms, j.created_at
		FROM judgments j JOIN users u ON u.id = j.user_id WHERE j.pair_id = ? AND j.current = 1 ORDER BY j.created_at, j.id`, func(row rowScanner) error {
		var j PairJudgment
		var grade sql.NullInt64
		var at string
		if err := row.Scan(&j.ID, &j.UserID, &j.Username, &grade, &j.CannotJudge, &j.Note, &j.TimeSpentMs, &at); err != nil {
			return err
		}
		j.PairID, j.Current, j.CreatedAt, j.Grade = pairID, true, parseTime(at), gradeOf(grade)
		if j.Grade != nil && d.Add("pair", j.Username, *j.Grade) != nil {
			return nil
		}
		r.Judgments = append(r.Judgments, j)
		return nil
	}, pairID)
	if err != nil {
		return PairReview{}, err
	}
	if d.Judgments() > 0 {
		c := agreement.Consensus(d)[0]
		r.Consensus = &c
	}
	r.History, err = s.Adjudications(ctx, pairID)
	return r, err
}

// dsSnapshot is Dawid–Skene over a desk's data: the most probable grade of every item.
type dsSnapshot struct {
	grade     map[string]int
	posterior map[string][]float64
}

// DawidSkene returns the Dawid–Skene estimate of a pair's grade and its posterior, over the
// whole project's current grades. It is computed once per desk version; on large projects
// in the background, when ready is false until it finishes. ok is false when the pair has
// no grades.
func (d *Desk) DawidSkene(pairID int64) (grade int, posterior []float64, ok, ready bool) {
	snap, ready := d.ds.get(func() (s dsSnapshot) {
		var r agreement.DSResult
		d.slow(func() { r = agreement.DawidSkene(d.Data, agreement.DSOptions{}) })
		s = dsSnapshot{grade: make(map[string]int, len(r.Items)), posterior: make(map[string][]float64, len(r.Items))}
		for i, it := range r.Items {
			s.grade[it] = r.Grade[i]
			s.posterior[it] = r.Posterior[i]
		}
		return s
	}, !d.Background())
	if !ready {
		return 0, nil, false, false
	}
	key := strconv.FormatInt(pairID, 10)
	g, ok := snap.grade[key]
	return g, snap.posterior[key], ok, true
}

// FeedbackItem is a pair where an assessor's current grade differs from the final grade.
// It carries nothing about other assessors.
type FeedbackItem struct {
	PairID     int64
	Query      Query
	Document   Document // title and URL only
	Grade      int
	FinalGrade int
	Rationale  string
	At         time.Time
}

// Feedback lists the pairs of a project where the user's current grade differs from the
// current adjudication, newest adjudication first.
func (s *Store) Feedback(ctx context.Context, projectID, userID int64) ([]FeedbackItem, error) {
	return queryAll(ctx, s.r, `SELECT p.id, q.external_id, q.text, d.external_id, d.title, d.url, j.grade, a.grade, a.rationale, a.created_at
		FROM adjudications a
		JOIN pairs p ON p.id = a.pair_id
		JOIN judgments j ON j.pair_id = a.pair_id AND j.user_id = ?2 AND j.current = 1 AND j.grade IS NOT NULL
		JOIN queries q ON q.id = p.query_id JOIN documents d ON d.id = p.document_id
		WHERE p.project_id = ?1 AND a.current = 1 AND j.grade != a.grade
		ORDER BY a.id DESC`, func(r rowScanner) (FeedbackItem, error) {
		var f FeedbackItem
		var at string
		err := r.Scan(&f.PairID, &f.Query.ExternalID, &f.Query.Text, &f.Document.ExternalID, &f.Document.Title, &f.Document.URL,
			&f.Grade, &f.FinalGrade, &f.Rationale, &at)
		f.At = parseTime(at)
		return f, err
	}, projectID, userID)
}
