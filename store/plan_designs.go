package store

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"slices"
	"strconv"
	"time"

	"github.com/pertinent/pertinent/estimate"
	"github.com/pertinent/pertinent/export"
	"github.com/pertinent/pertinent/rankeval"
)

// DesignSettings is everything a judging design was made with, kept as JSON beside it.
type DesignSettings struct {
	Design    estimate.Design    `json:"design"`
	Policy    export.LabelPolicy `json:"label_policy"`
	Gain      rankeval.Gain      `json:"gain"`
	Threshold int                `json:"threshold"` // grade >= Threshold is relevant for AP and finds
	BreakTies bool               `json:"break_ties"`
}

// DefaultPlanPolicy is the label policy a design reads final grades with unless told otherwise:
// a lead's adjudication first, else the median of the grades.
var DefaultPlanPolicy = export.LabelPolicy{AdjudicationFirst: true, Consensus: export.ConsensusMedian, MinJudgments: 1}

// PlanRequest asks for a judging design over kept runs.
type PlanRequest struct {
	Settings DesignSettings
	Runs     []int64 // kept run ids
	DryRun   bool    // plan and count, store nothing
}

// Design is a kept judging design.
type Design struct {
	ID        int64          `json:"id"`
	Settings  DesignSettings `json:"settings"`
	Runs      []int64        `json:"runs"`
	RunNames  []string       `json:"run_names"`
	CreatedAt time.Time      `json:"created_at"`
	By        string         `json:"by,omitempty"`
	Chosen    int            `json:"chosen"` // pairs this design chose
}

// Adaptive says whether the design releases pairs in waves as grades come back.
func (d Design) Adaptive() bool {
	k := d.Settings.Design.Kind
	return k == estimate.KindDecide || k == estimate.KindFind
}

// PlanOutcome is what planning did.
type PlanOutcome struct {
	DesignID int64         `json:"design_id,omitempty"`
	Plan     estimate.Plan `json:"plan"`
	Added    int           `json:"added"`  // new pairs sent to judging
	Raised   int           `json:"raised"` // pairs already in the project whose inclusion probability rose
	DryRun   bool          `json:"dry_run"`
}

// prnSeed is the seed of a project's permanent random numbers: the same for every design of
// the project, so that a pair drawn at rate r is drawn again at any rate above r and the
// inclusion probability over several designs is simply the largest rate offered (sample
// coordination with permanent random numbers, Ohlsson 1995).
func prnSeed(projectID int64) uint64 { return uint64(projectID)*0x9E3779B97F4A7C15 + 1 }

func (r *PlanRequest) normalise(projectID int64) error {
	d := &r.Settings.Design
	if len(r.Runs) == 0 {
		return errorf(CodeInvalid, "choose at least one kept run")
	}
	seen := map[int64]bool{}
	for _, id := range r.Runs {
		if seen[id] {
			return errorf(CodeInvalid, "a run is chosen twice: choose each run once")
		}
		seen[id] = true
	}
	switch d.Kind {
	case estimate.KindDepth, estimate.KindStratified, estimate.KindDecide, estimate.KindFind:
	default:
		return errorf(CodeInvalid, fmt.Sprintf("unknown judging design %q: choose depth, stratified, decide or find", d.Kind))
	}
	if d.Kind == estimate.KindDecide && len(r.Runs) != 2 {
		return errorf(CodeInvalid, "deciding A versus B needs exactly two runs")
	}
	if d.K <= 0 {
		d.K = 10
	}
	if r.Settings.Threshold < 1 {
		r.Settings.Threshold = 2
	}
	if r.Settings.Policy == (export.LabelPolicy{}) {
		r.Settings.Policy = DefaultPlanPolicy
	}
	if err := r.Settings.Policy.Validate(); err != nil {
		return err
	}
	d.Seed = prnSeed(projectID)
	return nil
}

