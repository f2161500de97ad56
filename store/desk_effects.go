package store

import (
	"context"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/rankeval"
)

// AssessorEffects is what each assessor's habits do: leniency against the others, and what
// the leaderboard of the project's kept runs would be without them.
type AssessorEffects struct {
	Leniency []agreement.AssessorLeniency `json:"leniency"`
	// Runs are the kept runs scored, by name; Measure names the score (NDCG@10, exponential
	// gain, over the queries with a defined value). With fewer than two runs there is no
	// order to change: the three lists below are empty and Note says why.
	Runs    []string `json:"runs"`
	Measure string   `json:"measure"`
	Note    string   `json:"note,omitempty"`
	// Alone compares, per assessor, the order under the assessor's own grades with the order
	// under the others' consensus on the same pairs; Standout names the assessor whose order
	// departs clearly from the rest (rankeval.Standout), "" when none does.
	Alone    []rankeval.AssessorEffect `json:"alone"`
	Standout string                    `json:"standout"`
	// Replaced and LeftOut compare the actual order with the order when the assessor's grades
	// are replaced by the others' consensus, or left out (agreement.WithoutAssessor), and
	// list the pairs of runs whose significance verdict changes (significanceLevel).
	Replaced []rankeval.AssessorEffect `json:"replaced"`
	LeftOut  []rankeval.AssessorEffect `json:"left_out"`
}

// significanceLevel is the level at which a pair of runs counts as significantly different
// (paired t-test over queries, two-sided, no correction for the number of pairs): the usual
// 0.05 of the field, common practice.
const significanceLevel = 0.05

// effectsCutoff is the rank the what-if leaderboards score to: NDCG@10, the common choice.
const effectsCutoff = 10

// keptRunsBoard is the leaderboard of the project's kept runs by mean NDCG@effectsCutoff
// with exponential gain, the paired t-tests of every two of them on the same, and the runs'
// names; nil, with the names, when fewer than two runs are kept and there is no order to
// compare.
func (s *Store) keptRunsBoard(ctx context.Context, projectID int64, maxGrade int) (rankeval.Leaderboard, rankeval.Verdicts, []string, error) {
	kept, err := s.KeptRuns(ctx, projectID)
	if err != nil {
		return nil, nil, nil, err
	}
	names := make([]string, len(kept))
	ids := make([]int64, len(kept))
	for i, k := range kept {
		ids[i], names[i] = k.ID, k.Name
	}
	if len(kept) < 2 {
		return nil, nil, names, nil
	}
	named, err := s.loadRuns(ctx, projectID, ids)
	if err != nil {
		return nil, nil, nil, err
	}
	runs := make(map[string]rankeval.Run, len(named))
	for _, r := range named {
		runs[r.Name] = r.Run
	}
	o := rankeval.Options{K: effectsCutoff, Gain: rankeval.GainExponential, Threshold: 1, MaxGrade: maxGrade}
	return rankeval.MeanScores(runs, o, rankeval.MetricNDCG), rankeval.PairedTTests(runs, o, rankeval.MetricNDCG), names, nil
}

// adjudicatedGrades are the project's current adjudicated grades by (query, document)
// external ids: final grades no assessor changes.
func (s *Store) adjudicatedGrades(ctx context.Context, projectID int64) (map[[2]string]int, error) {
	fixed := map[[2]string]int{}
	err := eachRow(ctx, s.r, `SELECT q.external_id, d.external_id, a.grade
		FROM adjudications a JOIN pairs p ON p.id = a.pair_id JOIN queries q ON q.id = p.query_id
		JOIN documents d ON d.id = p.document_id
		WHERE p.project_id = ? AND a.current = 1`, func(r rowScanner) error {
		var key [2]string
		var g int
		if err := r.Scan(&key[0], &key[1], &g); err != nil {
			return err
		}
		fixed[key] = g
		return nil
	}, projectID)
	return fixed, err
}

