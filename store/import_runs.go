package store

import (
	"database/sql"
	"errors"
	"fmt"

	"github.com/pertinent/pertinent/ingest"
)

const (
	// Pooling sets a pair's priority and nothing else: a gold grade stays as it was.
	upsertPoolPair = `INSERT INTO pairs(project_id, query_id, document_id, origin, priority, created_at)
		VALUES (?, ?, ?, ?, ?, ?)
		ON CONFLICT (project_id, query_id, document_id) DO UPDATE SET priority = excluded.priority
		WHERE pairs.priority IS DISTINCT FROM excluded.priority
		RETURNING id`
	findPair       = `SELECT id, gold_grade FROM pairs WHERE project_id = ? AND query_id = ? AND document_id = ?`
	findPairSource = `SELECT rank FROM pair_sources WHERE pair_id = ? AND run = ?`
	upsertSource   = `INSERT INTO pair_sources(pair_id, run, rank) VALUES (?, ?, ?)
		ON CONFLICT (pair_id, run) DO UPDATE SET rank = excluded.rank`
)

// runEntryAt is where a run entry was read.
type runEntryAt struct {
	file string
	line int
}

// runs pools every entry of every file (runs are told apart by their run tag) to the
// spec's depth. A pooled pair whose query or document the project lacks is a problem at
// the line that named it; entries below the depth are not looked at.
func (im *importer) runs(files []ImportFile) error {
	im.counter("pairs")
	im.counter("pair sources")
	pool := ingest.NewPooler(im.spec.Depth)
	// Where entries naming an unknown query or document were read, so a pooled one can be
	// reported with its line; entries of known ids cost nothing here.
	unknown := map[[3]string]runEntryAt{}
	tags := map[string]bool{}
	for _, f := range files {
		err := ingest.ReadRun(f.R, im.options(f.Name), func(e ingest.RunEntry) error {
			qid, err := im.find(im.queryIDs, findQuery, e.QueryID)
			if err != nil {
				return err
			}
			did, err := im.find(im.docIDs, findDocument, e.DocID)
			if err != nil {
				return err
			}
			if qid == 0 || did == 0 {
				unknown[[3]string{e.Tag, e.QueryID, e.DocID}] = runEntryAt{f.Name, e.Line}
			}
			tags[e.Tag] = true
			pool.Add(e.Tag, e)
			return nil
		})
		if err := im.ps.endFile(err); err != nil {
			return err
		}
	}
	if err := im.ps.err(); err != nil {
		return err
	}
	pooled := pool.Pairs()
	for _, pp := range pooled {
		qid, did := im.queryIDs[pp.QueryID], im.docIDs[pp.DocID]
		if qid == 0 || did == 0 {
			at := unknown[[3]string{pp.Runs[0].Run, pp.QueryID, pp.DocID}]
			if qid == 0 {
				im.ps.add(at.file, at.line, column(1, "query id"), "no query "+quoteID(pp.QueryID)+" in this project: import queries first")
			}
			if did == 0 {
				im.ps.add(at.file, at.line, column(3, "doc id"), "no document "+quoteID(pp.DocID)+" in this project: import documents first")
			}
			continue
		}
		if im.ps.failed() {
			continue
		}
		if err := im.poolPair(qid, did, pp); err != nil {
			return err
		}
	}
	// Problems found after reading belong to several files; they are listed in pool order.
	if err := im.ps.endFile(nil); err != nil {
		return err
	}
	if err := im.ps.err(); err != nil {
		return err
	}
	im.notes = append(im.notes, fmt.Sprintf("pooled %d pairs from %d runs at depth %d", len(pooled), len(tags), im.spec.Depth))
	return nil
}

func (im *importer) poolPair(qid, did int64, pp ingest.PoolPair) error {
	st, err := im.stmt(upsertPoolPair)
	if err != nil {
		return err
	}
	im.pairsGiven++
	var pairID int64
	err = st.QueryRowContext(im.ctx, im.project, qid, did, fmt.Sprintf("pool:depth %d", im.spec.Depth), pp.Priority, im.at).Scan(&pairID)
	if errors.Is(err, sql.ErrNoRows) {
		if pairID, _, err = im.findPair(qid, did); err != nil {
			return err
		}
	} else if err != nil {
		return err
	} else {
		im.pairChanges++
	}
	c := im.counter("pair sources")
	for _, rr := range pp.Runs {
		fs, err := im.stmt(findPairSource)
		if err != nil {
			return err
		}
		var old int
		err = fs.QueryRowContext(im.ctx, pairID, rr.Run).Scan(&old)
		if err != nil && !errors.Is(err, sql.ErrNoRows) {
			return err
		}
		if !c.tally(err == nil, old == rr.Rank) {
			continue
		}
		us, err := im.stmt(upsertSource)
		if err != nil {
			return err
		}
		if _, err := us.ExecContext(im.ctx, pairID, rr.Run, rr.Rank); err != nil {
			return err
		}
	}
	return nil
}

// findPair returns a pair's id and gold grade; id 0 when there is no such pair.
func (im *importer) findPair(qid, did int64) (int64, sql.NullInt64, error) {
	var id int64
	var gold sql.NullInt64
	st, err := im.stmt(findPair)
	if err != nil {
		return 0, gold, err
	}
	err = st.QueryRowContext(im.ctx, im.project, qid, did).Scan(&id, &gold)
	if errors.Is(err, sql.ErrNoRows) {
		return 0, gold, nil
	}
	return id, gold, err
}

func column(n int, name string) string { return fmt.Sprintf("column %d (%s)", n, name) }