// PlanJudging makes a judging design over kept runs and, unless DryRun, sends its pairs to
// judging with how each was chosen, all in one transaction: a problem with any run, query or
// document stores nothing. Adaptive designs (decide, find) send their first wave here and the
// next ones through AdvanceDesign.
func (s *Store) PlanJudging(ctx context.Context, projectID, by int64, req PlanRequest) (PlanOutcome, error) {
	if err := req.normalise(projectID); err != nil {
		return PlanOutcome{}, err
	}
	runs, err := s.loadRuns(ctx, projectID, req.Runs)
	if err != nil {
		return PlanOutcome{}, err
	}
	queries, err := s.queryIDs(ctx, projectID)
	if err != nil {
		return PlanOutcome{}, err
	}
	if err := estimate.CheckRuns(runs, queries, req.Settings.BreakTies); err != nil {
		return PlanOutcome{}, err
	}
	d := req.Settings.Design
	if d.Kind == estimate.KindDecide {
		d.RunA, d.RunB = runs[0].Name, runs[1].Name
		req.Settings.Design = d
	}
	known, err := s.designLabels(ctx, projectID, req.Settings.Policy)
	if err != nil {
		return PlanOutcome{}, err
	}
	plan, err := s.makePlan(ctx, projectID, req.Settings, runs, known)
	if err != nil {
		return PlanOutcome{}, err
	}
	out := PlanOutcome{Plan: plan, DryRun: req.DryRun}
	for _, c := range plan.Choices {
		if _, ok := known[c.Query][c.Doc]; ok {
			out.Raised++
		} else {
			out.Added++
		}
	}
	if req.DryRun {
		return out, nil
	}
	settings, err := json.Marshal(req.Settings)
	if err != nil {
		return PlanOutcome{}, err
	}
	ids, err := json.Marshal(req.Runs)
	if err != nil {
		return PlanOutcome{}, err
	}
	err = s.write(ctx, func(tx *sql.Tx) error {
		p, err := s.lockedProject(ctx, tx, projectID)
		if err != nil {
			return err
		}
		if err := tx.QueryRowContext(ctx, `INSERT INTO designs(project_id, kind, settings, runs, user_id, created_at)
			VALUES (?, ?, ?, ?, ?, ?) RETURNING id`, projectID, string(d.Kind), string(settings), string(ids), nullID(by), s.now()).Scan(&out.DesignID); err != nil {
			return err
		}
		if err := s.insertChoices(ctx, tx, projectID, out.DesignID, plan.Choices); err != nil {
			return err
		}
		return s.audit(ctx, tx, by, p.ID, "design.create", fmt.Sprintf("design %d (%s)", out.DesignID, d.Kind),
			strconv.Itoa(out.Added)+" pairs added, "+strconv.Itoa(out.Raised)+" already there")
	})
	if err != nil {
		return PlanOutcome{}, err
	}
	return out, nil
}

// makePlan applies the design's kind.
func (s *Store) makePlan(ctx context.Context, projectID int64, set DesignSettings, runs []estimate.NamedRun, known estimate.Labels) (estimate.Plan, error) {
	var (
		plan estimate.Plan
		err  error
	)
	switch set.Design.Kind {
	case estimate.KindDecide:
		top, terr := s.topGrade(ctx, projectID)
		if terr != nil {
			return plan, terr
		}
		plan, err = estimate.PlanDecide(set.Design, runs, known, set.Gain, top)
	case estimate.KindFind:
		plan, err = estimate.PlanFind(set.Design, runs, known, set.Threshold)
	default:
		plan, err = estimate.MakePlan(set.Design, runs, known)
	}
	if err != nil {
		return plan, err
	}
	return plan, nil
}

func (s *Store) topGrade(ctx context.Context, projectID int64) (int, error) {
	levels, err := s.Scale(ctx, projectID)
	if err != nil {
		return 0, err
	}
	if len(levels) < 2 {
		return 0, ErrNotFound
	}
	return len(levels) - 1, nil
}

