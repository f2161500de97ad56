// Package store is the only place that speaks SQL. It keeps one SQLite file through
// modernc.org/sqlite (pure Go): a single writer connection, so writers queue in Go rather than
// failing with "database is locked", and a pool of read-only connections that WAL lets run
// beside the writer. Given a postgres:// connection string it keeps a PostgreSQL database
// instead, through pgx's database/sql driver (pgdriver.go), with one pool for both.
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
	pg      bool // PostgreSQL: w and r are one pool; see pgdriver.go and dialect
	wStmts  stmtCache
	rStmts  stmtCache
	clockFn atomic.Pointer[func() time.Time] // nil: time.Now; see SetClock
	// txStatements counts the statements run through txRow and txExec: the round trips of
	// a write transaction on PostgreSQL, which tests of the judging path hold to a budget.
	txStatements atomic.Int64

	desks deskCache // the lead's figures per project, keyed by project_versions

	group    groupWriter   // group commit of the judging path (judge_groupwriter.go)
	progress progressCache // judging progress per project, keyed by project_versions
	runs     runCache      // parsed kept runs (plan_runs.go)
	// scheduled holds, per project, what its comparisons were last worked out from
	// (preference_judging.go), so an assessor with nothing open does not replay every query.
	scheduled sync.Map
}

