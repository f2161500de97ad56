package store

import (
	"context"
	"database/sql"
	"sync"
)

// stmtCache keeps prepared statements by their text. The judging path runs a handful of
// small statements per request, and SQLite spends more time parsing them than running them;
// on the single writer connection that parsing would also be time every other writer waits.
type stmtCache struct {
	mu     sync.Mutex
	m      map[string]*sql.Stmt
	wanted map[string]bool
}

// lookup returns a prepared statement, or notes the text to be prepared later. The writer
// has one connection, held by the transaction asking, so it cannot prepare there and then.
func (c *stmtCache) lookup(q string) *sql.Stmt {
	c.mu.Lock()
	defer c.mu.Unlock()
	if st, ok := c.m[q]; ok {
		return st
	}
	if c.wanted == nil {
		c.wanted = map[string]bool{}
	}
	c.wanted[q] = true
	return nil
}

// prepareWanted prepares the statements lookup missed; write calls it once its transaction
// has released the connection.
func (c *stmtCache) prepareWanted(ctx context.Context, db *sql.DB) {
	c.mu.Lock()
	var qs []string
	for q := range c.wanted {
		qs = append(qs, q)
	}
	c.wanted = nil
	c.mu.Unlock()
	for _, q := range qs {
		if _, err := c.get(ctx, db, q); err != nil {
			return // the statement runs unprepared, as before
		}
	}
}

func (c *stmtCache) get(ctx context.Context, db *sql.DB, q string) (*sql.Stmt, error) {
	c.mu.Lock()
	st, ok := c.m[q]
	c.mu.Unlock()
	if ok {
		return st, nil
	}
	// Prepared without the lock held: preparing waits for a connection, and the writer's one
	// connection may belong to a transaction that needs the lock to look a statement up.
	st, err := db.PrepareContext(ctx, q)
	if err != nil {
		return nil, err
	}
	c.mu.Lock()
	defer c.mu.Unlock()
	if prev, ok := c.m[q]; ok {
		st.Close()
		return prev, nil
	}
	if c.m == nil {
		c.m = map[string]*sql.Stmt{}
	}
	c.m[q] = st
	return st, nil
}

func (c *stmtCache) close() {
	c.mu.Lock()
	defer c.mu.Unlock()
	for _, st := range c.m {
		st.Close()
	}
	c.m = nil
}

// txRow runs a cached statement inside a write transaction; database/sql reuses the
// statement already prepared on the writer connection.
func (s *Store) txRow(ctx context.Context, tx *sql.Tx, q string, args ...any) *sql.Row {
	s.txStatements.Add(1)
	if st := s.wStmts.lookup(q); st != nil {
		return tx.StmtContext(ctx, st).QueryRowContext(ctx, args...)
	}
	return tx.QueryRowContext(ctx, q, args...)
}

// txExec is txRow for statements without results.
func (s *Store) txExec(ctx context.Context, tx *sql.Tx, q string, args ...any) (sql.Result, error) {
	s.txStatements.Add(1)
	if st := s.wStmts.lookup(q); st != nil {
		return tx.StmtContext(ctx, st).ExecContext(ctx, args...)
	}
	return tx.ExecContext(ctx, q, args...)
}

// readRow runs a cached statement on the reader pool.
func (s *Store) readRow(ctx context.Context, q string, args ...any) *sql.Row {
	st, err := s.rStmts.get(ctx, s.r, q)
	if err != nil {
		return s.r.QueryRowContext(ctx, q, args...)
	}
	return st.QueryRowContext(ctx, args...)
}

// readRows is readRow for several rows.
func (s *Store) readRows(ctx context.Context, q string, args ...any) (*sql.Rows, error) {
	st, err := s.rStmts.get(ctx, s.r, q)
	if err != nil {
		return nil, err
	}
	return st.QueryContext(ctx, args...)
}