// insertChoices adds the chosen pairs (a new pair gets the choice's priority; an existing one
// keeps its judgments and takes the higher priority) and records how this design chose each.
// A document or query the project lacks is a problem, and nothing is stored.
func (s *Store) insertChoices(ctx context.Context, tx *sql.Tx, projectID, designID int64, choices []estimate.Choice) error {
	adder, err := newPairAdder(ctx, tx, projectID, s.now())
	if err != nil {
		return err
	}
	defer adder.close()
	choice, err := tx.PrepareContext(ctx, `INSERT INTO pair_choices(pair_id, design_id, stratum, rate, reason) VALUES (?, ?, ?, ?, ?)`)
	if err != nil {
		return err
	}
	defer choice.Close()
	origin := "design:" + strconv.FormatInt(designID, 10)
	var missing []string
	for _, c := range choices {
		qid, did, err := adder.ids(c.Query, c.Doc)
		if err != nil {
			return err
		}
		if qid == 0 || did == 0 {
			if len(missing) < 20 {
				what := fmt.Sprintf("document %q (query %q) is not in the project", c.Doc, c.Query)
				if qid == 0 {
					what = fmt.Sprintf("query %q is not in the project", c.Query)
				}
				missing = append(missing, what)
			} else {
				missing = append(missing, "")
			}
			continue
		}
		if len(missing) > 0 {
			continue
		}
		pairID, _, err := adder.add(qid, did, origin, c.Priority)
		if err != nil {
			return err
		}
		if _, err := choice.ExecContext(ctx, pairID, designID, c.Stratum, c.Prob, c.Reason); err != nil {
			return err
		}
	}
	if len(missing) > 0 {
		msg := fmt.Sprintf("%d chosen pairs name what the project lacks; import the documents first, then plan again. Nothing was stored.", len(missing))
		for _, m := range missing {
			if m != "" {
				msg += "\n" + m
			}
		}
		if len(missing) > 20 {
			msg += fmt.Sprintf("\nand %d more", len(missing)-20)
		}
		return errorf(CodeInvalid, msg)
	}
	return nil
}

// queryIDs returns the external ids of the project's queries.
func (s *Store) queryIDs(ctx context.Context, projectID int64) (map[string]bool, error) {
	out := map[string]bool{}
	err := eachRow(ctx, s.r, `SELECT external_id FROM queries WHERE project_id = ?`, func(r rowScanner) error {
		var id string
		if err := r.Scan(&id); err != nil {
			return err
		}
		out[id] = true
		return nil
	}, projectID)
	return out, err
}

// designLabels is what is known of every pair of the project for estimation: its final grade
// under the policy (-1 while it has none), the largest rate any design offered it (1 for a
// pair no design sampled: it is judged in full), and the stratum of that offer.
func (s *Store) designLabels(ctx context.Context, projectID int64, policy export.LabelPolicy) (estimate.Labels, error) {
	qrels, _, err := s.FinalGrades(ctx, projectID, policy)
	if err != nil {
		return nil, err
	}
	rows, err := s.r.QueryContext(ctx, `SELECT q.external_id, d.external_id, c.rate, c.stratum
		FROM pairs p JOIN queries q ON q.id = p.query_id JOIN documents d ON d.id = p.document_id
		LEFT JOIN pair_choices c ON c.pair_id = p.id
		WHERE p.project_id = ?`, projectID)
	if err != nil {
		return nil, err
	}
	defer rows.Close()
	labels := estimate.Labels{}
	for rows.Next() {
		var q, d string
		var rate sql.NullFloat64
		var stratum sql.NullInt64
		if err := rows.Scan(&q, &d, &rate, &stratum); err != nil {
			return nil, err
		}
		docs := labels[q]
		if docs == nil {
			docs = map[string]estimate.Label{}
			labels[q] = docs
		}
		l, seen := docs[d]
		if !seen {
			l = estimate.Label{Grade: -1, Prob: 0}
			if g, ok := qrels[q][d]; ok {
				l.Grade = g
			}
		}
		r, st := 1.0, 0
		if rate.Valid {
			r, st = rate.Float64, int(stratum.Int64)
		}
		// Adaptive choices (stratum -1) and pairs no design sampled are judged in full.
		if st < 0 {
			st = 0
		}
		if r > l.Prob {
			l.Prob, l.Stratum = r, st
		}
		docs[d] = l
	}
	return labels, rows.Err()
}

