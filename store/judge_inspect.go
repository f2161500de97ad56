package store

import (
	"cmp"
	"context"
	"database/sql"
	"slices"
	"time"
)

// PairJudgments returns every judgment row of one pair, of every assessor, oldest first:
// superseded and withdrawn ones included, so a caller can see what an undo or a change kept.
func (s *Store) PairJudgments(ctx context.Context, pairID int64) ([]Judgment, error) {
	// One assessor's rows come from JudgmentHistory, the one reader of judgment rows.
	users, err := queryAll(ctx, s.r, `SELECT DISTINCT user_id FROM judgments WHERE pair_id = ?`, scanValue[int64], pairID)
	if err != nil {
		return nil, err
	}
	var out []Judgment
	for _, u := range users {
		h, err := s.JudgmentHistory(ctx, pairID, u)
		if err != nil {
			return nil, err
		}
		out = append(out, h...)
	}
	slices.SortFunc(out, func(a, b Judgment) int { return cmp.Compare(a.ID, b.ID) })
	return out, nil
}

// JudgedCount returns the pair's kept count of current judgments, the figure assignment
// compares with the judgments a pair needs; it must equal the current rows PairJudgments
// returns.
func (s *Store) JudgedCount(ctx context.Context, pairID int64) (int, error) {
	var n int
	err := s.r.QueryRowContext(ctx, `SELECT judged FROM pairs WHERE id = ?`, pairID).Scan(&n)
	if err == sql.ErrNoRows {
		return 0, ErrNotFound
	}
	return n, err
}

// ExpireLeases ends every lease the user holds now, as if its time had run out, so the
// pairs go back to whoever asks next; it returns how many it ended.
func (s *Store) ExpireLeases(ctx context.Context, userID int64) (int64, error) {
	var n int64
	err := s.write(ctx, func(tx *sql.Tx) error {
		res, err := tx.ExecContext(ctx, `UPDATE leases SET expires_at = ? WHERE user_id = ? AND expires_at > ?`,
			timeText(s.clock().Add(-time.Second)), userID, s.now())
		if err != nil {
			return err
		}
		n, err = res.RowsAffected()
		return err
	})
	return n, err
}
