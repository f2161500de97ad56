package store

import (
	"context"
	"database/sql"
	"errors"
	"math/rand/v2"
	"time"
)

// PairView is everything an assessor sees of a pair while judging it. Nothing in it tells a
// gold pair from any other.
type PairView struct {
	PairID    int64
	ProjectID int64
	Query     Query
	Document  Document
	LeasedAt  time.Time
}

// openPair is the condition for a pair this assessor may be given: not gold, not judged by
// them, and its judgments plus the live leases of others still short of what the project
// needs. Parameters: ?1 project, ?2 user, ?3 now, ?4 judgments per pair.
//
// OFFSET 0 keeps PostgreSQL from turning NOT EXISTS into an anti-join, which it plans from
// statistics: on a young database (judgments not yet analysed) it planned the join as a walk
// of every current judgment of the assessor for each pair of the query, 3.5 ms instead of
// 0.2 ms for an assessor with a thousand judgments, under the project's lock. As a subquery
// per pair it is one probe of judgments_one_current whatever the statistics say; SQLite runs
// it that way anyway.
const openPair = `p.gold_grade IS NULL AND p.judged < ?4
	AND NOT EXISTS (SELECT 1 FROM judgments j WHERE j.pair_id = p.id AND j.user_id = ?2 AND j.current = 1 LIMIT 1 OFFSET 0)
	AND p.judged + (SELECT COUNT(*) FROM leases l WHERE l.pair_id = p.id AND l.user_id != ?2 AND l.expires_at > ?3) < ?4`

// shuffle orders a query's pairs differently for every assessor (?5 and ?6 are seeds drawn
// from the user id), so no document's position in an import decides who sees it first. Two
// rounds of multiplication modulo primes: the second multiplier differs per assessor, so
// their orders are different permutations rather than rotations of one.
const shuffle = `(((p.id * 1103515245 + ?5) % 2147483647) * ?6) % 2147483629`

// Statements of the assignment engine, named so their query plans can be checked.
const (
	// CROSS JOIN keeps leases (few per assessor) as the outer loop; unary + keeps the planner
	// off indexes that would walk a whole project or all of its queries.
	// PostgreSQL has neither hint; its planner sees the few leases from statistics (OFFSET 0
	// as in openPair).
	// Both answer the project's version too, as the lease write does (leaseSQL).
	resumeLeaseSQL = `SELECT l.pair_id, l.leased_at, COALESCE((SELECT version FROM project_versions WHERE project_id = ?1), 0)
		FROM leases l CROSS JOIN pairs p ON p.id = l.pair_id
		WHERE l.user_id = ?2 AND +p.project_id = ?1 AND l.expires_at > ?3
		AND NOT EXISTS (SELECT 1 FROM judgments j WHERE j.pair_id = p.id AND j.user_id = ?2 AND j.current = 1)
		ORDER BY l.leased_at DESC LIMIT 1`
	postgresResumeLeaseSQL = `SELECT l.pair_id, l.leased_at, COALESCE((SELECT version FROM project_versions WHERE project_id = ?1), 0)
		FROM leases l JOIN pairs p ON p.id = l.pair_id
		WHERE l.user_id = ?2 AND p.project_id = ?1 AND l.expires_at > ?3
		AND NOT EXISTS (SELECT 1 FROM judgments j WHERE j.pair_id = p.id AND j.user_id = ?2 AND j.current = 1 LIMIT 1 OFFSET 0)
		ORDER BY l.leased_at DESC LIMIT 1`
	batchPairSQL = `SELECT p.id FROM pairs p WHERE p.query_id = ?7 AND +p.project_id = ?1 AND ` + openPair + `
		ORDER BY p.priority DESC, ` + shuffle + ` LIMIT 1`
	nextQuerySQL = `SELECT q.query_id, q.top_priority, q.coverage FROM query_progress q
		WHERE q.project_id = ?1 AND +q.pairs > 0
		AND EXISTS (SELECT 1 FROM pairs p WHERE p.query_id = q.query_id AND ` + openPair + `)
		ORDER BY q.top_priority DESC, q.coverage, q.query_id LIMIT 1`
	// Spreading assessors over equally ranked queries (spreadQuery): whether others hold
	// leases in the query, the last query of its rank, and the first open one from a point on.
	contendedSQL = `SELECT EXISTS (SELECT 1 FROM pairs p JOIN leases l ON l.pair_id = p.id
		WHERE p.query_id = ?1 AND l.user_id != ?2 AND l.expires_at > ?3)`
	rankEndSQL     = `SELECT MAX(q.query_id) FROM query_progress q WHERE q.project_id = ?1 AND q.top_priority = ?2 AND q.coverage = ?3`
	spreadQuerySQL = `SELECT q.query_id FROM query_progress q
		WHERE q.project_id = ?1 AND q.top_priority = ?5 AND q.coverage = ?6 AND q.query_id >= ?7 AND +q.pairs > 0
		AND EXISTS (SELECT 1 FROM pairs p WHERE p.query_id = q.query_id AND ` + openPair + `)
		ORDER BY q.query_id LIMIT 1`
	// Named, since the planner may otherwise take an index on project_id alone and walk
	// every pair of the project to find its few gold ones.
	goldPairSQL = `SELECT p.id FROM pairs p INDEXED BY pairs_gold
		WHERE p.project_id = ?1 AND p.gold_grade IS NOT NULL
		AND NOT EXISTS (SELECT 1 FROM judgments j WHERE j.pair_id = p.id AND j.user_id = ?2)
		ORDER BY p.query_id = ?3 DESC, random() LIMIT 1`
	postgresGoldPairSQL = `SELECT p.id FROM pairs p
		WHERE p.project_id = ?1 AND p.gold_grade IS NOT NULL
		AND NOT EXISTS (SELECT 1 FROM judgments j WHERE j.pair_id = p.id AND j.user_id = ?2)
		ORDER BY p.query_id = ?3 DESC, random() LIMIT 1`
)

