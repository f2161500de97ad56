package store

import (
	"cmp"
	"context"
	"database/sql"
	"errors"
	"slices"
	"strconv"

	"github.com/pertinent/pertinent/agreement"
)

// queryInfo maps pairs to queries and holds per-query agreement; loaded on first need.
type queryInfo struct {
	pairQuery map[int64]int64
	queries   map[int64]Query
	agreement []QueryAgreement
	err       error
}

func (s *Store) queryInfo(ctx context.Context, d *Desk) (queryInfo, error) {
	qi, _ := d.queries.get(func() queryInfo {
		// Not the request's context: the result is shared by every later request.
		return s.loadQueryInfo(context.WithoutCancel(ctx), d)
	}, true)
	return qi, qi.err
}

func (s *Store) loadQueryInfo(ctx context.Context, d *Desk) queryInfo {
	qi := queryInfo{pairQuery: map[int64]int64{}, queries: map[int64]Query{}}
	qi.err = eachRow(ctx, s.r, `SELECT (id << 28) | query_id FROM pairs WHERE project_id = ?`, func(r rowScanner) error {
		var x int64
		if err := r.Scan(&x); err != nil {
			return err
		}
		qi.pairQuery[x>>28] = x & (1<<28 - 1)
		return nil
	}, d.ProjectID)
	if qi.err != nil {
		return qi
	}
	qi.err = eachRow(ctx, s.r, `SELECT id, external_id, text, need FROM queries WHERE project_id = ?`, func(r rowScanner) error {
		var q Query
		if err := r.Scan(&q.ID, &q.ExternalID, &q.Text, &q.Need); err != nil {
			return err
		}
		qi.queries[q.ID] = q
		return nil
	}, d.ProjectID)
	if qi.err != nil {
		return qi
	}
	qi.agreement = d.queryAgreement(qi)
	return qi
}

// QueryAgreement is how far assessors agree on one query's pairs.
type QueryAgreement struct {
	Query            Query
	Pairs            int             // pairs with a grade
	Pairable         int             // pairs with two or more grades
	Judgments        int             // grades
	Alpha            agreement.Value // Krippendorff's alpha, ordinal
	PercentAgreement agreement.Value
	MeanSpread       agreement.Value // mean of max − min grade over pairable pairs
}

func (d *Desk) queryAgreement(qi queryInfo) []QueryAgreement {
	type acc struct {
		data   *agreement.Data
		qa     QueryAgreement
		spread int
	}
	by := map[int64]*acc{}
	for p := 0; p+1 < len(d.pairs); p++ {
		rows := d.rows[d.pairs[p]:d.pairs[p+1]]
		q := qi.pairQuery[rows[0].pair()]
		a := by[q]
		if a == nil {
			a = &acc{data: agreement.NewData(d.Scale), qa: QueryAgreement{Query: qi.queries[q]}}
			by[q] = a
		}
		item := strconv.FormatInt(rows[0].pair(), 10)
		lo, hi, n := 127, -1, 0
		for _, r := range rows {
			if r.grade() >= gradeDisturbing || int(r.grade()) >= d.Scale {
				continue
			}
			a.data.Add(item, strconv.FormatInt(r.user(), 10), int(r.grade()))
			lo, hi, n = min(lo, int(r.grade())), max(hi, int(r.grade())), n+1
		}
		if n > 0 {
			a.qa.Pairs++
			a.qa.Judgments += n
		}
		if n > 1 {
			a.qa.Pairable++
			a.spread += hi - lo
		}
	}
	out := make([]QueryAgreement, 0, len(by))
	for _, a := range by {
		if a.qa.Judgments == 0 {
			why := "no grades yet"
			a.qa.Alpha, a.qa.PercentAgreement, a.qa.MeanSpread = agreement.Value{Why: why}, agreement.Value{Why: why}, agreement.Value{Why: why}
		} else {
			a.qa.Alpha = agreement.Alphas(a.data).Ordinal
			a.qa.PercentAgreement = agreement.Raw(a.data).Exact
			if a.qa.Pairable > 0 {
				a.qa.MeanSpread = agreement.Value{V: float64(a.spread) / float64(a.qa.Pairable), OK: true}
			} else {
				a.qa.MeanSpread = agreement.Value{Why: "no pair with two or more grades"}
			}
		}
		out = append(out, a.qa)
	}
	return out
}

// QueryAgreements returns per-query agreement sorted by key ("alpha", "agreement",
// "spread", "pairs", "query"); figures sort worst first, undefined ones last.
func (s *Store) QueryAgreements(ctx context.Context, d *Desk, key string) ([]QueryAgreement, error) {
	qi, err := s.queryInfo(ctx, d)
	if err != nil {
		return nil, err
	}
	out := slices.Clone(qi.agreement)
	val := func(q QueryAgreement) agreement.Value {
		switch key {
		case "agreement":
			return q.PercentAgreement
		case "spread":
			// A wide spread is bad: negate so ascending order puts it first.
			v := q.MeanSpread
			v.V = -v.V
			return v
		case "pairs":
			return agreement.Value{V: -float64(q.Pairs), OK: true}
		}
		return q.Alpha
	}
	slices.SortStableFunc(out, func(a, b QueryAgreement) int {
		if key == "query" {
			return cmp.Compare(a.Query.ExternalID, b.Query.ExternalID)
		}
		va, vb := val(a), val(b)
		switch {
		case va.OK != vb.OK:
			if va.OK {
				return -1
			}
			return 1
		case va.V != vb.V:
			return cmp.Compare(va.V, vb.V)
		}
		return cmp.Compare(a.Query.ExternalID, b.Query.ExternalID)
	})
	return out, nil
}

