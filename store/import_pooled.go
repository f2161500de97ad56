package store

import (
	"context"
	"database/sql"
	"errors"
	"strconv"
	"strings"

	"github.com/pertinent/pertinent/ingest"
)

// AddPooledPairs turns pooled run entries into pairs to judge: a pair is added for every
// entry whose query and document exist in the project, with the pool's priority (a run's top
// document first) and origin "pool:<run names>", and each contributing run is recorded in
// pair_sources with its rank. A pair that exists already keeps its judgments; its priority is
// raised to the pool's if that is higher. Entries whose query or document the project lacks
// come back in missing as "<query-id> <doc-id>".
func (s *Store) AddPooledPairs(ctx context.Context, projectID int64, pool []ingest.PoolPair, by int64) (added int, missing []string, err error) {
	err = s.write(ctx, func(tx *sql.Tx) error {
		added, missing = 0, nil
		p, err := lockedProject(ctx, tx, projectID)
		if err != nil {
			return err
		}
		qStmt, err := tx.PrepareContext(ctx, `SELECT id FROM queries WHERE project_id = ? AND external_id = ?`)
		if err != nil {
			return err
		}
		defer qStmt.Close()
		dStmt, err := tx.PrepareContext(ctx, `SELECT id FROM documents WHERE project_id = ? AND external_id = ?`)
		if err != nil {
			return err
		}
		defer dStmt.Close()
		insPair, err := tx.PrepareContext(ctx, `INSERT INTO pairs(project_id, query_id, document_id, origin, priority, created_at)
			VALUES (?, ?, ?, ?, ?, ?) ON CONFLICT (project_id, query_id, document_id) DO NOTHING RETURNING id`)
		if err != nil {
			return err
		}
		defer insPair.Close()
		oldPair, err := tx.PrepareContext(ctx, `UPDATE pairs SET priority = MAX(priority, ?)
			WHERE project_id = ? AND query_id = ? AND document_id = ? RETURNING id`)
		if err != nil {
			return err
		}
		defer oldPair.Close()
		source, err := tx.PrepareContext(ctx, `INSERT INTO pair_sources(pair_id, run, rank) VALUES (?, ?, ?)
			ON CONFLICT (pair_id, run) DO UPDATE SET rank = MIN(rank, excluded.rank)`)
		if err != nil {
			return err
		}
		defer source.Close()
		at := s.now()
		qids := map[string]int64{}
		for _, pp := range pool {
			qid, ok := qids[pp.QueryID]
			if !ok {
				if err := qStmt.QueryRowContext(ctx, projectID, pp.QueryID).Scan(&qid); err != nil && !errors.Is(err, sql.ErrNoRows) {
					return err
				}
				qids[pp.QueryID] = qid
			}
			var did int64
			if qid != 0 {
				if err := dStmt.QueryRowContext(ctx, projectID, pp.DocID).Scan(&did); err != nil && !errors.Is(err, sql.ErrNoRows) {
					return err
				}
			}
			if qid == 0 || did == 0 {
				missing = append(missing, pp.QueryID+" "+pp.DocID)
				continue
			}
			runs := make([]string, len(pp.Runs))
			for i, r := range pp.Runs {
				runs[i] = r.Run
			}
			var pairID int64
			err := insPair.QueryRowContext(ctx, projectID, qid, did, "pool:"+strings.Join(runs, ","), pp.Priority, at).Scan(&pairID)
			switch {
			case err == nil:
				added++
			case errors.Is(err, sql.ErrNoRows):
				if err := oldPair.QueryRowContext(ctx, pp.Priority, projectID, qid, did).Scan(&pairID); err != nil {
					return err
				}
			default:
				return err
			}
			for _, r := range pp.Runs {
				if _, err := source.ExecContext(ctx, pairID, r.Run, r.Rank); err != nil {
					return err
				}
			}
		}
		return s.audit(ctx, tx, by, p.ID, "pairs.pool", p.Name,
			strconv.Itoa(added)+" added, "+strconv.Itoa(len(pool)-added-len(missing))+" already there, "+strconv.Itoa(len(missing))+" not in the project")
	})
	return added, missing, err
}
