package store

import (
	"context"
	"database/sql"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"math"
	"strings"
	"time"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/export"
	"github.com/pertinent/pertinent/ingest"
	"github.com/pertinent/pertinent/rankeval"
)

// FinalGrades are a project's final grades under a label policy, as qrels (query external id
// -> document external id -> grade), with the top grade of the project's scale.
func (s *Store) FinalGrades(ctx context.Context, projectID int64, policy export.LabelPolicy) (rankeval.Qrels, int, error) {
	if err := policy.Validate(); err != nil {
		return nil, 0, err
	}
	if err := s.checkFillFrom(ctx, projectID, policy.FillFrom); err != nil {
		return nil, 0, err
	}
	levels, err := s.Scale(ctx, projectID)
	if err != nil {
		return nil, 0, err
	}
	if len(levels) < 2 {
		return nil, 0, ErrNotFound
	}
	scan := ExportScan{FillFrom: policy.FillFrom}
	if policy.Consensus == export.ConsensusDawidSkene {
		if scan.DawidSkene, err = s.DawidSkeneGrades(ctx, projectID); err != nil {
			return nil, 0, err
		}
	}
	q := rankeval.Qrels{}
	err = s.ExportPairs(ctx, projectID, scan, func(p *ExportPair) error {
		d := policy.Apply(p.Labels)
		if !d.Include {
			return nil
		}
		docs := q[p.QueryID]
		if docs == nil {
			docs = map[string]int{}
			q[p.QueryID] = docs
		}
		docs[p.DocID] = d.Grade
		return nil
	})
	return q, len(levels) - 1, err
}

// NamedRun is one run file to evaluate; Name labels it in tables and in pooled pairs' sources.
type NamedRun struct {
	Name string
	Body io.Reader
}

// EvalRequest fixes how runs are scored.
type EvalRequest struct {
	Policy    export.LabelPolicy
	K         int           // cut-off; 0 means the whole ranking
	Gain      rankeval.Gain // NDCG gain
	Threshold int           // grade >= Threshold is relevant for P@k and MAP
}

// Evaluation is the outcome of scoring one or two runs against a project's final grades.
type Evaluation struct {
	ID                int64              `json:"id,omitempty"`
	CreatedAt         time.Time          `json:"created_at"`
	Policy            export.LabelPolicy `json:"label_policy"`
	PolicyDescription string             `json:"label_policy_description"`
	Runs              []string           `json:"runs"`
	Summaries         []rankeval.Summary `json:"summaries"`
	// Comparisons pair the second run with the first (differences are second minus first),
	// one per measure; CompareNotes say why a measure could not be compared.
	Comparisons  []rankeval.Comparison `json:"comparisons,omitempty"`
	CompareNotes []string              `json:"compare_notes,omitempty"`
	// Unjudged are the top-k retrieved pairs without a final grade, pooled over the runs, with
	// priority by rank: what "send the unjudged" adds to the project.
	Unjudged []ingest.PoolPair `json:"unjudged"`
}

// ComparedMetrics are the measures two runs are compared on.
var ComparedMetrics = []rankeval.Metric{rankeval.MetricNDCG, rankeval.MetricERR, rankeval.MetricPrecision, rankeval.MetricAP}

// Randomisation test settings: fixed, so an evaluation repeats exactly.
const (
	comparePermutations = 10000
	compareSeed         = 1
)