// Open opens (creating if needed) the database file at path and applies pending migrations.
// A path starting postgres:// or postgresql:// is a PostgreSQL connection string instead; the
// database must exist, and its migrations are applied the same way.
func Open(ctx context.Context, path string) (*Store, error) {
	if path == "" {
		return nil, errors.New("store: empty database path")
	}
	if IsPostgres(path) {
		return openPostgresStore(ctx, path)
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

// openPostgresStore opens a PostgreSQL database as a Store. There is no single writer: the
// pool serves reads and writes alike, and the judging path runs each request in its own
// transaction under a per-project lock (lockProject) instead of the group writer.
func openPostgresStore(ctx context.Context, dsn string) (*Store, error) {
	db, err := openPostgres(dsn)
	if err != nil {
		return nil, fmt.Errorf("store: open PostgreSQL: %w", err)
	}
	n := max(4, 2*runtime.GOMAXPROCS(0))
	db.SetMaxOpenConns(n)
	db.SetMaxIdleConns(n)
	db.SetConnMaxIdleTime(5 * time.Minute)
	if err := db.PingContext(ctx); err != nil {
		db.Close()
		return nil, fmt.Errorf("store: open PostgreSQL: %w", err)
	}
	s := &Store{w: db, r: db, path: dsn, pg: true}
	if err := s.Migrate(ctx); err != nil {
		db.Close()
		return nil, err
	}
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

// Path is the database file's path, or the PostgreSQL connection string.
func (s *Store) Path() string { return s.path }

// Postgres reports whether the store keeps a PostgreSQL database rather than a SQLite file.
func (s *Store) Postgres() bool { return s.pg }

// dialect picks the text of a statement that must differ between the engines; both are
// constants named for their engine and kept side by side (sqliteX, postgresX).
func (s *Store) dialect(sqlite, postgres string) string {
	if s.pg {
		return postgres
	}
	return sqlite
}

// Close closes every connection; the WAL is checkpointed by SQLite on the last close.
func (s *Store) Close() error {
	s.group.close()
	s.wStmts.close()
	s.rStmts.close()
	var errR error
	if s.r != nil && s.r != s.w {
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

// postgresLockProjectSQL takes a project's advisory lock until the transaction ends.
const postgresLockProjectSQL = `SELECT pg_advisory_xact_lock(?)`

// lockProject makes tx the only write transaction of the project that assigns, judges or
// imports until it ends. SQLite needs nothing: its one writer connection already runs every
// write transaction alone. On PostgreSQL several connections (and instances) write at once,
// and the assignment reads before it writes (a pair's judgments and others' leases, then a
// new lease), as do Submit's check of pairs.judged and the import's "rows above the highest
// id". A transaction-scoped advisory lock per project keeps those reads true until COMMIT,
// and keeps the project's judgment ids in commit order, which the desk's incremental read
// (id > seenID) relies on. One lock per project rather than row locks: what must not change
// is the absence of rows (no other lease, no other judgment), which FOR UPDATE cannot lock,
// and projects never wait on each other.
func (s *Store) lockProject(ctx context.Context, tx *sql.Tx, projectID int64) error {
	if !s.pg {
		return nil
	}
	if h, ok := ctx.Value(heldLockKey{}).(heldLock); ok && h.tx == tx && h.project == projectID {
		return nil
	}
	_, err := s.txExec(ctx, tx, postgresLockProjectSQL, projectID)
	return err
}

// heldLock marks a project lock that tx already holds, so the steps of one request that each
// take the lock (submitting, then assigning) ask the server for it once: the lock is held
// until the transaction ends anyway, and every round trip under it is time the project's
// other writers wait.
type heldLock struct {
	tx      *sql.Tx
	project int64
}

type heldLockKey struct{}

// lockedProjectContext takes the project's lock in tx and returns a context that lets the
// transaction's later lockProject calls for that project pass without a round trip.
func (s *Store) lockedProjectContext(ctx context.Context, tx *sql.Tx, projectID int64) (context.Context, error) {
	if err := s.lockProject(ctx, tx, projectID); err != nil {
		return ctx, err
	}
	return context.WithValue(ctx, heldLockKey{}, heldLock{tx, projectID}), nil
}

// postgresLockPairProjectSQL is postgresLockProjectSQL for the project of a pair.
const postgresLockPairProjectSQL = `SELECT pg_advisory_xact_lock(project_id) FROM pairs WHERE id = ?`

// lockPairProject is lockProject for the project a pair belongs to, when the caller does not
// know it (projectID 0); a caller that names the project locks that one, so a transaction
// never holds two projects' locks.
func (s *Store) lockPairProject(ctx context.Context, tx *sql.Tx, pairID, projectID int64) error {
	if !s.pg {
		return nil
	}
	if projectID != 0 {
		return s.lockProject(ctx, tx, projectID)
	}
	_, err := s.txExec(ctx, tx, postgresLockPairProjectSQL, pairID)
	return err
}

// postgresLockComparisonProjectSQL is postgresLockProjectSQL for the project of a comparison.
const postgresLockComparisonProjectSQL = `SELECT pg_advisory_xact_lock(project_id) FROM preference_comparisons WHERE id = ?`

// lockComparisonProject is lockPairProject for a preference comparison: preference judging
// reads before it writes as graded judging does (answers and others' leases, then a lease or
// an answer), under the same per-project lock.
func (s *Store) lockComparisonProject(ctx context.Context, tx *sql.Tx, comparisonID, projectID int64) error {
	if !s.pg {
		return nil
	}
	if projectID != 0 {
		return s.lockProject(ctx, tx, projectID)
	}
	_, err := s.txExec(ctx, tx, postgresLockComparisonProjectSQL, comparisonID)
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

// postgresAnalyzeSQL refreshes the planner's statistics of the tables an import fills.
const postgresAnalyzeSQL = `ANALYZE queries, documents, pairs, query_progress, pair_features`

// analyzeAfterLoad refreshes PostgreSQL's statistics after an import changed rows. Without
// it the planner judges a table just filled by the row counts it had when empty, until
// autovacuum comes by: measured with the load test, assignment then walked whole tables and
// two instances judged 2 pairs a second instead of about 150. SQLite's planner needs no
// statistics for the store's statements (their plans are fixed by the indexes they name).
func (s *Store) analyzeAfterLoad(ctx context.Context, changed bool) error {
	if !s.pg || !changed {
		return nil
	}
	_, err := s.w.ExecContext(ctx, postgresAnalyzeSQL)
	return err
}
