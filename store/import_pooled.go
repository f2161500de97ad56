package store

import (
	"context"
	"database/sql"
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
		p, err := s.lockedProject(ctx, tx, projectID)
		if err != nil {
			return err
		}
		adder, err := newPairAdder(ctx, tx, projectID, s.now())
		if err != nil {
			return err
		}
		defer adder.close()
		source, err := tx.PrepareContext(ctx, `INSERT INTO pair_sources(pair_id, run, rank) VALUES (?, ?, ?)
			ON CONFLICT (pair_id, run) DO UPDATE SET rank = CASE WHEN excluded.rank < pair_sources.rank THEN excluded.rank ELSE pair_sources.rank END`)
		if err != nil {
			return err
		}
		defer source.Close()
		for _, pp := range pool {
			qid, did, err := adder.ids(pp.QueryID, pp.DocID)
			if err != nil {
				return err
			}
			if qid == 0 || did == 0 {
				missing = append(missing, pp.QueryID+" "+pp.DocID)
				continue
			}
			runs := make([]string, len(pp.Runs))
			for i, r := range pp.Runs {
				runs[i] = r.Run
			}
			pairID, isNew, err := adder.add(qid, did, "pool:"+strings.Join(runs, ","), pp.Priority)
			if err != nil {
				return err
			}
			if isNew {
				added++
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
