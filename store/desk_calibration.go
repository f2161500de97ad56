package store

import (
	"context"
	"database/sql"

	"github.com/pertinent/pertinent/agreement"
)

// CalibrationRound is a project's calibration round as the lead sees it: its pairs by known
// grade and every assessor's score.
type CalibrationRound struct {
	Pairs   int              `json:"pairs"`
	ByGrade []int            `json:"by_grade"` // pairs per known grade, 0 up
	Scores  []AssessorCalibr `json:"assessors"`
}

// AssessorCalibr is one assessor's calibration: how far they are through the round and how
// their answers compare with the known grades.
type AssessorCalibr struct {
	Assessor   string `json:"assessor"`
	Done       bool   `json:"done"`
	Disturbing int    `json:"disturbing"` // pairs they flagged as disturbing
	agreement.CalibrationScore
}

const (
	calibrationByGradeSQL = `SELECT grade, COUNT(*) FROM calibration_pairs WHERE project_id = ? GROUP BY grade ORDER BY grade`
	calibrationAnswersSQL = `SELECT u.username, a.grade, COALESCE(a.cannot_judge, ''), c.grade
		FROM calibration_answers a JOIN calibration_pairs c ON c.id = a.pair_id JOIN users u ON u.id = a.user_id
		WHERE c.project_id = ? ORDER BY u.username, c.position`
)

// CalibrationRound reads the round and scores every assessor who has answered any of it, by
// username.
func (s *Store) CalibrationRound(ctx context.Context, projectID int64) (CalibrationRound, error) {
	var out CalibrationRound
	scale, err := s.Scale(ctx, projectID)
	if err != nil {
		return out, err
	}
	out.ByGrade = make([]int, len(scale))
	err = eachRow(ctx, s.r, calibrationByGradeSQL, func(r rowScanner) error {
		var g, n int
		if err := r.Scan(&g, &n); err != nil {
			return err
		}
		if g >= 0 && g < len(out.ByGrade) {
			out.ByGrade[g] = n
		}
		out.Pairs += n
		return nil
	}, projectID)
	if err != nil {
		return out, err
	}
	answers := map[string][]agreement.CalibrationAnswer{}
	disturbing := map[string]int{}
	var order []string
	err = eachRow(ctx, s.r, calibrationAnswersSQL, func(r rowScanner) error {
		var who, reason string
		var g sql.NullInt64
		var known int
		if err := r.Scan(&who, &g, &reason, &known); err != nil {
			return err
		}
		if _, ok := answers[who]; !ok {
			order = append(order, who)
		}
		answers[who] = append(answers[who], agreement.CalibrationAnswer{Grade: int(g.Int64), Known: known, Graded: g.Valid})
		if reason == "disturbing" {
			disturbing[who]++
		}
		return nil
	}, projectID)
	if err != nil {
		return out, err
	}
	for _, who := range order {
		as := answers[who]
		out.Scores = append(out.Scores, AssessorCalibr{Assessor: who, Done: len(as) == out.Pairs, Disturbing: disturbing[who],
			CalibrationScore: agreement.ScoreCalibration(as, 0.95)})
	}
	return out, nil
}