// Designs lists a project's judging designs, newest first.
func (s *Store) Designs(ctx context.Context, projectID int64) ([]Design, error) {
	out, err := queryAll(ctx, s.r, `SELECT d.id, d.settings, d.runs, d.created_at, COALESCE(u.username, ''),
		(SELECT COUNT(*) FROM pair_choices c WHERE c.design_id = d.id)
		FROM designs d LEFT JOIN users u ON u.id = d.user_id WHERE d.project_id = ? ORDER BY d.id DESC`, scanDesign, projectID)
	if err != nil {
		return nil, err
	}
	for i := range out {
		if out[i].RunNames, err = s.runNames(ctx, projectID, out[i].Runs); err != nil {
			return nil, err
		}
	}
	return out, nil
}

// Design returns one judging design of the project.
func (s *Store) Design(ctx context.Context, projectID, designID int64) (Design, error) {
	row := s.r.QueryRowContext(ctx, `SELECT d.id, d.settings, d.runs, d.created_at, COALESCE(u.username, ''),
		(SELECT COUNT(*) FROM pair_choices c WHERE c.design_id = d.id)
		FROM designs d LEFT JOIN users u ON u.id = d.user_id WHERE d.project_id = ? AND d.id = ?`, projectID, designID)
	d, err := scanDesign(row)
	if errors.Is(err, sql.ErrNoRows) {
		return Design{}, errorf(CodeNotFound, "there is no such judging design in this project")
	}
	if err != nil {
		return Design{}, err
	}
	d.RunNames, err = s.runNames(ctx, projectID, d.Runs)
	return d, err
}

func scanDesign(row interface{ Scan(...any) error }) (Design, error) {
	var d Design
	var settings, runs, at string
	if err := row.Scan(&d.ID, &settings, &runs, &at, &d.By, &d.Chosen); err != nil {
		return d, err
	}
	if err := json.Unmarshal([]byte(settings), &d.Settings); err != nil {
		return d, fmt.Errorf("store: design %d settings: %w", d.ID, err)
	}
	if err := json.Unmarshal([]byte(runs), &d.Runs); err != nil {
		return d, fmt.Errorf("store: design %d runs: %w", d.ID, err)
	}
	d.CreatedAt = parseTime(at)
	return d, nil
}

func (s *Store) runNames(ctx context.Context, projectID int64, ids []int64) ([]string, error) {
	out := make([]string, len(ids))
	for i, id := range ids {
		if err := s.r.QueryRowContext(ctx, `SELECT name FROM runs WHERE id = ? AND project_id = ?`, id, projectID).Scan(&out[i]); err != nil {
			if errors.Is(err, sql.ErrNoRows) {
				out[i] = fmt.Sprintf("run %d (removed)", id)
				continue
			}
			return nil, err
		}
	}
	return out, nil
}

// AdvanceDesign releases the next wave of an adaptive design once fewer than half a wave of
// its pairs wait for grades; it returns how many pairs it added. Other designs release
// everything when they are made, so this does nothing for them.
func (s *Store) AdvanceDesign(ctx context.Context, projectID, by, designID int64) (int, error) {
	d, err := s.Design(ctx, projectID, designID)
	if err != nil || !d.Adaptive() {
		return 0, err
	}
	st, err := s.designState(ctx, projectID, d)
	if err != nil {
		return 0, err
	}
	wave := d.Settings.Design.Wave
	if wave <= 0 {
		wave = 20
	}
	if st.pending*2 >= wave {
		return 0, nil
	}
	left := st.budgetLeft(d)
	if left == 0 {
		return 0, nil
	}
	set := d.Settings
	if left > 0 && left < wave {
		set.Design.Wave = left
	}
	plan, err := s.makePlan(ctx, projectID, set, st.runs, st.labels)
	if err != nil || len(plan.Choices) == 0 {
		return 0, err
	}
	err = s.write(ctx, func(tx *sql.Tx) error {
		if _, err := s.lockedProject(ctx, tx, projectID); err != nil {
			return err
		}
		if err := s.insertChoices(ctx, tx, projectID, designID, plan.Choices); err != nil {
			return err
		}
		return s.audit(ctx, tx, by, projectID, "design.advance", fmt.Sprintf("design %d", designID), strconv.Itoa(len(plan.Choices))+" pairs released")
	})
	if err != nil {
		return 0, err
	}
	return len(plan.Choices), nil
}

// designState gathers what an estimate of a design needs.
type designState struct {
	runs    []estimate.NamedRun
	labels  estimate.Labels
	chosen  int // pairs this design chose
	graded  int // of those, with a final grade
	pending int // of those, still without one
}

