package store

import (
	"context"
	"database/sql"
	"errors"
	"fmt"
	"sync"
	"testing"
	"time"
)

// A failing request in the group writer's shared transaction rolls back alone: its rows are
// gone, while requests before and after it in the same batch are committed.
func TestGroupedFailureRollsBackAlone(t *testing.T) {
	s := openSQLiteTest(t) // the batch is SQLite's; PostgreSQL runs each request alone
	ctx := context.Background()
	if _, err := s.w.ExecContext(ctx, `CREATE TABLE probe (n INTEGER NOT NULL)`); err != nil {
		t.Fatal(err)
	}
	// Hold the writer so the requests queue up and share one batch.
	hold := make(chan struct{})
	held := make(chan struct{})
	go s.grouped(ctx, func(ctx context.Context, tx *sql.Tx) error {
		close(held)
		<-hold
		return nil
	}, nil)
	<-held
	const n = 40
	errs := make([]error, n)
	committed := make([]bool, n)
	var wg sync.WaitGroup
	for i := range n {
		wg.Add(1)
		go func() {
			defer wg.Done()
			errs[i] = s.grouped(ctx, func(ctx context.Context, tx *sql.Tx) error {
				if _, err := tx.ExecContext(ctx, `INSERT INTO probe(n) VALUES (?)`, i); err != nil {
					return err
				}
				if i%3 == 0 {
					return fmt.Errorf("request %d fails after writing", i)
				}
				return nil
			}, func() { committed[i] = true })
		}()
	}
	for len(s.group.queue) < n { // every request waits in the queue behind the held batch
		waitABit()
	}
	close(hold)
	wg.Wait()
	var rows, sum int
	if err := s.r.QueryRowContext(ctx, `SELECT COUNT(*), COALESCE(SUM(n % 3 = 0), 0) FROM probe`).Scan(&rows, &sum); err != nil {
		t.Fatal(err)
	}
	want := 0
	for i := range n {
		if i%3 == 0 {
			if errs[i] == nil || committed[i] {
				t.Errorf("request %d: err %v, committed %v; want its own error and no commit", i, errs[i], committed[i])
			}
			continue
		}
		want++
		if errs[i] != nil || !committed[i] {
			t.Errorf("request %d: err %v, committed %v; want committed", i, errs[i], committed[i])
		}
	}
	if rows != want || sum != 0 {
		t.Errorf("probe holds %d rows (%d of failed requests), want %d rows and none of failed ones", rows, sum, want)
	}
}

