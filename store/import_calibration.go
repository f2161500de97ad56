package store

import (
	"database/sql"
	"errors"
	"fmt"
	"slices"
	"strings"

	"github.com/pertinent/pertinent/ingest"
)

const (
	upsertCalibrationPair = `INSERT INTO calibration_pairs(project_id, query_id, document_id, grade, reason, position, created_at)
		VALUES (?1, ?2, ?3, ?4, ?5, 0, ?6)
		ON CONFLICT (project_id, query_id, document_id) DO UPDATE SET grade = excluded.grade, reason = excluded.reason
		WHERE calibration_pairs.grade != excluded.grade OR calibration_pairs.reason != excluded.reason
		RETURNING id`
	findCalibrationPair = `SELECT id FROM calibration_pairs WHERE project_id = ? AND query_id = ? AND document_id = ?`
	pairToJudgeExists   = `SELECT EXISTS (SELECT 1 FROM pairs WHERE project_id = ? AND query_id = ? AND document_id = ?)`
	calibrationLevels   = `SELECT id, grade FROM calibration_pairs WHERE project_id = ? ORDER BY grade, id`
	setCalibrationOrder = `UPDATE calibration_pairs SET position = ? WHERE id = ?`
)

// calibration brings in pairs with known grades and reasons. A calibration pair must not be
// one of the project's pairs to judge: an assessor is told its grade, and would otherwise
// judge it later knowing the answer. Given again, a pair's grade and reason are replaced;
// answers already given stay.
func (im *importer) calibration(f ImportFile, format ingest.Format) error {
	c := im.counter("calibration pairs")
	return pipe(im.done, func(emit func(ingest.CalibrationPair) error) error {
		return ingest.ReadCalibration(f.R, format, im.options(f.Name), emit)
	}, func(p ingest.CalibrationPair) error {
		qid, did, err := im.lookup(f.Name, p.Line, tableIDs, p.QueryID, p.DocID)
		if err != nil || qid == 0 || did == 0 {
			return err
		}
		var judged bool
		if err := im.tx.QueryRowContext(im.ctx, pairToJudgeExists, im.project, qid, did).Scan(&judged); err != nil {
			return err
		}
		if judged {
			im.ps.add(f.Name, p.Line, "", fmt.Sprintf("(%s, %s) is a pair to judge in this project; a calibration pair shows its grade, so it must be a pair nobody judges",
				quoteID(p.QueryID), quoteID(p.DocID)))
			return nil
		}
		if im.ps.failed() {
			return nil
		}
		var existing int64
		err = im.tx.QueryRowContext(im.ctx, findCalibrationPair, im.project, qid, did).Scan(&existing)
		if err != nil && !errors.Is(err, sql.ErrNoRows) {
			return err
		}
		had := err == nil
		st, err := im.stmt(upsertCalibrationPair)
		if err != nil {
			return err
		}
		var id int64
		err = st.QueryRowContext(im.ctx, im.project, qid, did, p.Grade, p.Reason, im.at).Scan(&id)
		if err != nil && !errors.Is(err, sql.ErrNoRows) {
			return err
		}
		c.tally(had, err != nil) // no row back: the pair was already as given
		return nil
	})
}

// orderCalibration checks that the round covers every grade of the scale and sets its order:
// the levels taken in turn, from the middle of the scale outwards (on 0..4: 2, 1, 3, 0, 4, 2,
// ...), so that no stretch of the round shows one level only. Early exposure to only
// non-relevant documents shifts an assessor's later grades (Scholer, Kelly, Wu, Lee and
// Webber, SIGIR 2013).
func (im *importer) orderCalibration(file string) error {
	type item struct{ id, grade int64 }
	items, err := queryAll(im.ctx, im.tx, calibrationLevels, func(r rowScanner) (it item, err error) {
		return it, r.Scan(&it.id, &it.grade)
	}, im.project)
	if err != nil {
		return err
	}
	byGrade := make([][]int64, im.scale)
	for _, it := range items {
		if it.grade >= int64(im.scale) {
			return errorf(CodeInvalid, fmt.Sprintf("a calibration pair has grade %d, outside the scale 0..%d", it.grade, im.scale-1))
		}
		byGrade[it.grade] = append(byGrade[it.grade], it.id)
	}
	var missing []string
	for g, ids := range byGrade {
		if len(ids) == 0 {
			missing = append(missing, fmt.Sprint(g))
		}
	}
	if len(missing) > 0 {
		im.ps.add(file, 0, "", "a calibration round covers every grade of the scale; no pair has grade "+strings.Join(missing, ", "))
		if err := im.ps.endFile(nil); err != nil {
			return err
		}
		return im.ps.err()
	}
	pos := 0
	for round := 0; ; round++ {
		placed := false
		for _, g := range CalibrationLevelOrder(im.scale) {
			if round < len(byGrade[g]) {
				pos++
				if _, err := im.tx.ExecContext(im.ctx, setCalibrationOrder, pos, byGrade[g][round]); err != nil {
					return err
				}
				placed = true
			}
		}
		if !placed {
			return nil
		}
	}
}

// CalibrationLevelOrder is the order a calibration round takes the levels of a scale of n
// grades in: the middle first, then alternately below and above it.
func CalibrationLevelOrder(n int) []int {
	mid := (n - 1) / 2
	out := []int{mid}
	for d := 1; len(out) < n; d++ {
		if mid-d >= 0 {
			out = append(out, mid-d)
		}
		if mid+d < n {
			out = append(out, mid+d)
		}
	}
	return slices.Clip(out)
}