// AssessorEffects computes the project's AssessorEffects from its current grades by people
// (external sources are not assessors and are left out), its current adjudications, which no
// assessor changes, and its kept runs. The Assessors page, `pertinent agreement --effects`
// and the API all call this.
func (s *Store) AssessorEffects(ctx context.Context, projectID int64) (AssessorEffects, error) {
	var out AssessorEffects
	levels, err := s.Scale(ctx, projectID)
	if err != nil {
		return out, err
	}
	if len(levels) < 2 {
		return out, ErrNotFound
	}
	d := agreement.NewData(len(levels))
	var js []agreement.PairGrade[[2]string]
	err = eachRow(ctx, s.r, `SELECT j.pair_id, q.external_id, d.external_id, u.username, j.grade
		FROM judgments j JOIN pairs p ON p.id = j.pair_id JOIN queries q ON q.id = p.query_id
		JOIN documents d ON d.id = p.document_id JOIN users u ON u.id = j.user_id
		WHERE p.project_id = ? AND j.current = 1 AND j.grade IS NOT NULL AND u.role != 'source'
		ORDER BY j.pair_id, u.username`, func(r rowScanner) error {
		var pair, user string
		var key [2]string
		var g int
		if err := r.Scan(&pair, &key[0], &key[1], &user, &g); err != nil {
			return err
		}
		js = append(js, agreement.PairGrade[[2]string]{Pair: key, Assessor: user, Grade: g})
		return d.Add(pair, user, g)
	}, projectID)
	if err != nil {
		return out, err
	}
	fixed, err := s.adjudicatedGrades(ctx, projectID)
	if err != nil {
		return out, err
	}
	out.Leniency = agreement.Leniency(d, 0.95, agreement.DSOptions{})

	out.Measure = "NDCG@10"
	out.Alone, out.Replaced, out.LeftOut = []rankeval.AssessorEffect{}, []rankeval.AssessorEffect{}, []rankeval.AssessorEffect{}
	board, verdicts, runs, err := s.keptRunsBoard(ctx, projectID, len(levels)-1)
	if err != nil {
		return out, err
	}
	out.Runs = runs
	if board == nil {
		out.Note = "Keep at least two runs (Evaluate runs → keep) to see what each assessor does to their order."
		return out, nil
	}
	alone, others := agreement.AloneAndOthers(js, agreement.MedianGrade)
	aq, oq := map[string]rankeval.Qrels{}, map[string]rankeval.Qrels{}
	for a := range alone {
		aq[a], oq[a] = qrelsFrom(alone[a]), qrelsFrom(others[a])
	}
	if out.Alone, err = rankeval.WhatIfAlone(aq, oq, board); err != nil {
		return out, err
	}
	out.Standout, _ = rankeval.Standout(out.Alone)
	for _, w := range []agreement.Without{agreement.ReplaceByOthers, agreement.LeaveOut} {
		actual, without := agreement.WithoutAssessor(js, fixed, agreement.MedianGrade, w)
		variants := make(map[string]rankeval.Qrels, len(without))
		for a, m := range without {
			variants[a] = qrelsFrom(m)
		}
		effects, err := rankeval.WhatIf(qrelsFrom(actual), variants, board)
		if e, ok := pertinent.AsError(err); ok && e.Code == pertinent.Invalid {
			out.Note = "The runs cannot be scored on the final grades yet: " + e.Message
			return out, nil
		}
		if err != nil {
			return out, err
		}
		if err := rankeval.AddSignificance(effects, qrelsFrom(actual), variants, verdicts, significanceLevel); err != nil {
			return out, err
		}
		if w == agreement.ReplaceByOthers {
			out.Replaced = effects
		} else {
			out.LeftOut = effects
		}
	}
	return out, nil
}

// qrelsFrom turns grades keyed by (query, document) external ids into qrels.
func qrelsFrom(m map[[2]string]int) rankeval.Qrels {
	q := rankeval.Qrels{}
	for k, g := range m {
		if q[k[0]] == nil {
			q[k[0]] = map[string]int{}
		}
		q[k[0]][k[1]] = g
	}
	return q
}