// SubmitAndNext stores the judgment and leases the next pair in one go; a pair that filled
// up meanwhile is refused but the next pair still comes; the progress it reports agrees with
// a fresh count; a pair of another project is not found and changes nothing.
func TestSubmitAndNext(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, pairs, users := fixture(t, s, 2, 3, 3)
	first := nextPair(t, s, p.ID, users[0])
	turn, err := s.SubmitAndNext(ctx, p.ID, Submission{PairID: first.PairID, UserID: users[0], Grade: grade(3)})
	if err != nil {
		t.Fatal(err)
	}
	if turn.Refused != nil || turn.Judgment.ID == 0 || *turn.Judgment.Grade != 3 {
		t.Fatalf("turn = %+v, want a stored grade 3", turn)
	}
	if turn.NoWork || turn.Next.PairID == 0 || turn.Next.PairID == first.PairID {
		t.Fatalf("next pair %d after %d, want another pair", turn.Next.PairID, first.PairID)
	}
	judged, needed, err := s.JudgingProgress(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if judged != 1 || needed != 12 {
		t.Errorf("progress %d of %d, want 1 of 12", judged, needed)
	}
	// Now that the cache holds the totals, the next turn advances them across its transaction.
	second := turn.Next.PairID
	turn, err = s.SubmitAndNext(ctx, p.ID, Submission{PairID: second, UserID: users[0], CannotJudge: "broken"})
	if err != nil {
		t.Fatal(err)
	}
	if !turn.Progress || turn.Judged != 2 || turn.Needed != 12 {
		t.Errorf("turn progress %v %d of %d, want 2 of 12 from the cache", turn.Progress, turn.Judged, turn.Needed)
	}
	// Two others fill the pair on screen; the submission is refused, the next pair comes.
	third := turn.Next.PairID
	for _, u := range users[1:] {
		if _, err := s.Submit(ctx, Submission{PairID: third, UserID: u, Grade: grade(1)}); err != nil {
			t.Fatal(err)
		}
	}
	turn, err = s.SubmitAndNext(ctx, p.ID, Submission{PairID: third, UserID: users[0], Grade: grade(2)})
	if err != nil {
		t.Fatal(err)
	}
	if ErrorCode(turn.Refused) != CodeConflict || turn.Judgment.ID != 0 {
		t.Errorf("refused = %v, judgment %d; want a conflict and nothing stored", turn.Refused, turn.Judgment.ID)
	}
	if turn.NoWork || turn.Next.PairID == third {
		t.Errorf("after a refusal the next pair is %d (no work %v), want a fresh one", turn.Next.PairID, turn.NoWork)
	}
	if !turn.Progress || turn.Judged != 4 {
		// The two Submits above ran outside this turn, so the cache was recounted or advanced;
		// either way the figure must be the true one.
		j, _, _ := s.JudgingProgress(ctx, p.ID)
		if j != 4 {
			t.Errorf("progress %d, want 4", j)
		}
	}
	checkJudgingProgress(t, s, p.ID, "after a refused turn")

	// A pair of another project: not found, nothing written, no lease taken.
	other, err := s.CreateProject(ctx, NewProject{Name: "other", JudgmentsPerPair: 1}, 0)
	if err != nil {
		t.Fatal(err)
	}
	if err := s.SetMember(ctx, other.ID, users[0], RoleAssessor, 0); err != nil {
		t.Fatal(err)
	}
	_, err = s.SubmitAndNext(ctx, other.ID, Submission{PairID: pairs[5], UserID: users[0], Grade: grade(0)})
	if !errors.Is(err, ErrNotFound) {
		t.Errorf("pair of another project: err = %v, want not found", err)
	}
	if h, _ := s.JudgmentHistory(ctx, pairs[5], users[0]); len(h) != 0 {
		t.Errorf("a refused pair of another project got %d judgments", len(h))
	}
	checkQueryProgress(t, s)
}

// Progress read through the cache follows every kind of change, including writes that do
// not go through the judging path.
func TestJudgingProgressCacheFollowsOtherWrites(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, pairs, users := fixture(t, s, 2, 3, 2)
	check := func(step string) {
		t.Helper()
		checkJudgingProgress(t, s, p.ID, step)
	}
	check("empty")
	v, _ := s.NextPair(ctx, p.ID, users[0])
	if _, err := s.SubmitAndNext(ctx, p.ID, Submission{PairID: v.PairID, UserID: users[0], Grade: grade(1)}); err != nil {
		t.Fatal(err)
	}
	check("after a turn")
	if _, err := s.Undo(ctx, p.ID, users[0]); err != nil {
		t.Fatal(err)
	}
	check("after undo")
	if _, err := s.w.ExecContext(ctx, `UPDATE pairs SET gold_grade = 2 WHERE id = ?`, pairs[0]); err != nil {
		t.Fatal(err)
	}
	check("after a pair was made gold")
	if _, err := s.w.ExecContext(ctx, `DELETE FROM pairs WHERE id = ?`, pairs[1]); err != nil {
		t.Fatal(err)
	}
	check("after a pair was deleted")
	if _, err := s.w.ExecContext(ctx, `UPDATE projects SET judgments_per_pair = 3 WHERE id = ?`, p.ID); err != nil {
		t.Fatal(err)
	}
	check("after the judgments per pair changed")
}

func waitABit() { time.Sleep(time.Millisecond) }

// A request that panics is answered with an error, its writes are rolled back, and the writer
// goes on serving the next request.
func TestGroupedPanicIsContained(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	if _, err := s.w.ExecContext(ctx, `CREATE TABLE probe (n INTEGER NOT NULL)`); err != nil {
		t.Fatal(err)
	}
	err := s.grouped(ctx, func(ctx context.Context, tx *sql.Tx) error {
		if _, err := tx.ExecContext(ctx, `INSERT INTO probe(n) VALUES (1)`); err != nil {
			return err
		}
		panic("broken request")
	}, nil)
	if err == nil {
		t.Fatal("a panicking request reported success")
	}
	err = s.grouped(ctx, func(ctx context.Context, tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, `INSERT INTO probe(n) VALUES (2)`)
		return err
	}, nil)
	if err != nil {
		t.Fatalf("the request after a panic: %v", err)
	}
	var ns []int
	rows, err := s.r.QueryContext(ctx, `SELECT n FROM probe ORDER BY n`)
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		var n int
		rows.Scan(&n)
		ns = append(ns, n)
	}
	rows.Close()
	if fmt.Sprint(ns) != "[2]" {
		t.Errorf("probe holds %v, want only the second request's row [2]", ns)
	}
}

