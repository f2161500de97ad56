package store

import (
	"context"
	"database/sql"
	"errors"
)

// Turn is the outcome of SubmitAndNext: what was stored, and the pair that comes next.
type Turn struct {
	Judgment Judgment // the stored judgment; zero when Refused is set
	// Refused says why the judgment was not stored although the next pair was still leased:
	// always a CodeConflict error (the pair filled up, the project was archived, ...).
	Refused error
	Next    PairView // the next pair, leased to the assessor; zero when NoWork
	NoWork  bool     // nothing is left for this assessor
	// Judged and Needed are the project's progress after this turn, when Progress is set.
	Progress       bool
	Judged, Needed int
}

// SubmitAndNext records an assessor's judgment of a pair of the project and leases their next
// pair, in one write transaction: the judging screen's one request costs one trip through
// the writer instead of two. A refusal the assessor can do nothing about (CodeConflict) still
// leases the next pair and is reported in Turn.Refused; any other error leaves everything as
// it was. The progress comes with the turn whenever the cached totals could be advanced
// across this very transaction, which spares the caller a read.
func (s *Store) SubmitAndNext(ctx context.Context, projectID int64, sub Submission) (Turn, error) {
	if err := checkSubmission(sub); err != nil {
		return Turn{}, err
	}
	var t Turn
	var pairID int64
	var leasedAt string
	var before, after int64
	var perPair int
	var counted bool
	err := s.grouped(ctx, func(ctx context.Context, tx *sql.Tx) error {
		t = Turn{}
		// The project's lock once for the whole turn, then its settings and version in one
		// statement: the steps below take the lock again for nothing (lockedProjectContext).
		ctx, err := s.lockedProjectContext(ctx, tx, projectID)
		if err != nil {
			return err
		}
		as, err := s.assignmentTx(ctx, tx, projectID, sub.UserID)
		if err != nil {
			return err
		}
		before, perPair = as.version, as.needed
		t.Judgment, counted, err = s.submitTx(ctx, tx, sub, false, projectID)
		if ErrorCode(err) == CodeConflict {
			t.Refused, counted, err = err, false, nil
			// The refused pair must not come back as the next one through its lease.
			if err := s.dropLease(ctx, tx, sub.PairID, sub.UserID, s.clock()); err != nil {
				return err
			}
		}
		if err != nil {
			return err
		}
		pairID, leasedAt, after, err = s.assignTx(ctx, tx, as, true)
		if errors.Is(err, ErrNoWork) {
			t.NoWork = true
			after, err = s.projectVersion(ctx, tx, projectID)
		}
		return err
	}, func() {
		delta := 0
		if counted {
			delta = 1
		}
		if e, ok := s.progress.advance(projectID, before, after, delta); ok {
			t.Progress, t.Judged, t.Needed = true, e.judged, e.pairs*perPair
		}
	})
	if err != nil {
		return Turn{}, err
	}
	if !t.NoWork {
		if t.Next, err = s.pairView(ctx, pairID); err != nil {
			return Turn{}, err
		}
		t.Next.LeasedAt = parseTime(leasedAt)
	}
	return t, nil
}
