package store

import (
	"cmp"
	"context"
	"database/sql"
	"errors"
	"fmt"
	"math"
	"slices"
	"strconv"
	"time"
)

// PrelabelMode is how a source's grades choose what people judge first.
type PrelabelMode string

const (
	// PrelabelLeastSure puts first the pairs the source was least sure of (the confidences
	// of its qrels file), least sure first, in four bands.
	PrelabelLeastSure PrelabelMode = "least_sure"
	// PrelabelAudit puts first a random share of the pairs the source graded, to check its
	// grades on a sample that does not depend on them.
	PrelabelAudit PrelabelMode = "audit"
)

// Prelabels is a project's pre-label setting. The source's grades only order the work: no
// page or answer an assessor gets carries them, so they cannot anchor anyone's grade.
type Prelabels struct {
	Source    string       `json:"source"`
	Mode      PrelabelMode `json:"mode"`
	Share     float64      `json:"share"`  // of the source's open pairs put first; 1 = all of them
	Raised    int          `json:"raised"` // pairs put first when the setting was saved
	UpdatedAt time.Time    `json:"updated_at"`
}

const (
	prelabelsSQL = `SELECT u.username, s.mode, s.share, s.raised, s.updated_at FROM prelabel_settings s JOIN users u ON u.id = s.source_id
		WHERE s.project_id = ?`
	restorePrelabelRaises = `UPDATE pairs SET priority = (SELECT r.priority FROM prelabel_raises r WHERE r.pair_id = pairs.id)
		WHERE project_id = ?1 AND id IN (SELECT pair_id FROM prelabel_raises)`
	dropPrelabelRaises = `DELETE FROM prelabel_raises WHERE pair_id IN (SELECT id FROM pairs WHERE project_id = ?)`
	dropPrelabels      = `DELETE FROM prelabel_settings WHERE project_id = ?`
	topOpenPriority    = `SELECT COALESCE(MAX(priority), 0) FROM pairs WHERE project_id = ? AND gold_grade IS NULL`
	// The source's current grades on pairs still short of judgments, with its confidence
	// (-1 where its file gave none).
	prelabelCandidates = `SELECT p.id, p.priority, COALESCE(c.confidence, -1)
		FROM pairs p JOIN projects pr ON pr.id = p.project_id
		JOIN judgments j ON j.pair_id = p.id AND j.user_id = ?2 AND j.current = 1
		LEFT JOIN source_confidence c ON c.pair_id = p.id AND c.user_id = ?2
		WHERE p.project_id = ?1 AND p.gold_grade IS NULL AND p.judged < pr.judgments_per_pair`
	raisePrelabel  = `INSERT INTO prelabel_raises(pair_id, priority) VALUES (?, ?)`
	setPriority    = `UPDATE pairs SET priority = ? WHERE id = ?`
	savePrelabels  = `INSERT INTO prelabel_settings(project_id, source_id, mode, share, raised, updated_at) VALUES (?, ?, ?, ?, ?, ?)`
	prelabelSource = `SELECT id FROM users WHERE username = ? AND role = 'source'`
)

// ProjectPrelabels returns the project's pre-label setting; ok false when it has none.
func (s *Store) ProjectPrelabels(ctx context.Context, projectID int64) (p Prelabels, ok bool, err error) {
	var at string
	err = s.r.QueryRowContext(ctx, prelabelsSQL, projectID).Scan(&p.Source, &p.Mode, &p.Share, &p.Raised, &at)
	if errors.Is(err, sql.ErrNoRows) {
		return Prelabels{}, false, nil
	}
	p.UpdatedAt = parseTime(at)
	return p, err == nil, err
}

