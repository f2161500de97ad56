package store

import "context"

// GoldScore is how one assessor's grades of gold pairs compare with the known answers.
type GoldScore struct {
	UserID       int64
	Username     string
	Judged       int     // gold pairs graded (current judgments with a grade)
	Exact        int     // of those, graded exactly as the gold grade
	Accuracy     float64 // Exact / Judged
	MeanAbsError float64 // mean |grade - gold grade|
}

// The gold pairs through their own index: SQLite is told to take it; PostgreSQL chooses it.
const (
	sqliteGoldAccuracySQL = `SELECT u.id, u.username, COUNT(*), COUNT(*) FILTER (WHERE j.grade = p.gold_grade), AVG(ABS(j.grade - p.gold_grade))
		FROM pairs p INDEXED BY pairs_gold JOIN judgments j ON j.pair_id = p.id JOIN users u ON u.id = j.user_id
		WHERE p.project_id = ? AND p.gold_grade IS NOT NULL AND j.current = 1 AND j.grade IS NOT NULL
		GROUP BY u.id ORDER BY u.username`
	postgresGoldAccuracySQL = `SELECT u.id, u.username, COUNT(*), COUNT(*) FILTER (WHERE j.grade = p.gold_grade), AVG(ABS(j.grade - p.gold_grade))
		FROM pairs p JOIN judgments j ON j.pair_id = p.id JOIN users u ON u.id = j.user_id
		WHERE p.project_id = ? AND p.gold_grade IS NOT NULL AND j.current = 1 AND j.grade IS NOT NULL
		GROUP BY u.id ORDER BY u.username`
)

// GoldAccuracy scores every assessor who graded gold pairs of the project, by username.
// "Cannot judge" answers are not graded and do not count.
func (s *Store) GoldAccuracy(ctx context.Context, projectID int64) ([]GoldScore, error) {
	return queryAll(ctx, s.r, s.dialect(sqliteGoldAccuracySQL, postgresGoldAccuracySQL), func(r rowScanner) (GoldScore, error) {
		var g GoldScore
		err := r.Scan(&g.UserID, &g.Username, &g.Judged, &g.Exact, &g.MeanAbsError)
		g.Accuracy = float64(g.Exact) / float64(g.Judged)
		return g, err
	}, projectID)
}
