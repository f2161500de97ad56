package store

import (
	"context"
)

// Rating is one current grade of one pair by one rater: the input of agreement statistics.
// "Cannot judge" answers, withdrawn and superseded judgments are not ratings.
type Rating struct {
	PairID int64
	UserID int64
	Grade  int
}

// Ratings streams a project's current grades in pair order, without holding them in memory.
func (s *Store) Ratings(ctx context.Context, projectID int64, fn func(Rating) error) error {
	rows, err := s.r.QueryContext(ctx, `SELECT j.pair_id, j.user_id, j.grade
		FROM judgments j JOIN pairs p ON p.id = j.pair_id
		WHERE p.project_id = ? AND j.current = 1 AND j.grade IS NOT NULL
		ORDER BY j.pair_id, j.user_id`, projectID)
	if err != nil {
		return err
	}
	defer rows.Close()
	var r Rating
	for rows.Next() {
		if err := rows.Scan(&r.PairID, &r.UserID, &r.Grade); err != nil {
			return err
		}
		if err := fn(r); err != nil {
			return err
		}
	}
	return rows.Err()
}

// UserNames maps the ids of every account, people and external sources, to usernames.
func (s *Store) UserNames(ctx context.Context) (map[int64]string, error) {
	rows, err := s.r.QueryContext(ctx, `SELECT id, username FROM users`)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	out := map[int64]string{}
	for rows.Next() {
		var id int64
		var n string
		if err := rows.Scan(&id, &n); err != nil {
			return nil, err
		}
		out[id] = n
	}
	return out, rows.Err()
}
