package store

import (
	"context"
	"database/sql"
	"fmt"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/export"
	"github.com/pertinent/pertinent/ingest"
)

// ExportPair is one pair as a label policy sees it, streamed by ExportPairs.
type ExportPair struct {
	PairID  int64
	QueryID string // external ids, as the project's files name them
	DocID   string
	// Labels holds what the policy decides on: the current adjudicated grade, the current
	// grades, the cannot-judge count, flagged (a current "disturbing" answer), gold, and the
	// Dawid-Skene grade when one was asked for.
	Labels    export.PairLabels
	Judgments []export.JudgmentDetail // current judgments, by assessor username
	blob      sql.RawBytes            // valid until the next row: fn decodes it or leaves it
}

// HasFeatures reports whether the pair has stored features (only read when asked for).
func (p *ExportPair) HasFeatures() bool { return len(p.blob) > 0 }

// Features decodes the pair's stored features into buf (reused when large enough), so a
// caller that skips a row never pays for decoding it.
func (p *ExportPair) Features(buf []export.Feature) ([]export.Feature, error) {
	buf = buf[:0]
	if len(p.blob) == 0 {
		return buf, nil
	}
	fs, err := ingest.DecodeFeatures(p.blob)
	if err != nil {
		return buf, fmt.Errorf("store: pair %d: %w", p.PairID, err)
	}
	for _, f := range fs {
		buf = append(buf, export.Feature{Index: int(f.Index), Value: f.Value})
	}
	return buf, nil
}

// ExportScan chooses what ExportPairs reads besides the judgments.
type ExportScan struct {
	Features   bool          // read pair_features (left unread otherwise)
	DawidSkene map[int64]int // Dawid-Skene grade per pair id, from DawidSkeneGrades
	FillFrom   string        // the source whose grades fill Labels.Source (a LabelPolicy's FillFrom)
}

// Current judgments of one pair by people come packed in one text (external sources are not
// among them; the grade of the source a policy fills from comes in a column of its own): records split by char(30), fields
// (username, grade, cannot-judge reason) by char(31), so one statement streams every pair
// without a sort over the judgments table and without decoding JSON per pair.
// PostgreSQL spells the packing with string_agg and chr, and a grade becomes text explicitly.
const (
	sqliteExportPairsSQL = `SELECT p.id, q.external_id, d.external_id, p.gold_grade IS NOT NULL,
		(SELECT a.grade FROM adjudications a WHERE a.pair_id = p.id AND a.current = 1),
		(SELECT group_concat(u.username || char(31) || COALESCE(j.grade, '') || char(31) || COALESCE(j.cannot_judge, ''), char(30) ORDER BY u.username)
			FROM judgments j JOIN users u ON u.id = j.user_id
			WHERE j.pair_id = p.id AND j.current = 1 AND j.withdrawn_at IS NULL AND u.role != 'source'),
		CASE WHEN ?2 = 1 THEN (SELECT f.data FROM pair_features f WHERE f.pair_id = p.id) END,
		CASE WHEN ?3 != '' THEN (SELECT j.grade FROM judgments j JOIN users u ON u.id = j.user_id
			WHERE j.pair_id = p.id AND j.current = 1 AND u.role = 'source' AND u.username = ?3) END
	FROM queries q JOIN pairs p ON p.query_id = q.id JOIN documents d ON d.id = p.document_id
	WHERE q.project_id = ?1
	ORDER BY q.external_id, d.external_id`
	postgresExportPairsSQL = `SELECT p.id, q.external_id, d.external_id, p.gold_grade IS NOT NULL,
		(SELECT a.grade FROM adjudications a WHERE a.pair_id = p.id AND a.current = 1),
		(SELECT string_agg(u.username || chr(31) || COALESCE(j.grade::text, '') || chr(31) || COALESCE(j.cannot_judge, ''), chr(30) ORDER BY u.username)
			FROM judgments j JOIN users u ON u.id = j.user_id
			WHERE j.pair_id = p.id AND j.current = 1 AND j.withdrawn_at IS NULL AND u.role != 'source'),
		CASE WHEN ?2 = 1 THEN (SELECT f.data FROM pair_features f WHERE f.pair_id = p.id) END,
		CASE WHEN ?3 != '' THEN (SELECT j.grade FROM judgments j JOIN users u ON u.id = j.user_id
			WHERE j.pair_id = p.id AND j.current = 1 AND u.role = 'source' AND u.username = ?3) END
	FROM queries q JOIN pairs p ON p.query_id = q.id JOIN documents d ON d.id = p.document_id
	WHERE q.project_id = ?1
	ORDER BY q.external_id, d.external_id`
)

