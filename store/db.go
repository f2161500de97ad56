// Package store is the only place that speaks SQL. It keeps one SQLite file through
// modernc.org/sqlite (pure Go): a single writer connection, so writers queue in Go rather than
// failing with "database is locked", and a pool of read-only connections that WAL lets run
// beside the writer.
package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"net/url"
	"runtime"
	"sync"
	"sync/atomic"
	"time"

	_ "modernc.org/sqlite" // registers the "sqlite" driver
)

// Store is an open pertinent database.
type Store struct {
	w       *sql.DB // exactly one connection: every write goes through it
	r       *sql.DB // read-only pool
	path    string
	wStmts  stmtCache
	rStmts  stmtCache
	clockFn atomic.Pointer[func() time.Time] // nil: time.Now; see SetClock

	desks deskCache // the lead's figures per project, keyed by project_versions

	group    groupWriter   // group commit of the judging path (judge_groupwriter.go)
	progress progressCache // judging progress per project, keyed by project_versions
	runs     runCache      // parsed kept runs (plan_runs.go)
	// scheduled holds, per project, what its comparisons were last worked out from
	// (preference_judging.go), so an assessor with nothing open does not replay every query.
	scheduled sync.Map
}

// Open opens (creating if needed) the database file at path and applies pending migrations.
func Open(ctx context.Context, path string) (*Store, error) {
	if path == "" {
		return nil, errors.New("store: empty database path")
	}
	w, err := sql.Open("sqlite", dsn(path, false))
	if err != nil {
		return nil, fmt.Errorf("store: open %s: %w", path, err)
	}
	w.SetMaxOpenConns(1)
	w.SetMaxIdleConns(1)
	w.SetConnMaxLifetime(0)
	if err := w.PingContext(ctx); err != nil {
		w.Close()
		return nil, fmt.Errorf("store: open %s: %w", path, err)
	}
	s := &Store{w: w, path: path}
	if err := s.Migrate(ctx); err != nil {
		w.Close()
		return nil, err
	}
	// Readers are opened after the writer has created the file and switched it to WAL.
	r, err := sql.Open("sqlite", dsn(path, true))
	if err != nil {
		w.Close()
		return nil, fmt.Errorf("store: open readers %s: %w", path, err)
	}
	n := max(4, 2*runtime.GOMAXPROCS(0))
	r.SetMaxOpenConns(n)
	r.SetMaxIdleConns(n)
	s.r = r
	s.startGroup()
	return s, nil
}

// dsn builds the connection string. Every connection gets foreign keys and a busy timeout;
// the writer starts its transactions IMMEDIATE so a read-then-write transaction never has to
// upgrade its lock half-way (the classic source of SQLITE_BUSY under concurrency).
// synchronous=NORMAL in WAL mode keeps every committed transaction across a process crash;
// only an operating-system crash or power loss can take the last few commits.
func dsn(path string, readOnly bool) string {
	q := url.Values{}
	q.Add("_pragma", "foreign_keys(1)")
	q.Add("_pragma", "busy_timeout(10000)")
	if readOnly {
		q.Add("_pragma", "query_only(1)")
	} else {
		q.Add("_pragma", "journal_mode(WAL)")
		q.Add("_pragma", "synchronous(NORMAL)")
		q.Add("_txlock", "immediate")
	}
	return "file:" + path + "?" + q.Encode()
}

// Path is the database file's path.
func (s *Store) Path() string { return s.path }

// Close closes every connection; the WAL is checkpointed by SQLite on the last close.
func (s *Store) Close() error {
	s.group.close()
	s.wStmts.close()
	s.rStmts.close()
	var errR error
	if s.r != nil {
		errR = s.r.Close()
	}
	return errors.Join(errR, s.w.Close())
}

// Ping checks that both the reader pool and the writer answer.
func (s *Store) Ping(ctx context.Context) error {
	var one int
	if err := s.r.QueryRowContext(ctx, "SELECT 1").Scan(&one); err != nil {
		return err
	}
	return s.w.PingContext(ctx)
}

// write runs fn in one write transaction, committed only if fn returns nil.
func (s *Store) write(ctx context.Context, fn func(tx *sql.Tx) error) error {
	tx, err := s.w.BeginTx(ctx, nil)
	if err != nil {
		return err
	}
	err = fn(tx)
	if err != nil {
		tx.Rollback()
	} else {
		err = tx.Commit()
	}
	s.wStmts.prepareWanted(context.WithoutCancel(ctx), s.w)
	return err
}

// SetClock makes the store read the time from now instead of time.Now, for every time it
// stamps or compares with (judgments, leases, sessions, links, tokens, audit rows, ...):
// tests step a clock instead of sleeping. Safe to call while the store is in use.
func (s *Store) SetClock(now func() time.Time) { s.clockFn.Store(&now) }

// clock is the store's time.
func (s *Store) clock() time.Time {
	if f := s.clockFn.Load(); f != nil {
		return (*f)()
	}
	return time.Now()
}

// now is the store's time as the text form kept in the database.
func (s *Store) now() string { return timeText(s.clock()) }

const timeLayout = "2006-01-02T15:04:05.000Z"

func timeText(t time.Time) string { return t.UTC().Format(timeLayout) }

func parseTime(s string) time.Time {
	t, _ := time.Parse(timeLayout, s)
	return t
}
