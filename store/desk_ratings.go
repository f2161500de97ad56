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

// Ratings streams a project's current grades by people in pair order, without holding them
// in memory. External sources' grades are not ratings: they are measured against people's
// (CompareSources), never counted among them.
func (s *Store) Ratings(ctx context.Context, projectID int64, fn func(Rating) error) error {
	var r Rating
	return eachRow(ctx, s.r, `SELECT j.pair_id, j.user_id, j.grade
		FROM judgments j JOIN pairs p ON p.id = j.pair_id JOIN users u ON u.id = j.user_id
		WHERE p.project_id = ? AND j.current = 1 AND j.grade IS NOT NULL AND u.role != 'source'
		ORDER BY j.pair_id, j.user_id`, func(row rowScanner) error {
		if err := row.Scan(&r.PairID, &r.UserID, &r.Grade); err != nil {
			return err
		}
		return fn(r)
	}, projectID)
}

// UserNames maps the ids of every account, people and external sources, to usernames.
func (s *Store) UserNames(ctx context.Context) (map[int64]string, error) {
	out := map[int64]string{}
	err := eachRow(ctx, s.r, `SELECT id, username FROM users`, func(r rowScanner) error {
		var id int64
		var n string
		if err := r.Scan(&id, &n); err != nil {
			return err
		}
		out[id] = n
		return nil
	})
	return out, err
}