// ExportPairs streams a project's pairs in query order (query external id, then document
// external id) with everything a label policy needs, reading the rows with one statement and
// handing them to fn one at a time. The *ExportPair and its slices are reused: fn must copy
// what it keeps.
func (s *Store) ExportPairs(ctx context.Context, projectID int64, scan ExportScan, fn func(*ExportPair) error) error {
	var p ExportPair
	var ds int
	return eachRow(ctx, s.r, s.dialect(sqliteExportPairsSQL, postgresExportPairsSQL), func(r rowScanner) error {
		var adj, src sql.NullInt64
		var packed sql.NullString
		if err := r.Scan(&p.PairID, &p.QueryID, &p.DocID, &p.Labels.Gold, &adj, &packed, &p.blob, &src); err != nil {
			return err
		}
		l := &p.Labels
		l.Adjudicated, l.DawidSkene, l.Source = gradeOf(adj), nil, gradeOf(src)
		if g, ok := scan.DawidSkene[p.PairID]; ok {
			ds = g
			l.DawidSkene = &ds
		}
		if err := unpackJudgments(&p, packed.String); err != nil {
			return err
		}
		return fn(&p)
	}, projectID, scan.Features, scan.FillFrom)
}

func unpackJudgments(p *ExportPair, packed string) error {
	l := &p.Labels
	l.Grades, l.CannotJudge, l.Flagged = l.Grades[:0], 0, false
	p.Judgments = p.Judgments[:0]
	for rec := range strings.SplitSeq(packed, "\x1e") {
		if rec == "" {
			continue
		}
		user, rest, _ := strings.Cut(rec, "\x1f")
		grade, reason, _ := strings.Cut(rest, "\x1f")
		j := export.JudgmentDetail{Assessor: user}
		if grade == "" {
			j.CannotJudge, j.Reason = true, reason
			l.CannotJudge++
			if reason == "disturbing" {
				l.Flagged = true
			}
		} else {
			g, err := strconv.Atoi(grade)
			if err != nil {
				return fmt.Errorf("store: pair %d: grade %q: %w", p.PairID, grade, err)
			}
			j.Grade = g
			l.Grades = append(l.Grades, g)
		}
		p.Judgments = append(p.Judgments, j)
	}
	return nil
}

// ExportQueryIDs lists the external ids of a project's queries that have pairs, sorted: the
// set a split divides. It does not depend on a label policy, so a query stays in the same
// part of a split whatever filters an export uses.
func (s *Store) ExportQueryIDs(ctx context.Context, projectID int64) ([]string, error) {
	return queryAll(ctx, s.r, `SELECT q.external_id FROM queries q
		WHERE q.project_id = ? AND EXISTS (SELECT 1 FROM pairs p WHERE p.query_id = q.id)
		ORDER BY q.external_id`, scanValue[string], projectID)
}

// DawidSkeneGrades fits a Dawid-Skene model (agreement.DawidSkene) to the project's current
// grades and returns the most likely grade per pair id. Pairs without grades are absent.
func (s *Store) DawidSkeneGrades(ctx context.Context, projectID int64) (map[int64]int, error) {
	d, _, err := s.AgreementData(ctx, projectID)
	if err != nil {
		return nil, err
	}
	out := map[int64]int{}
	if d.Judgments() == 0 {
		return out, nil
	}
	res := agreement.DawidSkene(d, agreement.DSOptions{})
	for i, item := range res.Items {
		id, err := strconv.ParseInt(item, 10, 64)
		if err != nil {
			return nil, fmt.Errorf("store: Dawid-Skene item %q is not a pair id", item)
		}
		out[id] = res.Grade[i]
	}
	return out, nil
}
