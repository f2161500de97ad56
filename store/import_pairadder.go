package store

import (
	"context"
	"database/sql"
	"errors"
)

// pairAdder adds pairs named by external ids inside one write transaction: pooling and
// judging designs both send pairs to judging this way. A new pair gets the given origin and
// priority; a pair already there keeps its judgments and takes the higher priority.
type pairAdder struct {
	ctx        context.Context
	projectID  int64
	at         string
	q, d       *sql.Stmt
	ins, raise *sql.Stmt
	qids, dids map[string]int64
}

func newPairAdder(ctx context.Context, tx *sql.Tx, projectID int64, at string) (*pairAdder, error) {
	a := &pairAdder{ctx: ctx, projectID: projectID, at: at, qids: map[string]int64{}, dids: map[string]int64{}}
	var err error
	if a.q, err = tx.PrepareContext(ctx, `SELECT id FROM queries WHERE project_id = ? AND external_id = ?`); err == nil {
		if a.d, err = tx.PrepareContext(ctx, `SELECT id FROM documents WHERE project_id = ? AND external_id = ?`); err == nil {
			if a.ins, err = tx.PrepareContext(ctx, `INSERT INTO pairs(project_id, query_id, document_id, origin, priority, created_at)
				VALUES (?, ?, ?, ?, ?, ?) ON CONFLICT (project_id, query_id, document_id) DO NOTHING RETURNING id`); err == nil {
				a.raise, err = tx.PrepareContext(ctx, `UPDATE pairs SET priority = CASE WHEN priority >= ?1 THEN priority ELSE ?1 END
					WHERE project_id = ?2 AND query_id = ?3 AND document_id = ?4 RETURNING id`)
			}
		}
	}
	if err != nil {
		a.close()
		return nil, err
	}
	return a, nil
}

func (a *pairAdder) close() {
	for _, st := range []*sql.Stmt{a.q, a.d, a.ins, a.raise} {
		if st != nil {
			st.Close()
		}
	}
}

// ids returns the query's and the document's ids, 0 for one the project lacks.
func (a *pairAdder) ids(query, doc string) (qid, did int64, err error) {
	if qid, err = a.lookup(a.q, a.qids, query); err != nil || qid == 0 {
		return qid, 0, err
	}
	did, err = a.lookup(a.d, a.dids, doc)
	return qid, did, err
}

func (a *pairAdder) lookup(stmt *sql.Stmt, cache map[string]int64, ext string) (int64, error) {
	if id, ok := cache[ext]; ok {
		return id, nil
	}
	var id int64
	if err := stmt.QueryRowContext(a.ctx, a.projectID, ext).Scan(&id); err != nil && !errors.Is(err, sql.ErrNoRows) {
		return 0, err
	}
	cache[ext] = id
	return id, nil
}

// add inserts the pair, or raises the priority of the one there, and says whether it is new.
func (a *pairAdder) add(qid, did int64, origin string, priority int) (pairID int64, added bool, err error) {
	err = a.ins.QueryRowContext(a.ctx, a.projectID, qid, did, origin, priority, a.at).Scan(&pairID)
	if errors.Is(err, sql.ErrNoRows) {
		err = a.raise.QueryRowContext(a.ctx, priority, a.projectID, qid, did).Scan(&pairID)
		return pairID, false, err
	}
	return pairID, err == nil, err
}
