package store

import (
	"context"
	"maps"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/rankeval"
)

// SourceFigures compares one external source's grades with the people's final grades.
type SourceFigures struct {
	Source
	// Report compares the source with the people on the pairs both graded (agreement's
	// CompareSource: kappas with intervals, confusion matrix, per-grade rates, direction).
	Report agreement.SourceReport `json:"report"`
	// Order compares the kept runs' order under the people's final grades with the order under
	// the source's grades, on the same pairs (after Voorhees 2000); nil with OrderNote saying
	// why when there is no order to compare.
	Order     *rankeval.OrderComparison `json:"order,omitempty"`
	OrderNote string                    `json:"order_note,omitempty"`
}

// SourceComparison is every source of a project against its people.
type SourceComparison struct {
	Sources []SourceFigures `json:"sources"`
	Runs    []string        `json:"runs"`
	Measure string          `json:"measure"`
}

// CompareSources compares every external source of grades in the project with the people's
// final grades: a pair's adjudicated grade when a lead set one, else the lower median of the
// current grades by people (sources are never counted among them). The Sources page,
// `pertinent agreement --sources` and the API all call this.
func (s *Store) CompareSources(ctx context.Context, projectID int64) (SourceComparison, error) {
	out := SourceComparison{Sources: []SourceFigures{}, Runs: []string{}, Measure: "NDCG@10"}
	levels, err := s.Scale(ctx, projectID)
	if err != nil {
		return out, err
	}
	if len(levels) < 2 {
		return out, ErrNotFound
	}
	sources, err := s.Sources(ctx, projectID)
	if err != nil || len(sources) == 0 {
		return out, err
	}
	type key = [2]string
	people := map[key][]int{}
	bySource := map[int64]map[key]int{}
	err = eachRow(ctx, s.r, `SELECT q.external_id, d.external_id, j.user_id, u.role = 'source', j.grade
		FROM judgments j JOIN pairs p ON p.id = j.pair_id JOIN queries q ON q.id = p.query_id
		JOIN documents d ON d.id = p.document_id JOIN users u ON u.id = j.user_id
		WHERE p.project_id = ? AND j.current = 1 AND j.grade IS NOT NULL`, func(r rowScanner) error {
		var k key
		var user int64
		var isSource bool
		var g int
		if err := r.Scan(&k[0], &k[1], &user, &isSource, &g); err != nil {
			return err
		}
		if !isSource {
			people[k] = append(people[k], g)
			return nil
		}
		if bySource[user] == nil {
			bySource[user] = map[key]int{}
		}
		bySource[user][k] = g
		return nil
	}, projectID)
	if err != nil {
		return out, err
	}
	final := make(map[key]int, len(people))
	for k, gs := range people {
		final[k] = agreement.MedianGrade(gs)
	}
	adjudicated, err := s.adjudicatedGrades(ctx, projectID)
	if err != nil {
		return out, err
	}
	maps.Copy(final, adjudicated)
	board, _, runs, err := s.keptRunsBoard(ctx, projectID, len(levels)-1)
	if err != nil {
		return out, err
	}
	out.Runs = runs
	for _, src := range sources {
		f := SourceFigures{Source: src}
		var sg, hg []int
		human, theirs := map[key]int{}, map[key]int{}
		for k, g := range bySource[src.UserID] {
			h, ok := final[k]
			if !ok {
				continue
			}
			sg, hg = append(sg, g), append(hg, h)
			human[k], theirs[k] = h, g
		}
		if f.Report, err = agreement.CompareSource(len(levels), sg, hg, 0.95); err != nil {
			return out, err
		}
		switch {
		case board == nil:
			f.OrderNote = "Keep at least two runs (Evaluate runs → keep) to see what the source's grades do to their order."
		case len(sg) == 0:
			f.OrderNote = "No pair has both a grade from this source and a final grade from people."
		default:
			before, err := board(qrelsFrom(human))
			if err == nil {
				var after map[string]float64
				if after, err = board(qrelsFrom(theirs)); err == nil {
					var c rankeval.OrderComparison
					if c, err = rankeval.CompareOrders(before, after); err == nil {
						f.Order = &c
					}
				}
			}
			if e, ok := pertinent.AsError(err); ok && e.Code == pertinent.Invalid {
				f.OrderNote, err = e.Message, nil
			}
			if err != nil {
				return out, err
			}
		}
		out.Sources = append(out.Sources, f)
	}
	return out, nil
}