// seeds derives the two per-assessor constants of shuffle from the user id.
func seeds(userID int64) (int64, int64) {
	a := (userID*2654435761 + 97) % 2147483647
	b := (userID*40503+1)%2147483628 + 1 // never 0: multiplying by 0 would erase the order
	return a, b
}

// NextPair leases the next pair to an assessor. In order: a live lease of theirs (the pair
// on screen, or one they undid); with probability gold_rate a gold pair they have never
// judged; the next open pair of their current batch (the query they are working through);
// else the open query with the highest priority and the fewest judgments per pair so far,
// which becomes their batch. ErrNoWork means nothing is left for them.
//
// Everything runs in one write transaction on the single writer (through the group commit),
// so two assessors asking at once are served one after the other and a pair is never leased
// past what it needs.
func (s *Store) NextPair(ctx context.Context, projectID, userID int64) (PairView, error) {
	var pairID int64
	var leasedAt string
	err := s.grouped(ctx, func(ctx context.Context, tx *sql.Tx) error {
		var err error
		pairID, leasedAt, err = s.nextPairTx(ctx, tx, projectID, userID)
		return err
	}, nil)
	if err != nil {
		return PairView{}, err
	}
	v, err := s.pairView(ctx, pairID)
	v.LeasedAt = parseTime(leasedAt)
	return v, err
}

// nextPairTx is NextPair inside the caller's write transaction.
func (s *Store) nextPairTx(ctx context.Context, tx *sql.Tx, projectID, userID int64) (pairID int64, leasedAt string, err error) {
	if err := s.lockProject(ctx, tx, projectID); err != nil {
		return 0, "", err
	}
	as, err := s.assignmentTx(ctx, tx, projectID, userID)
	if err != nil {
		return 0, "", err
	}
	pairID, leasedAt, _, err = s.assignTx(ctx, tx, as, false)
	return pairID, leasedAt, err
}

// assignment is what the assignment engine reads of a project and an assessor before it
// picks a pair, and the project's version at that moment (under the project's lock).
type assignment struct {
	project, user        int64
	found                bool
	needed, leaseSeconds int
	goldRate             float64
	archived, member     bool
	batch                sql.NullInt64
	version              int64
}

// assignmentTx reads the assignment's settings in one statement; the caller holds the
// project's lock. A project that does not exist is reported by assignTx, so a caller that
// submits first reports its own refusals first.
func (s *Store) assignmentTx(ctx context.Context, tx *sql.Tx, projectID, userID int64) (assignment, error) {
	as := assignment{project: projectID, user: userID, found: true}
	err := s.txRow(ctx, tx, `SELECT judgments_per_pair, lease_seconds, gold_rate, archived_at IS NOT NULL,
			EXISTS (SELECT 1 FROM project_members m WHERE m.project_id = ?1 AND m.user_id = ?2 AND m.role = 'assessor'),
			(SELECT query_id FROM batches b WHERE b.project_id = ?1 AND b.user_id = ?2),
			COALESCE((SELECT version FROM project_versions WHERE project_id = ?1), 0)
		FROM projects WHERE id = ?1`, projectID, userID).Scan(&as.needed, &as.leaseSeconds, &as.goldRate, &as.archived, &as.member, &as.batch, &as.version)
	if errors.Is(err, sql.ErrNoRows) {
		as.found, err = false, nil
	}
	return as, err
}

