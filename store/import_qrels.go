package store

import (
	"database/sql"
	"errors"

	"github.com/pertinent/pertinent/ingest"
)

const (
	findSource   = `SELECT id, role FROM users WHERE username = ?`
	insertSource = `INSERT INTO users(username, display_name, role, created_at) VALUES (?, ?, 'source', ?) RETURNING id`
	// Pairs a qrels file names but the project lacks are added, to be judged like any other.
	insertQrelPair    = `INSERT INTO pairs(project_id, query_id, document_id, origin, created_at) VALUES (?, ?, ?, ?, ?) RETURNING id`
	findSourceGrade   = `SELECT id, grade FROM judgments WHERE pair_id = ? AND user_id = ? AND current = 1`
	retireJudgment    = `UPDATE judgments SET current = 0 WHERE id = ?`
	insertSourceGrade = `INSERT INTO judgments(pair_id, user_id, grade, supersedes, created_at) VALUES (?, ?, ?, ?, ?)`
	setGold           = `UPDATE pairs SET gold_grade = ? WHERE id = ?`
	// What the latest file said of the source's confidence stands: given, it is recorded;
	// left out, an earlier one is dropped.
	setConfidence = `INSERT INTO source_confidence(pair_id, user_id, confidence) VALUES (?1, ?2, ?3)
		ON CONFLICT (pair_id, user_id) DO UPDATE SET confidence = excluded.confidence`
	dropConfidence = `DELETE FROM source_confidence WHERE pair_id = ? AND user_id = ?`
)

// sourceUser returns the id of the named external source, creating it on first use. A
// source never signs in (no password); a person's account cannot serve as one.
func (im *importer) sourceUser() (int64, error) {
	var id int64
	var role string
	err := im.tx.QueryRowContext(im.ctx, findSource, im.spec.Source).Scan(&id, &role)
	if errors.Is(err, sql.ErrNoRows) {
		err = im.tx.QueryRowContext(im.ctx, insertSource, im.spec.Source, im.spec.Source, im.at).Scan(&id)
		if err == nil {
			im.notes = append(im.notes, "new judgment source "+im.spec.Source)
			err = im.sourceDetails(id)
		}
		return id, err
	}
	if err != nil {
		return 0, err
	}
	if Role(role) != RoleSource {
		return 0, errorf(CodeConflict, "the name "+im.spec.Source+" belongs to an account; choose another source name")
	}
	return id, im.sourceDetails(id)
}

// qrels records prior judgments as the source's current judgments. A changed grade
// supersedes the old judgment, which stays in the history. Source judgments are not
// people's: they do not count towards a pair's judgments needed.
func (im *importer) qrels(f ImportFile) error {
	source, err := im.sourceUser()
	if err != nil {
		return err
	}
	im.counter("pairs")
	jc := im.counter("judgments")
	var gc *ImportCount
	if im.spec.Gold {
		gc = im.counter("gold grades")
	}
	origin := "qrels:" + im.spec.Source
	return pipe(im.done, func(emit func(ingest.Qrel) error) error {
		return ingest.ReadQrels(f.R, im.options(f.Name), emit)
	}, func(q ingest.Qrel) error {
		qid, did, err := im.lookup(f.Name, q.Line, runIDs, q.QueryID, q.DocID)
		if err != nil || qid == 0 || did == 0 || im.ps.failed() {
			return err
		}
		pairID, gold, err := im.findPair(qid, did)
		if err != nil {
			return err
		}
		im.pairsGiven++
		if pairID == 0 {
			st, err := im.stmt(insertQrelPair)
			if err != nil {
				return err
			}
			if err := st.QueryRowContext(im.ctx, im.project, qid, did, origin, im.at).Scan(&pairID); err != nil {
				return err
			}
			im.pairChanges++
		}
		if err := im.sourceJudgment(jc, pairID, source, q.Grade); err != nil {
			return err
		}
		if err := im.sourceConfidence(pairID, source, q); err != nil {
			return err
		}
		if gc == nil || !gc.tally(gold.Valid, int(gold.Int64) == q.Grade) {
			return nil
		}
		st, err := im.stmt(setGold)
		if err != nil {
			return err
		}
		_, err = st.ExecContext(im.ctx, q.Grade, pairID)
		return err
	})
}

func (im *importer) sourceJudgment(c *ImportCount, pairID, source int64, grade int) error {
	fs, err := im.stmt(findSourceGrade)
	if err != nil {
		return err
	}
	var prev int64
	var old sql.NullInt64
	err = fs.QueryRowContext(im.ctx, pairID, source).Scan(&prev, &old)
	if err != nil && !errors.Is(err, sql.ErrNoRows) {
		return err
	}
	had := err == nil
	if !c.tally(had, old.Valid && int(old.Int64) == grade) {
		return nil
	}
	if had {
		rs, err := im.stmt(retireJudgment)
		if err != nil {
			return err
		}
		if _, err := rs.ExecContext(im.ctx, prev); err != nil {
			return err
		}
	}
	is, err := im.stmt(insertSourceGrade)
	if err != nil {
		return err
	}
	_, err = is.ExecContext(im.ctx, pairID, source, grade, nullID(prev), im.at)
	return err
}

func (im *importer) sourceConfidence(pairID, source int64, q ingest.Qrel) error {
	if !q.HasConfidence {
		st, err := im.stmt(dropConfidence)
		if err != nil {
			return err
		}
		_, err = st.ExecContext(im.ctx, pairID, source)
		return err
	}
	st, err := im.stmt(setConfidence)
	if err != nil {
		return err
	}
	_, err = st.ExecContext(im.ctx, pairID, source, q.Confidence)
	return err
}
