package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"sync"
)

// groupRequest is one unit of work for the group writer: fn runs inside its own savepoint of
// a shared transaction; committed runs on the writer, in commit order, once COMMIT returned.
type groupRequest struct {
	ctx       context.Context
	fn        func(ctx context.Context, tx *sql.Tx) error
	committed func()
	done      chan error
}

// groupMax bounds how many requests share one transaction, so an acknowledgement never waits
// behind an unbounded queue.
const groupMax = 128

// groupWriter commits many small write transactions as one (group commit). Under load the
// judging path is bound by the single writer: every transaction pays BEGIN, a WAL append and
// COMMIT, and the connection is handed from goroutine to goroutine between them. One goroutine
// that owns the connection for a batch pays those once for up to groupMax requests. Each
// request runs in a SAVEPOINT, so a failing one rolls back alone; each is acknowledged only
// after the shared COMMIT has returned, so an acknowledged write is exactly as durable as
// before.
type groupWriter struct {
	mu     sync.RWMutex // held shared while queueing, so close never strands a request
	closed bool
	queue  chan *groupRequest
	stop   chan struct{}
	wg     sync.WaitGroup
}

func (s *Store) startGroup() {
	g := &s.group
	g.queue = make(chan *groupRequest, groupMax)
	g.stop = make(chan struct{})
	g.wg.Add(1)
	go s.runGroup()
}

// grouped runs fn in the group writer's shared transaction and returns once it is committed
// (nil) or rolled back (fn's error, or the error that ended the shared transaction).
// committed, if set, runs on the writer after the COMMIT, before the next batch begins.
//
// fn gets a context without cancellation: interrupting a statement in an explicit
// transaction may roll the whole transaction back, which would take the other requests of
// the batch with it. A request whose caller has gone is skipped before it starts instead.
//
// On PostgreSQL there is no batch: the server commits many connections' transactions together
// itself, and a batch of one instance would only hold its row locks longer against another.
// Each request runs in its own transaction on the pool (alone).
func (s *Store) grouped(ctx context.Context, fn func(ctx context.Context, tx *sql.Tx) error, committed func()) error {
	if s.pg {
		return s.alone(ctx, fn, committed)
	}
	g := &s.group
	req := &groupRequest{ctx: ctx, fn: fn, committed: committed, done: make(chan error, 1)}
	g.mu.RLock()
	if g.closed {
		g.mu.RUnlock()
		return errors.New("store: closed")
	}
	select {
	case g.queue <- req:
	case <-ctx.Done():
		g.mu.RUnlock()
		return ctx.Err()
	}
	g.mu.RUnlock()
	// Once queued the outcome is awaited even if the caller gives up: the write may commit.
	return <-req.done
}

func (s *Store) runGroup() {
	g := &s.group
	defer g.wg.Done()
	for {
		var first *groupRequest
		select {
		case first = <-g.queue:
		case <-g.stop:
			// close waited for every sender, so the queue holds all that is left.
			for {
				select {
				case r := <-g.queue:
					s.runBatch(r)
				default:
					return
				}
			}
		}
		s.runBatch(first)
	}
}

// runBatch runs first and whatever else is queued (up to groupMax) in one transaction.
func (s *Store) runBatch(first *groupRequest) {
	g := &s.group
	ctx := context.Background()
	batch := []*groupRequest{first}
	errs := []error{nil}
	// Each savepoint keeps a statement journal of the pages it changes; in a temporary file
	// (the default) that is two writes per page and request, which showed as the largest
	// system-call cost in profiles. In memory it is a few hundred kilobytes per batch at most.
	conn, err := s.w.Conn(ctx)
	if err != nil {
		first.done <- err
		return
	}
	defer func() {
		// Imports and other writes get the connection as they expect it; only then can the
		// statements this batch missed be prepared, as that needs the connection too.
		conn.ExecContext(ctx, `PRAGMA temp_store = DEFAULT`)
		conn.Close()
		s.wStmts.prepareWanted(ctx, s.w)
	}()
	if _, err := conn.ExecContext(ctx, `PRAGMA temp_store = MEMORY`); err != nil {
		first.done <- err
		return
	}
	tx, err := conn.BeginTx(ctx, nil)
	if err != nil {
		first.done <- err
		return
	}
	var fatal error
	for i := 0; i < len(batch) && fatal == nil; i++ {
		r := batch[i]
		errs[i], fatal = s.runSavepoint(ctx, tx, r)
		// Take what queued while this one ran: the busier the writer, the larger the batch.
		if fatal == nil && i == len(batch)-1 && len(batch) < groupMax {
			select {
			case next := <-g.queue:
				batch = append(batch, next)
				errs = append(errs, nil)
			default:
			}
		}
	}
	if fatal == nil {
		fatal = tx.Commit()
	} else {
		tx.Rollback()
	}
	for i, r := range batch {
		switch {
		case fatal != nil && errs[i] == nil:
			errs[i] = fatal
		case errs[i] == nil && r.committed != nil:
			r.committed()
		}
	}
	for i, r := range batch {
		r.done <- errs[i]
	}
}

// runSavepoint runs one request inside a savepoint. fatal is set when the shared transaction
// itself can no longer be trusted (a savepoint statement failed).
func (s *Store) runSavepoint(ctx context.Context, tx *sql.Tx, r *groupRequest) (err, fatal error) {
	if err := r.ctx.Err(); err != nil {
		return err, nil
	}
	if _, err := s.txExec(ctx, tx, `SAVEPOINT request`); err != nil {
		return err, err
	}
	if err = runRequest(r, tx); err != nil {
		if _, rerr := s.txExec(ctx, tx, `ROLLBACK TO request`); rerr != nil {
			return err, rerr
		}
	}
	if _, rerr := s.txExec(ctx, tx, `RELEASE request`); rerr != nil {
		return err, rerr
	}
	return err, nil
}

// runRequest runs a request's function; a panic becomes its error, as the writer goroutine
// must outlive any one request (a handler's panic is caught per request, too).
func runRequest(r *groupRequest, tx *sql.Tx) (err error) {
	defer func() {
		if p := recover(); p != nil {
			err = fmt.Errorf("store: write panicked: %v", p)
		}
	}()
	return r.fn(context.WithoutCancel(r.ctx), tx)
}

// alone is grouped without a batch: fn in a transaction of its own, committed called after
// its COMMIT. The context is kept from cancellation as in a batch, so a request that began is
// carried to its end and its outcome is the one reported.
func (s *Store) alone(ctx context.Context, fn func(ctx context.Context, tx *sql.Tx) error, committed func()) error {
	if err := ctx.Err(); err != nil {
		return err
	}
	r := &groupRequest{ctx: ctx, fn: fn}
	wctx := context.WithoutCancel(ctx)
	tx, err := s.w.BeginTx(wctx, nil)
	if err != nil {
		return err
	}
	if err := runRequest(r, tx); err != nil {
		tx.Rollback()
		return err
	}
	if err := tx.Commit(); err != nil {
		return err
	}
	if committed != nil {
		committed()
	}
	return nil
}

func (g *groupWriter) close() {
	g.mu.Lock()
	if g.closed || g.stop == nil {
		g.mu.Unlock()
		return
	}
	g.closed = true
	close(g.stop)
	g.mu.Unlock()
	g.wg.Wait()
}
