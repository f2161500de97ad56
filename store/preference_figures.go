package store

import (
	"cmp"
	"context"
	"slices"

	"github.com/pertinent/pertinent/export"
	"github.com/pertinent/pertinent/preference"
	"github.com/pertinent/pertinent/rankeval"
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
	// Runs: how far each kept run orders documents as the assessors preferred them.
	Runs []RunPreference `json:"runs"`
	// FlaggedComparisons lists the comparisons with current answers flagged as disturbing or
	// not judged, disturbing first; never who answered.
	FlaggedComparisons []FlaggedComparison `json:"flagged_comparisons"`
}

// FlaggedComparison is one comparison that assessors flagged or could not judge.
type FlaggedComparison struct {
	Query      string `json:"query"`
	DocumentA  string `json:"document_a"`
	DocumentB  string `json:"document_b"`
	Flagged    int    `json:"flagged"`    // answers with the flag or the reason "disturbing"
	Disturbing int    `json:"disturbing"` // of those, cannot judge: disturbing
	Broken     int    `json:"broken"`
	Language   int    `json:"language"`
	Other      int    `json:"other"`
}

// RunPreference is one kept run against the preference answers.
type RunPreference struct {
	Run string `json:"run"`
	preference.RunAgreement
}

// PreferenceFigures computes the project's PreferenceReport from its current answers and
// final grades, through the same reads as the schedule. The Preferences page and the API
// both call this.
func (s *Store) PreferenceFigures(ctx context.Context, projectID int64) (PreferenceReport, error) {
	out := PreferenceReport{Queries: []PreferenceQuery{}, Runs: []RunPreference{}}
	p, err := s.Project(ctx, projectID)
	if err != nil {
		return out, err
	}
	if out.FlaggedComparisons, err = s.flaggedComparisons(ctx, projectID); err != nil {
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
	err = s.r.QueryRowContext(ctx, `SELECT COALESCE(SUM(CASE WHEN a.outcome IS NULL THEN 1 ELSE 0 END), 0),
			COALESCE(SUM(CASE WHEN a.flagged = 1 OR a.cannot_judge = 'disturbing' THEN 1 ELSE 0 END), 0)
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
	if out.Agreement, err = preference.MeasureAgreement(all); err != nil {
		return out, err
	}
	out.Runs, err = s.runPreferences(ctx, projectID, all)
	return out, err
}

// runPreferences measures every kept run of the project against the answers: each run's
// documents per query in its ranked order (rankeval.Rank: score, then id).
func (s *Store) runPreferences(ctx context.Context, projectID int64, js []preference.Judgment) ([]RunPreference, error) {
	kept, err := s.KeptRuns(ctx, projectID)
	if err != nil || len(kept) == 0 {
		return []RunPreference{}, err
	}
	ids := make([]int64, len(kept))
	for i, k := range kept {
		ids[i] = k.ID
	}
	runs, err := s.loadRuns(ctx, projectID, ids)
	if err != nil {
		return nil, err
	}
	out := make([]RunPreference, 0, len(runs))
	for _, r := range runs {
		ranking := make(map[string][]string, len(r.Run))
		for q, docs := range r.Run {
			ranked := rankeval.Rank(docs)
			ids := make([]string, len(ranked))
			for i, d := range ranked {
				ids[i] = d.DocID
			}
			ranking[q] = ids
		}
		a, err := preference.MeasureRunAgreement(js, ranking)
		if err != nil {
			return nil, err
		}
		out = append(out, RunPreference{Run: r.Name, RunAgreement: a})
	}
	return out, nil
}

// PreferencePairs returns the project's current preference answers as training pairs: per
// query and ordered pair of documents (by external id), how many assessors judged the first
// the better. "About the same" and "neither relevant" give no pair. Sorted by query, better,
// worse.
func (s *Store) PreferencePairs(ctx context.Context, projectID int64) ([]export.PreferencePair, error) {
	js, err := s.PreferenceJudgments(ctx, projectID)
	if err != nil {
		return nil, err
	}
	counts := map[[3]string]int{}
	for _, j := range js {
		switch j.Outcome {
		case preference.LeftBetter:
			counts[[3]string{j.Query, j.Left, j.Right}]++
		case preference.RightBetter:
			counts[[3]string{j.Query, j.Right, j.Left}]++
		}
	}
	out := make([]export.PreferencePair, 0, len(counts))
	for k, n := range counts {
		out = append(out, export.PreferencePair{Query: k[0], Better: k[1], Worse: k[2], Count: n})
	}
	slices.SortFunc(out, func(a, b export.PreferencePair) int {
		return cmp.Or(cmp.Compare(a.Query, b.Query), cmp.Compare(a.Better, b.Better), cmp.Compare(a.Worse, b.Worse))
	})
	return out, nil
}

// flaggedComparisons reads the comparisons with flagged or unjudged current answers.
func (s *Store) flaggedComparisons(ctx context.Context, projectID int64) ([]FlaggedComparison, error) {
	out, err := queryAll(ctx, s.r, `SELECT q.external_id, da.external_id, db.external_id,
			SUM(CASE WHEN a.flagged = 1 OR a.cannot_judge = 'disturbing' THEN 1 ELSE 0 END),
			SUM(CASE WHEN a.cannot_judge = 'disturbing' THEN 1 ELSE 0 END),
			SUM(CASE WHEN a.cannot_judge = 'broken' THEN 1 ELSE 0 END),
			SUM(CASE WHEN a.cannot_judge = 'language' THEN 1 ELSE 0 END),
			SUM(CASE WHEN a.cannot_judge = 'other' THEN 1 ELSE 0 END)
		FROM preference_answers a JOIN preference_comparisons c ON c.id = a.comparison_id
		JOIN queries q ON q.id = c.query_id JOIN documents da ON da.id = c.doc_a JOIN documents db ON db.id = c.doc_b
		WHERE c.project_id = ? AND a.current = 1 AND (a.flagged = 1 OR a.cannot_judge IS NOT NULL)
		GROUP BY c.id, q.external_id, da.external_id, db.external_id ORDER BY 4 DESC, q.external_id, da.external_id, db.external_id`, func(r rowScanner) (FlaggedComparison, error) {
		var f FlaggedComparison
		err := r.Scan(&f.Query, &f.DocumentA, &f.DocumentB, &f.Flagged, &f.Disturbing, &f.Broken, &f.Language, &f.Other)
		return f, err
	}, projectID)
	if out == nil {
		out = []FlaggedComparison{}
	}
	return out, err
}
