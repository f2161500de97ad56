package store

import (
	"context"
	"strconv"

	"github.com/pertinent/pertinent/agreement"
)

// AgreementData gathers a project's current grades as the agreement package's input, items
// named by pair id and raters by username, with the known grades of gold pairs. The lead's
// pages and `pertinent agreement --db` both start here, so they show the same numbers.
func (s *Store) AgreementData(ctx context.Context, projectID int64) (*agreement.Data, map[string]int, error) {
	levels, err := s.Scale(ctx, projectID)
	if err != nil {
		return nil, nil, err
	}
	if len(levels) < 2 {
		return nil, nil, ErrNotFound
	}
	names, err := s.UserNames(ctx)
	if err != nil {
		return nil, nil, err
	}
	d := agreement.NewData(len(levels))
	err = s.Ratings(ctx, projectID, func(r Rating) error {
		return d.Add(strconv.FormatInt(r.PairID, 10), names[r.UserID], r.Grade)
	})
	if err != nil {
		return nil, nil, err
	}
	gold := map[string]int{}
	rows, err := s.r.QueryContext(ctx, `SELECT id, gold_grade FROM pairs INDEXED BY pairs_gold WHERE project_id = ? AND gold_grade IS NOT NULL`, projectID)
	if err != nil {
		return nil, nil, err
	}
	defer rows.Close()
	for rows.Next() {
		var id int64
		var g int
		if err := rows.Scan(&id, &g); err != nil {
			return nil, nil, err
		}
		gold[strconv.FormatInt(id, 10)] = g
	}
	return d, gold, rows.Err()
}