// Evaluate scores one run, or compares two, against the project's final grades under the
// request's label policy. A run file's problems come back as a CodeInvalid error.
func (s *Store) Evaluate(ctx context.Context, projectID int64, req EvalRequest, runs []NamedRun) (Evaluation, error) {
	if len(runs) < 1 || len(runs) > 2 {
		return Evaluation{}, errorf(CodeInvalid, "give one run file, or two to compare")
	}
	qrels, top, err := s.FinalGrades(ctx, projectID, req.Policy)
	if err != nil {
		return Evaluation{}, err
	}
	opts := rankeval.Options{K: req.K, Gain: req.Gain, Threshold: req.Threshold, MaxGrade: top}
	ev := Evaluation{CreatedAt: s.clock().UTC(), Policy: req.Policy, PolicyDescription: req.Policy.Describe()}
	depth := req.K
	if depth <= 0 {
		depth = 1 << 30 // the whole ranking
	}
	pool := ingest.NewPooler(depth)
	for i, nr := range runs {
		name := nr.Name
		if name == "" {
			name = fmt.Sprintf("run %d", i+1)
		}
		if i == 1 && name == ev.Runs[0] {
			name += " (2)"
		}
		run := rankeval.Run{}
		err := ingest.ReadRun(nr.Body, ingest.Options{File: name}, func(e ingest.RunEntry) error {
			run[e.QueryID] = append(run[e.QueryID], rankeval.ScoredDoc{DocID: e.DocID, Score: e.Score})
			pool.Add(name, e)
			return nil
		})
		if err != nil {
			return Evaluation{}, runProblems(err)
		}
		sum, err := rankeval.Evaluate(qrels, run, opts)
		if err != nil {
			return Evaluation{}, err
		}
		ev.Runs = append(ev.Runs, name)
		ev.Summaries = append(ev.Summaries, sum)
	}
	if len(ev.Summaries) == 2 {
		for _, m := range ComparedMetrics {
			c, err := rankeval.Compare(ev.Summaries[0], ev.Summaries[1], m, comparePermutations, compareSeed)
			if err != nil {
				if e, ok := pertinent.AsError(err); ok {
					ev.CompareNotes = append(ev.CompareNotes, string(m)+": "+e.Message)
					continue
				}
				return Evaluation{}, err
			}
			if math.IsInf(c.T, 0) {
				// Every query moved by the same amount: t is infinite, which JSON cannot hold.
				c.T = math.Copysign(math.MaxFloat64, c.T)
				ev.CompareNotes = append(ev.CompareNotes, string(m)+": every query differs by the same amount, so t is infinite (shown as the largest number)")
			}
			ev.Comparisons = append(ev.Comparisons, c)
		}
	}
	ev.Unjudged = []ingest.PoolPair{}
	for _, pp := range pool.Pairs() {
		if _, judged := qrels[pp.QueryID][pp.DocID]; !judged {
			ev.Unjudged = append(ev.Unjudged, pp)
		}
	}
	return ev, nil
}

// SaveEvaluation keeps an evaluation so its page, its CSV and its unjudged pairs can be
// reached later; it sets ev.ID.
func (s *Store) SaveEvaluation(ctx context.Context, projectID, by int64, ev *Evaluation) error {
	body, err := json.Marshal(ev)
	if err != nil {
		return err
	}
	return s.write(ctx, func(tx *sql.Tx) error {
		return tx.QueryRowContext(ctx, `INSERT INTO evaluations(project_id, user_id, created_at, runs, result) VALUES (?, ?, ?, ?, ?) RETURNING id`,
			projectID, nullID(by), timeText(ev.CreatedAt), strings.Join(ev.Runs, " vs "), string(body)).Scan(&ev.ID)
	})
}

// Evaluation returns a kept evaluation of the project.
func (s *Store) Evaluation(ctx context.Context, projectID, id int64) (Evaluation, error) {
	var body string
	err := s.r.QueryRowContext(ctx, `SELECT result FROM evaluations WHERE id = ? AND project_id = ?`, id, projectID).Scan(&body)
	if errors.Is(err, sql.ErrNoRows) {
		return Evaluation{}, errorf(CodeNotFound, "there is no such evaluation in this project")
	}
	if err != nil {
		return Evaluation{}, err
	}
	var ev Evaluation
	if err := json.Unmarshal([]byte(body), &ev); err != nil {
		return Evaluation{}, fmt.Errorf("store: evaluation %d: %w", id, err)
	}
	ev.ID = id
	return ev, nil
}

// EvaluationListing is a kept evaluation as listed on the project's page.
type EvaluationListing struct {
	ID        int64
	CreatedAt time.Time
	Runs      string
	By        string
}

// Evaluations lists a project's most recent evaluations, newest first.
func (s *Store) Evaluations(ctx context.Context, projectID int64, limit int) ([]EvaluationListing, error) {
	return queryAll(ctx, s.r, `SELECT e.id, e.created_at, e.runs, COALESCE(u.username, '')
		FROM evaluations e LEFT JOIN users u ON u.id = e.user_id
		WHERE e.project_id = ? ORDER BY e.id DESC LIMIT ?`, func(r rowScanner) (EvaluationListing, error) {
		var l EvaluationListing
		var at string
		err := r.Scan(&l.ID, &at, &l.Runs, &l.By)
		l.CreatedAt = parseTime(at)
		return l, err
	}, projectID, limit)
}