// assignTx picks and leases the assessor's next pair (NextPair's order) and returns the
// project's version once the lease is written. expiredGone says the transaction has already
// dropped the assessor's expired leases.
func (s *Store) assignTx(ctx context.Context, tx *sql.Tx, as assignment, expiredGone bool) (pairID int64, leasedAt string, version int64, err error) {
	if !as.found {
		return 0, "", 0, ErrNotFound
	}
	if !as.member {
		return 0, "", 0, errorf(CodeDenied, "only the project's assessors are given pairs to judge")
	}
	if as.archived {
		return 0, "", 0, ErrNoWork
	}
	projectID, userID, needed := as.project, as.user, as.needed
	t := s.clock()
	nowText := timeText(t)
	err = s.txRow(ctx, tx, s.dialect(resumeLeaseSQL, postgresResumeLeaseSQL), projectID, userID, nowText).Scan(&pairID, &leasedAt, &version)
	if err == nil {
		return pairID, leasedAt, version, nil
	}
	if !errors.Is(err, sql.ErrNoRows) {
		return 0, "", 0, err
	}
	// Expired leases of this assessor are of no further use; dropping them keeps the table small.
	if !expiredGone {
		if _, err := s.txExec(ctx, tx, `DELETE FROM leases WHERE user_id = ? AND expires_at <= ?`, userID, nowText); err != nil {
			return 0, "", 0, err
		}
	}
	pairID = 0
	if as.goldRate > 0 && rand.Float64() < as.goldRate {
		err = s.txRow(ctx, tx, s.dialect(goldPairSQL, postgresGoldPairSQL), projectID, userID, as.batch.Int64).Scan(&pairID)
		if err != nil && !errors.Is(err, sql.ErrNoRows) {
			return 0, "", 0, err
		}
	}
	a, b := seeds(userID)
	if pairID == 0 && as.batch.Valid {
		err = s.txRow(ctx, tx, batchPairSQL, projectID, userID, nowText, needed, a, b, as.batch.Int64).Scan(&pairID)
		if err != nil && !errors.Is(err, sql.ErrNoRows) {
			return 0, "", 0, err
		}
	}
	if pairID == 0 {
		var queryID, priority int64
		var coverage float64
		err = s.txRow(ctx, tx, nextQuerySQL, projectID, userID, nowText, needed).Scan(&queryID, &priority, &coverage)
		if errors.Is(err, sql.ErrNoRows) {
			return 0, "", 0, ErrNoWork
		}
		if err != nil {
			return 0, "", 0, err
		}
		if queryID, err = s.spreadQuery(ctx, tx, projectID, userID, nowText, needed, queryID, priority, coverage); err != nil {
			return 0, "", 0, err
		}
		if err := s.txRow(ctx, tx, batchPairSQL, projectID, userID, nowText, needed, a, b, queryID).Scan(&pairID); err != nil {
			return 0, "", 0, err
		}
		if _, err := s.txExec(ctx, tx, `INSERT INTO batches(project_id, user_id, query_id, started_at) VALUES (?, ?, ?, ?)
			ON CONFLICT (project_id, user_id) DO UPDATE SET query_id = excluded.query_id, started_at = excluded.started_at`,
			projectID, userID, queryID, nowText); err != nil {
			return 0, "", 0, err
		}
	}
	version, err = s.lease(ctx, tx, projectID, pairID, userID, t, as.leaseSeconds)
	return pairID, nowText, version, err
}

// leaseSQL writes a lease and answers the project's version: it is the assignment's last
// write, so the judging path needs no statement of its own to learn the version its
// transaction ends at (leases bump no version).
const leaseSQL = `INSERT INTO leases(pair_id, user_id, leased_at, expires_at) VALUES (?1, ?2, ?3, ?4)
	ON CONFLICT (pair_id, user_id) DO UPDATE SET leased_at = excluded.leased_at, expires_at = excluded.expires_at
	RETURNING COALESCE((SELECT version FROM project_versions WHERE project_id = ?5), 0)`