// budgetLeft is the judgments the design may still ask for; -1 means no limit.
func (st designState) budgetLeft(d Design) int {
	b := d.Settings.Design.Budget
	if b <= 0 {
		return -1
	}
	return max(0, b-st.chosen)
}

func (s *Store) designState(ctx context.Context, projectID int64, d Design) (designState, error) {
	var st designState
	var err error
	if st.runs, err = s.loadRuns(ctx, projectID, d.Runs); err != nil {
		return st, err
	}
	if st.labels, err = s.designLabels(ctx, projectID, d.Settings.Policy); err != nil {
		return st, err
	}
	rows, err := s.r.QueryContext(ctx, `SELECT q.external_id, doc.external_id
		FROM pair_choices c JOIN pairs p ON p.id = c.pair_id JOIN queries q ON q.id = p.query_id JOIN documents doc ON doc.id = p.document_id
		WHERE c.design_id = ?`, d.ID)
	if err != nil {
		return st, err
	}
	defer rows.Close()
	for rows.Next() {
		var q, doc string
		if err := rows.Scan(&q, &doc); err != nil {
			return st, err
		}
		st.chosen++
		if st.labels[q][doc].Grade >= 0 {
			st.graded++
		} else {
			st.pending++
		}
	}
	return st, rows.Err()
}

// DesignReport is "how sure are we?" for one design: the estimates of its runs, the
// differences between them, the decision of a decide design, and when to stop.
type DesignReport struct {
	Design     Design             `json:"design"`
	Estimates  estimate.Report    `json:"estimates"`
	Decision   *estimate.Decision `json:"decision,omitempty"`
	Signal     estimate.Signal    `json:"signal"`
	Chosen     int                `json:"chosen"`
	Graded     int                `json:"graded"`
	Pending    int                `json:"pending"`
	BudgetLeft int                `json:"budget_left"` // -1: no limit
}

// DesignEstimate reads the estimates of a design's runs from what has been judged so far.
// Page, command line and API all show this value.
func (s *Store) DesignEstimate(ctx context.Context, projectID, designID int64) (DesignReport, error) {
	d, err := s.Design(ctx, projectID, designID)
	if err != nil {
		return DesignReport{}, err
	}
	st, err := s.designState(ctx, projectID, d)
	if err != nil {
		return DesignReport{}, err
	}
	top, err := s.topGrade(ctx, projectID)
	if err != nil {
		return DesignReport{}, err
	}
	set := d.Settings
	opts := estimate.Options{K: set.Design.K, Gain: set.Gain, Threshold: set.Threshold, MaxGrade: top}
	rep := DesignReport{Design: d, Chosen: st.chosen, Graded: st.graded, Pending: st.pending, BudgetLeft: st.budgetLeft(d)}
	labels := designQueries(st.labels, st.runs)
	if rep.Estimates, err = estimate.Estimate(st.runs, labels, opts); err != nil {
		return DesignReport{}, err
	}
	left := rep.BudgetLeft
	if set.Design.Kind == estimate.KindDecide {
		dec, err := estimate.Decide(set.Design, st.runs, labels, set.Gain, top)
		if err != nil {
			return DesignReport{}, err
		}
		rep.Decision = &dec
	}
	rep.Signal = estimate.StopSignal(set.Design, rep.Estimates, left)
	if rep.Decision != nil {
		rep.Signal = decisionSignal(*rep.Decision, rep.Pending, left)
	}
	return rep, nil
}

// decisionSignal is the stop signal of a decide design, from its decision.
func decisionSignal(dec estimate.Decision, pending, left int) estimate.Signal {
	sig := estimate.Signal{P: dec.ProbBBeatsA, Text: dec.Text}
	switch {
	case dec.Settled:
		sig.State = "settled"
	case pending > 0:
		sig.State = "judging"
	case left == 0:
		sig.State = "spent"
		sig.Text += " The budget is spent."
	default:
		sig.State = "narrow"
	}
	return sig
}

