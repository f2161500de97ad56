package store

import (
	"context"
	"database/sql"
	"sync"
)

// progressCache keeps each project's judging totals keyed by project_versions.version, which
// triggers bump with every judgment written or withdrawn and every pair added, removed or
// made gold. Summing query_progress costs a row per query on every judging request; with the
// key a repeated read is one lookup, and the judging path advances the entry itself (advance)
// so under load the sum is almost never taken.
type progressCache struct {
	mu sync.Mutex
	m  map[int64]progressEntry
}

type progressEntry struct {
	version int64
	judged  int // current judgments of pairs that are not gold
	pairs   int // pairs that are not gold
}

func (c *progressCache) get(projectID, version int64) (progressEntry, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	e, ok := c.m[projectID]
	return e, ok && e.version == version
}

func (c *progressCache) put(projectID int64, e progressEntry) {
	c.mu.Lock()
	defer c.mu.Unlock()
	if old, ok := c.m[projectID]; ok && old.version > e.version {
		return
	}
	if c.m == nil {
		c.m = map[int64]progressEntry{}
	}
	c.m[projectID] = e
}

// advance moves an entry across a committed transaction that took the version from before to
// after and added delta judgments. It is called on the writer, in commit order, so an entry
// at before is exactly the state the transaction started from; any other entry is left for
// JudgingProgress to recount.
func (c *progressCache) advance(projectID, before, after int64, delta int) (progressEntry, bool) {
	c.mu.Lock()
	defer c.mu.Unlock()
	e, ok := c.m[projectID]
	if !ok || (e.version != before && e.version != after) {
		return e, false
	}
	if e.version == before && before != after {
		e.version, e.judged = after, e.judged+delta
		c.m[projectID] = e
	}
	return e, true
}

const versionSQL = `SELECT COALESCE((SELECT version FROM project_versions WHERE project_id = ?), 0)`

// projectVersion reads the project's version inside a write transaction.
func (s *Store) projectVersion(ctx context.Context, tx *sql.Tx, projectID int64) (int64, error) {
	var v int64
	err := s.txRow(ctx, tx, versionSQL, projectID).Scan(&v)
	return v, err
}

// JudgingProgress returns the project's current judgments (gold pairs excluded) and how many
// it needs in all. The totals are cached by the project's version (progressCache).
func (s *Store) JudgingProgress(ctx context.Context, projectID int64) (judged, needed int, err error) {
	var perPair int
	var version int64
	err = s.readRow(ctx, `SELECT judgments_per_pair, COALESCE((SELECT version FROM project_versions WHERE project_id = ?1), 0)
		FROM projects WHERE id = ?1`, projectID).Scan(&perPair, &version)
	if err != nil {
		return 0, 0, err
	}
	if e, ok := s.progress.get(projectID, version); ok {
		return e.judged, e.pairs * perPair, nil
	}
	// One statement is one snapshot: the version and the sums agree.
	e := progressEntry{}
	err = s.readRow(ctx, `SELECT COALESCE((SELECT version FROM project_versions WHERE project_id = ?1), 0),
			pr.judgments_per_pair, COALESCE(SUM(q.judged), 0), COALESCE(SUM(q.pairs), 0)
		FROM projects pr LEFT JOIN query_progress q ON q.project_id = pr.id WHERE pr.id = ?1
		GROUP BY pr.judgments_per_pair`, projectID).
		Scan(&e.version, &perPair, &e.judged, &e.pairs)
	if err != nil {
		return 0, 0, err
	}
	s.progress.put(projectID, e)
	return e.judged, e.pairs * perPair, nil
}