// A turn that continues the assessor's batch runs a fixed number of statements in its
// transaction: on PostgreSQL each is a round trip made while the project's lock is held, so
// the budget is what bounds one project's judging rate there. The lock is taken once, and the
// assessor's expired leases go with the lease of the judged pair.
func TestSubmitAndNextRoundTrips(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	now := time.Date(2026, 5, 1, 9, 0, 0, 0, time.UTC)
	s.SetClock(func() time.Time { return now })
	p, _, pairs, users := fixture(t, s, 2, 4, 1)
	first := nextPair(t, s, p.ID, users[0])
	// An expired lease of the same assessor on a pair of the other query.
	var stale int64
	for _, id := range pairs {
		if id != first.PairID && pairQuery(t, s, id) != first.Query.ID {
			stale = id
		}
	}
	if _, err := s.w.ExecContext(ctx, `INSERT INTO leases(pair_id, user_id, leased_at, expires_at) VALUES (?, ?, ?, ?)`,
		stale, users[0], timeText(now.Add(-2*time.Hour)), timeText(now.Add(-time.Hour))); err != nil {
		t.Fatal(err)
	}
	before := s.txStatements.Load()
	turn, err := s.SubmitAndNext(ctx, p.ID, Submission{PairID: first.PairID, UserID: users[0], Grade: grade(2)})
	if err != nil {
		t.Fatal(err)
	}
	if turn.NoWork || pairQuery(t, s, turn.Next.PairID) != first.Query.ID {
		t.Fatalf("next pair %d, want one of query %d (the batch)", turn.Next.PairID, first.Query.ID)
	}
	// assignment settings, the submission's read, the judgment, the pair's count, the leases
	// dropped, the live-lease check, the batch's next pair, the new lease: 8. PostgreSQL adds
	// the lock; SQLite the group writer's SAVEPOINT and RELEASE, which never leave the process.
	want := int64(8 + 2)
	if s.Postgres() {
		want = 8 + 1
	}
	if got := s.txStatements.Load() - before; got != want {
		t.Errorf("the turn ran %d statements in its transaction, want %d", got, want)
	}
	var left int
	if err := s.r.QueryRowContext(ctx, `SELECT COUNT(*) FROM leases WHERE user_id = ? AND pair_id = ?`, users[0], stale).Scan(&left); err != nil {
		t.Fatal(err)
	}
	if left != 0 {
		t.Errorf("the expired lease is still there after the turn")
	}
}

func pairQuery(t *testing.T, s *Store, pairID int64) int64 {
	t.Helper()
	var q int64
	if err := s.r.QueryRowContext(context.Background(), `SELECT query_id FROM pairs WHERE id = ?`, pairID).Scan(&q); err != nil {
		t.Fatal(err)
	}
	return q
}