// Queries lists the project's queries that have judgments, by external id.
func (s *Store) DeskQueries(ctx context.Context, d *Desk) ([]Query, error) {
	qi, err := s.queryInfo(ctx, d)
	if err != nil {
		return nil, err
	}
	var out []Query
	for _, qa := range qi.agreement {
		out = append(out, qa.Query)
	}
	slices.SortFunc(out, func(a, b Query) int { return cmp.Compare(a.ExternalID, b.ExternalID) })
	return out, nil
}

// QueueFilter narrows the disagreement queue.
type QueueFilter struct {
	QueryID     int64 // 0: every query
	UserID      int64 // 0: every assessor; else pairs this assessor judged
	MinSeverity int
}

// QueueItem is one pair in the disagreement queue.
//
// Severity ranks the queue: 2K for a pair flagged as disturbing, plus K for a gold pair
// with a grade that misses its gold grade, plus the spread (max − min) of the current
// grades, where K is the number of grades on the scale; so flagged pairs come first, then
// gold misses, then wider spreads. Ties go to the larger variance of the grades, then to
// the older pair.
type QueueItem struct {
	PairID   int64
	Query    Query
	Grades   []int // current grades, ascending
	Cannot   int   // current "cannot judge" answers
	Flagged  bool
	Gold     *int
	GoldMiss bool
	Spread   int
	Variance float64
	Severity int
	Reopened bool // adjudicated before, reopened by a later disagreeing judgment
}

// Adjudicated is the current adjudication of a pair as the queue sees it.
type adjudicatedPair struct {
	grade int
	at    int64
}

func (s *Store) currentAdjudications(ctx context.Context, projectID int64) (map[int64]adjudicatedPair, error) {
	out := map[int64]adjudicatedPair{}
	err := eachRow(ctx, s.r, `SELECT a.pair_id, a.grade, a.created_at FROM adjudications a JOIN pairs p ON p.id = a.pair_id
		WHERE p.project_id = ? AND a.current = 1`, func(r rowScanner) error {
		var id int64
		var a adjudicatedPair
		var at sql.RawBytes
		if err := r.Scan(&id, &a.grade, &at); err != nil {
			return err
		}
		a.at = unixMillis(at)
		out[id] = a
		return nil
	}, projectID)
	return out, err
}

// Queue returns the disagreement queue, most severe first: pairs whose current grades
// differ, flagged pairs and gold misses. An adjudicated pair leaves the queue; it comes back
// only when a current judgment created after the current adjudication has a grade other
// than the final grade.
func (s *Store) Queue(ctx context.Context, d *Desk, f QueueFilter) ([]QueueItem, error) {
	adj, err := s.currentAdjudications(ctx, d.ProjectID)
	if err != nil {
		return nil, err
	}
	qi, err := s.queryInfo(ctx, d)
	if err != nil {
		return nil, err
	}
	k := d.Scale
	var out []QueueItem
	for p := 0; p+1 < len(d.pairs); p++ {
		rows := d.rows[d.pairs[p]:d.pairs[p+1]]
		id := rows[0].pair()
		q := qi.pairQuery[id]
		if f.QueryID != 0 && q != f.QueryID {
			continue
		}
		it := QueueItem{PairID: id, Query: qi.queries[q]}
		mine := f.UserID == 0
		for _, r := range rows {
			mine = mine || r.user() == f.UserID
			switch {
			case r.grade() == gradeDisturbing:
				it.Flagged = true
				it.Cannot++
			case r.grade() >= gradeDisturbing:
				it.Cannot++
			default:
				it.Grades = append(it.Grades, int(r.grade()))
			}
		}
		if !mine {
			continue
		}
		slices.Sort(it.Grades)
		if g, ok := d.goldPair[id]; ok {
			it.Gold = &g
			for _, x := range it.Grades {
				it.GoldMiss = it.GoldMiss || x != g
			}
		}
		it.Spread, it.Variance = agreement.Spread(it.Grades)
		if it.Spread == 0 && !it.Flagged && !it.GoldMiss {
			continue
		}
		if a, ok := adj[id]; ok {
			for _, r := range rows {
				if r.grade() < gradeDisturbing && r.at > a.at && int(r.grade()) != a.grade {
					it.Reopened = true
				}
			}
			if !it.Reopened {
				continue
			}
		}
		it.Severity = it.Spread
		if it.GoldMiss {
			it.Severity += k
		}
		if it.Flagged {
			it.Severity += 2 * k
		}
		if it.Severity < f.MinSeverity {
			continue
		}
		out = append(out, it)
	}
	slices.SortFunc(out, func(a, b QueueItem) int {
		if c := cmp.Compare(b.Severity, a.Severity); c != 0 {
			return c
		}
		if c := cmp.Compare(b.Variance, a.Variance); c != 0 {
			return c
		}
		return cmp.Compare(a.PairID, b.PairID)
	})
	return out, nil
}

// DocumentTitles looks up the document titles of a few pairs (one page of the queue).
func (s *Store) DocumentTitles(ctx context.Context, pairIDs []int64) (map[int64]string, error) {
	out := map[int64]string{}
	for _, id := range pairIDs {
		var t string
		err := s.r.QueryRowContext(ctx, `SELECT d.title FROM pairs p JOIN documents d ON d.id = p.document_id WHERE p.id = ?`, id).Scan(&t)
		if errors.Is(err, sql.ErrNoRows) {
			continue
		}
		if err != nil {
			return nil, err
		}
		out[id] = t
	}
	return out, nil
}
