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
	gold, _, err := s.goldGrades(ctx, s.r, projectID)
	if err != nil {
		return nil, nil, err
	}
	return d, gold, nil
}
