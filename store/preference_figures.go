package store

import (
	"context"
	"slices"

	"github.com/pertinent/pertinent/preference"
)

// PreferenceQuery is one query's preferences: the Bradley–Terry order of its compared
// documents with intervals (and the intransitive triples, inside Fit), and where the
// schedule's sort stands.
type PreferenceQuery struct {
	Query     string                  `json:"query"`
	Text      string                  `json:"text"`
	Documents []string                `json:"documents"` // those at or above the threshold
	Fit       preference.BradleyTerry `json:"fit"`
	// Done: every comparison the sort needs has its answers; Order is then the sort's order,
	// best first. Open counts the comparisons the sort waits for.
	Done  bool     `json:"done"`
	Order []string `json:"order,omitempty"`
	Open  int      `json:"open"`
}

// PreferenceReport is a project's preferences: every query with compared documents or
// answers, and the agreement between assessors over all of them.
type PreferenceReport struct {
	Threshold              int                  `json:"threshold"`
	JudgmentsPerComparison int                  `json:"judgments_per_comparison"`
	Answers                int                  `json:"answers"` // current answers with an outcome
	CannotJudge            int                  `json:"cannot_judge"`
	Flagged                int                  `json:"flagged"` // current answers with the flag or "disturbing"
	Agreement              preference.Agreement `json:"agreement"`
	Queries                []PreferenceQuery    `json:"queries"`
}

// PreferenceFigures computes the project's PreferenceReport from its current answers and
// final grades, through the same reads as the schedule. The Preferences page and the API
// both call this.
func (s *Store) PreferenceFigures(ctx context.Context, projectID int64) (PreferenceReport, error) {
	out := PreferenceReport{Queries: []PreferenceQuery{}}
	p, err := s.Project(ctx, projectID)
	if err != nil {
		return out, err
	}
	levels, err := s.Scale(ctx, projectID)
	if err != nil {
		return out, err
	}
	out.Threshold, out.JudgmentsPerComparison = PreferenceFloor(p, len(levels)), p.JudgmentsPerPair
	docs, js, err := scheduleInput(ctx, s.r, projectID, 0, out.Threshold)
	if err != nil {
		return out, err
	}
	// Row ids to what people read: external ids of documents, queries with their text.
	docName := map[string]string{}
	err = eachRow(ctx, s.r, `SELECT id, external_id FROM documents WHERE project_id = ?`, func(r rowScanner) error {
		var id int64
		var ext string
		err := r.Scan(&id, &ext)
		docName[docKey(id)] = ext
		return err
	}, projectID)
	if err != nil {
		return out, err
	}
	type query struct{ ext, text string }
	queries := map[int64]query{}
	var qids []int64
	err = eachRow(ctx, s.r, `SELECT id, external_id, text FROM queries WHERE project_id = ? ORDER BY external_id`, func(r rowScanner) error {
		var id int64
		var q query
		err := r.Scan(&id, &q.ext, &q.text)
		queries[id] = q
		qids = append(qids, id)
		return err
	}, projectID)
	if err != nil {
		return out, err
	}
	err = s.r.QueryRowContext(ctx, `SELECT COALESCE(SUM(a.outcome IS NULL), 0),
			COALESCE(SUM(a.flagged = 1 OR a.cannot_judge = 'disturbing'), 0)
		FROM preference_answers a JOIN preference_comparisons c ON c.id = a.comparison_id
		WHERE c.project_id = ? AND a.current = 1`, projectID).Scan(&out.CannotJudge, &out.Flagged)
	if err != nil {
		return out, err
	}
	names := func(keys []string) []string {
		out := make([]string, len(keys))
		for i, k := range keys {
			out[i] = docName[k]
		}
		return out
	}
	var all []preference.Judgment
	for _, qid := range qids {
		if len(docs[qid]) == 0 && len(js[qid]) == 0 {
			continue
		}
		q := queries[qid]
		plan, err := preference.Schedule(docKey(qid), docs[qid], js[qid], p.JudgmentsPerPair)
		if err != nil {
			return out, err
		}
		// The same answers in people's words: the query and documents by external id.
		named := make([]preference.Judgment, len(js[qid]))
		for i, j := range js[qid] {
			named[i] = preference.Judgment{Query: q.ext, Left: docName[j.Left], Right: docName[j.Right], Outcome: j.Outcome, Assessor: j.Assessor}
		}
		all = append(all, named...)
		compared := names(docs[qid])
		slices.Sort(compared)
		fit, err := preference.FitBradleyTerry(q.ext, compared, named, preference.FitOptions{})
		if err != nil {
			return out, err
		}
		out.Queries = append(out.Queries, PreferenceQuery{Query: q.ext, Text: q.text, Documents: compared, Fit: fit,
			Done: plan.Done, Order: names(plan.Order), Open: len(plan.Next)})
		out.Answers += len(named)
	}
	out.Agreement, err = preference.MeasureAgreement(all)
	return out, err
}