// spreadQuery picks the query a new batch starts on, given the first open query of the best
// rank (priority, then coverage). When others are already working that query, a query of
// the same rank from a random point on is taken instead: otherwise every assessor starting
// a batch piles onto the same query, exhausts it within a few pairs and has to look for a
// new batch on nearly every request, which under load was the largest cost of the writer.
// All three statements walk query_progress_order.
func (s *Store) spreadQuery(ctx context.Context, tx *sql.Tx, projectID, userID int64, nowText string, needed int,
	first, priority int64, coverage float64) (int64, error) {
	var contended bool
	if err := s.txRow(ctx, tx, contendedSQL, first, userID, nowText).Scan(&contended); err != nil || !contended {
		return first, err
	}
	var end int64
	if err := s.txRow(ctx, tx, rankEndSQL, projectID, priority, coverage).Scan(&end); err != nil || end <= first {
		return first, err
	}
	from := first + 1 + rand.Int64N(end-first)
	var q int64
	err := s.txRow(ctx, tx, spreadQuerySQL, projectID, userID, nowText, needed, priority, coverage, from).Scan(&q)
	if errors.Is(err, sql.ErrNoRows) {
		return first, nil
	}
	return q, err
}

// lease gives (or renews) a pair to a user from t for the project's lease time and returns
// the project's version (leaseSQL).
func (s *Store) lease(ctx context.Context, tx *sql.Tx, projectID, pairID, userID int64, t time.Time, seconds int) (version int64, err error) {
	err = s.txRow(ctx, tx, leaseSQL, pairID, userID, timeText(t), timeText(t.Add(time.Duration(seconds)*time.Second)), projectID).Scan(&version)
	return version, err
}

// pairView loads the query and document of a pair.
func (s *Store) pairView(ctx context.Context, pairID int64) (PairView, error) {
	var v PairView
	err := s.readRow(ctx, `SELECT p.id, p.project_id,
			q.id, q.external_id, q.text, q.need,
			d.id, d.external_id, d.title, d.url, d.body, d.body_format
		FROM pairs p JOIN queries q ON q.id = p.query_id JOIN documents d ON d.id = p.document_id
		WHERE p.id = ?`, pairID).Scan(&v.PairID, &v.ProjectID,
		&v.Query.ID, &v.Query.ExternalID, &v.Query.Text, &v.Query.Need,
		&v.Document.ID, &v.Document.ExternalID, &v.Document.Title, &v.Document.URL, &v.Document.Body, &v.Document.BodyFormat)
	if errors.Is(err, sql.ErrNoRows) {
		return PairView{}, ErrNotFound
	}
	return v, err
}

// Progress counts a project's pairs by state.
type Progress struct {
	Pairs      int // all pairs that are not gold
	Done       int // pairs with every judgment they need
	InProgress int // pairs with some judgments
	Untouched  int
	Judgments  int
	Needed     int
}

// ProjectProgress counts the project's pairs by how far their judging has come. It reads
// every pair, so it serves the lead's overview; JudgingProgress is the cheap total.
func (s *Store) ProjectProgress(ctx context.Context, projectID int64) (Progress, error) {
	var p Progress
	err := s.r.QueryRowContext(ctx, `SELECT COUNT(x.id),
			COUNT(*) FILTER (WHERE x.judged >= pr.judgments_per_pair),
			COUNT(*) FILTER (WHERE x.judged > 0 AND x.judged < pr.judgments_per_pair),
			COUNT(*) FILTER (WHERE x.judged = 0),
			COALESCE(SUM(x.judged), 0),
			COUNT(x.id) * pr.judgments_per_pair
		FROM projects pr LEFT JOIN pairs x ON x.project_id = pr.id AND x.gold_grade IS NULL
		WHERE pr.id = ? GROUP BY pr.judgments_per_pair`, projectID).Scan(&p.Pairs, &p.Done, &p.InProgress, &p.Untouched, &p.Judgments, &p.Needed)
	return p, err
}

// ProjectIDByPair returns the project a pair belongs to.
func (s *Store) ProjectIDByPair(ctx context.Context, pairID int64) (int64, error) {
	var id int64
	err := s.readRow(ctx, `SELECT project_id FROM pairs WHERE id = ?`, pairID).Scan(&id)
	if errors.Is(err, sql.ErrNoRows) {
		return 0, ErrNotFound
	}
	return id, err
}
