package store

import (
	"context"
	"database/sql"
	"fmt"
	"slices"
	"strconv"

	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/preference"
)

// Reads behind the schedule of comparisons, for one query (?2) or every query of the
// project (?2 = 0). Final grades follow the label policy's first two rules: a lead's
// adjudication, else the lower median of the current grades by people (sources are never
// counted among them).
const (
	scheduleGradesSQL = `SELECT p.query_id, p.document_id, j.grade
		FROM judgments j JOIN pairs p ON p.id = j.pair_id JOIN users u ON u.id = j.user_id
		WHERE p.project_id = ?1 AND (?2 = 0 OR p.query_id = ?2) AND j.current = 1 AND j.grade IS NOT NULL
		AND u.role != 'source'`
	scheduleAdjudicatedSQL = `SELECT p.query_id, p.document_id, a.grade
		FROM adjudications a JOIN pairs p ON p.id = a.pair_id
		WHERE p.project_id = ?1 AND (?2 = 0 OR p.query_id = ?2) AND a.current = 1`
	scheduleAnswersSQL = `SELECT c.query_id, a.left_doc, a.right_doc, a.outcome, a.user_id
		FROM preference_answers a JOIN preference_comparisons c ON c.id = a.comparison_id
		WHERE c.project_id = ?1 AND (?2 = 0 OR c.query_id = ?2) AND a.current = 1 AND a.outcome IS NOT NULL
		ORDER BY a.id`
)

// outcomes maps the stored words to preference's outcomes and back.
var outcomes = map[string]preference.Outcome{
	"left": preference.LeftBetter, "right": preference.RightBetter,
	"same": preference.Same, "neither": preference.NeitherRelevant,
}

// PreferenceOutcomes are the answers an assessor may give to a comparison, as stored.
var PreferenceOutcomes = []string{"left", "right", "same", "neither"}

// finalGrades returns the final grade of every graded document of the queries in scope, by
// query and document id.
func finalGrades(ctx context.Context, q querier, projectID, queryID int64) (map[int64]map[int64]int, error) {
	people := map[[2]int64][]int{}
	err := eachRow(ctx, q, scheduleGradesSQL, func(r rowScanner) error {
		var k [2]int64
		var g int
		if err := r.Scan(&k[0], &k[1], &g); err != nil {
			return err
		}
		people[k] = append(people[k], g)
		return nil
	}, projectID, queryID)
	if err != nil {
		return nil, err
	}
	final := map[[2]int64]int{}
	for k, gs := range people {
		final[k] = agreement.MedianGrade(gs)
	}
	err = eachRow(ctx, q, scheduleAdjudicatedSQL, func(r rowScanner) error {
		var k [2]int64
		var g int
		if err := r.Scan(&k[0], &k[1], &g); err != nil {
			return err
		}
		final[k] = g
		return nil
	}, projectID, queryID)
	out := map[int64]map[int64]int{}
	for k, g := range final {
		if out[k[0]] == nil {
			out[k[0]] = map[int64]int{}
		}
		out[k[0]][k[1]] = g
	}
	return out, err
}

// docKey is a row id as the preference package reads ids: zero-padded, so that the order of
// the text (the order in which Schedule lays out its sort) is the order of the ids, which is
// the order of import.
func docKey(id int64) string { return fmt.Sprintf("%019d", id) }

// scheduleInput is what preference.Schedule needs for each query in scope: the documents at
// or above the floor and the current answers with an outcome, by query id.
func scheduleInput(ctx context.Context, q querier, projectID, queryID int64, floor int) (map[int64][]string, map[int64][]preference.Judgment, error) {
	grades, err := finalGrades(ctx, q, projectID, queryID)
	if err != nil {
		return nil, nil, err
	}
	docs := map[int64][]string{}
	for qid, byDoc := range grades {
		for d, g := range byDoc {
			if g >= floor {
				docs[qid] = append(docs[qid], docKey(d))
			}
		}
	}
	js := map[int64][]preference.Judgment{}
	err = eachRow(ctx, q, scheduleAnswersSQL, func(r rowScanner) error {
		var qid, left, right, user int64
		var o string
		if err := r.Scan(&qid, &left, &right, &o, &user); err != nil {
			return err
		}
		js[qid] = append(js[qid], preference.Judgment{Query: docKey(qid), Left: docKey(left), Right: docKey(right),
			Outcome: outcomes[o], Assessor: docKey(user)})
		return nil
	}, projectID, queryID)
	return docs, js, err
}

// refreshComparisons replays the schedule of one query (or of every query of the project,
// queryID 0) inside the caller's write transaction: the comparisons preference.Schedule
// waits for are open, every other comparison of those queries is closed. A project that asks
// for grades has no open comparison. Each comparison is put to the project's judgments per
// pair assessors.
func (s *Store) refreshComparisons(ctx context.Context, tx *sql.Tx, projectID, queryID int64) error {
	var kind string
	var k, levels int
	var threshold sql.NullInt64
	err := tx.QueryRowContext(ctx, `SELECT task_kind, judgments_per_pair, preference_threshold,
			(SELECT COUNT(*) FROM scale_levels l WHERE l.project_id = projects.id)
		FROM projects WHERE id = ?`, projectID).Scan(&kind, &k, &threshold, &levels)
	if err != nil {
		return err
	}
	if _, err := tx.ExecContext(ctx, `UPDATE preference_comparisons SET open = 0
		WHERE project_id = ?1 AND (?2 = 0 OR query_id = ?2) AND open = 1`, projectID, queryID); err != nil {
		return err
	}
	if kind != TaskPreference {
		return nil
	}
	floor := PreferenceFloor(Project{PreferenceThreshold: gradeOf(threshold)}, levels)
	docs, js, err := scheduleInput(ctx, tx, projectID, queryID, floor)
	if err != nil {
		return err
	}
	qids := make([]int64, 0, len(docs))
	for qid := range docs {
		qids = append(qids, qid)
	}
	slices.Sort(qids)
	at := s.now()
	for _, qid := range qids {
		plan, err := preference.Schedule(docKey(qid), docs[qid], js[qid], k)
		if err != nil {
			return err
		}
		for _, c := range plan.Next {
			a, _ := strconv.ParseInt(c.Left, 10, 64)
			b, _ := strconv.ParseInt(c.Right, 10, 64)
			a, b = min(a, b), max(a, b)
			if _, err := tx.ExecContext(ctx, `INSERT INTO preference_comparisons(project_id, query_id, doc_a, doc_b, open, created_at)
				VALUES (?, ?, ?, ?, 1, ?) ON CONFLICT (query_id, doc_a, doc_b) DO UPDATE SET open = 1`,
				projectID, qid, a, b, at); err != nil {
				return err
			}
		}
	}
	return nil
}