// designQueries keeps the labels of the queries the runs retrieved: the estimate's queries.
func designQueries(all estimate.Labels, runs []estimate.NamedRun) estimate.Labels {
	out := estimate.Labels{}
	for _, r := range runs {
		for q := range r.Run {
			if docs, ok := all[q]; ok {
				out[q] = docs
			} else if _, done := out[q]; !done {
				out[q] = map[string]estimate.Label{}
			}
		}
	}
	return out
}

// QueriesReport is the query-count planner of a design: the variance of its runs' per-query
// scores, the queries needed, and each metric's discriminative power.
type QueriesReport struct {
	Metric string             `json:"metric"`
	Plan   estimate.QueryPlan `json:"plan"`
	Power  []estimate.Power   `json:"discriminative_power"`
}

// DesignQueries plans how many queries a comparison of the design's runs needs, from the
// per-query estimates of NDCG@k (metric "ndcg") or AP ("ap") on the queries where every run's
// value is defined.
func (s *Store) DesignQueries(ctx context.Context, projectID, designID int64, metric string, req estimate.QueryPlanRequest) (QueriesReport, error) {
	rep, err := s.DesignEstimate(ctx, projectID, designID)
	if err != nil {
		return QueriesReport{}, err
	}
	return QueriesFor(rep, metric, req)
}

// QueriesFor is DesignQueries over a report already read (the design's page reads it once).
func QueriesFor(rep DesignReport, metric string, req estimate.QueryPlanRequest) (QueriesReport, error) {
	var err error
	if metric == "" {
		metric = "ndcg"
	}
	out := QueriesReport{Metric: metric}
	table := func(m string) estimate.ScoreTable {
		return ScoreTableOf(rep.Estimates, m)
	}
	t := table(metric)
	if len(t.Runs) == 0 {
		return out, errorf(CodeInvalid, fmt.Sprintf("unknown metric %q: choose ndcg or ap", metric))
	}
	if out.Plan, err = estimate.PlanQueries(t, req); err != nil {
		return out, err
	}
	for _, m := range []string{"ndcg", "ap"} {
		p, err := estimate.DiscriminativePower(m, table(m), req.Alpha)
		if err != nil {
			continue // too few runs or queries: the plan above already said so
		}
		out.Power = append(out.Power, p)
	}
	return out, nil
}

// ScoreTableOf lays out the per-query estimates of metric ("ndcg" or "ap") as runs × queries,
// keeping the queries where every run's value is defined.
func ScoreTableOf(rep estimate.Report, metric string) estimate.ScoreTable {
	if metric != "ndcg" && metric != "ap" || len(rep.Runs) == 0 {
		return estimate.ScoreTable{}
	}
	t := estimate.ScoreTable{}
	count := map[string]int{}
	for _, r := range rep.Runs {
		for _, q := range r.PerQuery {
			if (metric == "ndcg" && q.NDCGDefined) || (metric == "ap" && q.APDefined) {
				count[q.Query]++
			}
		}
	}
	for q, n := range count {
		if n == len(rep.Runs) {
			t.Queries = append(t.Queries, q)
		}
	}
	slices.Sort(t.Queries)
	for _, r := range rep.Runs {
		byQuery := map[string]float64{}
		for _, q := range r.PerQuery {
			if metric == "ndcg" {
				byQuery[q.Query] = q.NDCG.Est
			} else {
				byQuery[q.Query] = q.AP.Est
			}
		}
		row := make([]float64, len(t.Queries))
		for i, q := range t.Queries {
			row[i] = byQuery[q]
		}
		t.Runs = append(t.Runs, r.Run)
		t.Scores = append(t.Scores, row)
	}
	return t
}

// AdvanceDesigns releases the next wave of every adaptive design of the project that is
// running low, and returns how many pairs were added. The judging screen calls it when an
// assessor finds no work, so that adaptive designs never leave people idle.
func (s *Store) AdvanceDesigns(ctx context.Context, projectID int64) (int, error) {
	ids, err := queryAll(ctx, s.r, `SELECT id FROM designs WHERE project_id = ? AND kind IN ('decide', 'find') ORDER BY id`, scanValue[int64], projectID)
	if err != nil {
		return 0, err
	}
	total := 0
	for _, id := range ids {
		n, err := s.AdvanceDesign(ctx, projectID, 0, id)
		if err != nil {
			return total, err
		}
		total += n
	}
	return total, nil
}