// SetPrelabels saves the project's pre-label setting and applies it: pairs it put first
// before go back to their own priority, and the pairs it now chooses are raised above every
// other open pair of the project. A nil setting only takes the old one away. Applied when
// saved: after the source's grades are imported again, save the setting again.
func (s *Store) SetPrelabels(ctx context.Context, projectID, by int64, p *Prelabels) (raised int, err error) {
	if p != nil {
		if p.Share == 0 {
			p.Share = 1
		}
		if p.Mode != PrelabelLeastSure && p.Mode != PrelabelAudit {
			return 0, errorf(CodeInvalid, fmt.Sprintf("unknown pre-label mode %q: choose least_sure or audit", p.Mode))
		}
		if !(p.Share > 0 && p.Share <= 1) {
			return 0, errorf(CodeInvalid, "the share of the source's pairs to put first must lie in (0, 1]")
		}
	}
	err = s.write(ctx, func(tx *sql.Tx) error {
		if _, err := tx.ExecContext(ctx, restorePrelabelRaises, projectID); err != nil {
			return err
		}
		if _, err := tx.ExecContext(ctx, dropPrelabelRaises, projectID); err != nil {
			return err
		}
		if _, err := tx.ExecContext(ctx, dropPrelabels, projectID); err != nil {
			return err
		}
		if p == nil {
			return s.audit(ctx, tx, by, projectID, "project.prelabels", "", "off")
		}
		var source int64
		err := tx.QueryRowContext(ctx, prelabelSource, p.Source).Scan(&source)
		if errors.Is(err, sql.ErrNoRows) {
			return errorf(CodeInvalid, "no source named "+strconv.Quote(p.Source)+": import its grades (qrels with --source) first")
		}
		if err != nil {
			return err
		}
		chosen, err := choosePrelabelled(ctx, tx, projectID, source, *p)
		if err != nil {
			return err
		}
		var top int
		if err := tx.QueryRowContext(ctx, topOpenPriority, projectID).Scan(&top); err != nil {
			return err
		}
		for _, c := range chosen {
			if _, err := tx.ExecContext(ctx, raisePrelabel, c.id, c.priority); err != nil {
				return err
			}
			if _, err := tx.ExecContext(ctx, setPriority, top+c.band, c.id); err != nil {
				return err
			}
		}
		raised = len(chosen)
		if _, err := tx.ExecContext(ctx, savePrelabels, projectID, source, string(p.Mode), p.Share, raised, s.now()); err != nil {
			return err
		}
		return s.audit(ctx, tx, by, projectID, "project.prelabels", p.Source,
			fmt.Sprintf("%s, share %g: %d pairs first", p.Mode, p.Share, raised))
	})
	if err != nil {
		return 0, err
	}
	return raised, nil
}

type prelabelled struct {
	id         int64
	priority   int
	confidence float64
	band       int // added to the project's top priority: 1 and up, higher judged sooner
}

// choosePrelabelled picks the pairs a setting puts first. Least sure: the share of the
// source's confidently graded open pairs with the lowest confidence, in four bands (the
// least sure quarter first). Audit: a share of all its open pairs, drawn by a hash of the
// pair id seeded by the project, so the sample does not depend on the source's grades and
// stays the same when the setting is saved again.
func choosePrelabelled(ctx context.Context, tx *sql.Tx, projectID, source int64, p Prelabels) ([]prelabelled, error) {
	all, err := queryAll(ctx, tx, prelabelCandidates, func(r rowScanner) (c prelabelled, err error) {
		return c, r.Scan(&c.id, &c.priority, &c.confidence)
	}, projectID, source)
	if err != nil {
		return nil, err
	}
	if p.Mode == PrelabelLeastSure {
		all = slices.DeleteFunc(all, func(c prelabelled) bool { return c.confidence < 0 })
		if len(all) == 0 {
			return nil, errorf(CodeInvalid, "source "+p.Source+" gave no confidences for the project's open pairs: "+
				"import its qrels with a fifth column (confidence in 0..1), or choose an audit sample")
		}
		slices.SortFunc(all, func(a, b prelabelled) int {
			return cmp.Or(cmp.Compare(a.confidence, b.confidence), cmp.Compare(a.id, b.id))
		})
	} else {
		key := func(id int64) uint64 { return mix(uint64(id) ^ prnSeed(projectID)) }
		slices.SortFunc(all, func(a, b prelabelled) int { return cmp.Compare(key(a.id), key(b.id)) })
	}
	n := int(math.Ceil(p.Share * float64(len(all))))
	chosen := all[:n]
	for i := range chosen {
		if p.Mode == PrelabelLeastSure {
			chosen[i].band = 4 - 4*i/n // 4 for the least sure quarter down to 1
		} else {
			chosen[i].band = 1
		}
	}
	return chosen, nil
}

// mix is SplitMix64's finaliser: a fixed, well-spread hash of a 64-bit key.
func mix(z uint64) uint64 {
	z += 0x9E3779B97F4A7C15
	z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9
	z = (z ^ (z >> 27)) * 0x94D049BB133111EB
	return z ^ (z >> 31)
}
