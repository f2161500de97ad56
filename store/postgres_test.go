package store

import (
	"context"
	"database/sql"
	"errors"
	"strings"
	"sync"
	"testing"
	"time"

	"github.com/pertinent/pertinent/internal/pgtest"
)

// The placeholders are translated as SQLite numbers them, and nothing quoted is touched.
func TestPlaceholdersBecomePostgres(t *testing.T) {
	for _, c := range []struct{ in, want string }{
		{`SELECT 1`, `SELECT 1`},
		{`SELECT * FROM t WHERE a = ? AND b = ?`, `SELECT * FROM t WHERE a = $1 AND b = $2`},
		{`WHERE a = ?2 AND b = ?1 OR c = ?2`, `WHERE a = $2 AND b = $1 OR c = $2`},
		// A bare ? after ?N takes the next number after the highest so far, as in SQLite.
		{`VALUES (?3, ?, ?)`, `VALUES ($3, $4, $5)`},
		{`SELECT ?1, ?, ?10`, `SELECT $1, $2, $10`},
		{`SELECT 'a?b', "c?", ? -- is it?` + "\n" + `, ?`, `SELECT 'a?b', "c?", $1 -- is it?` + "\n" + `, $2`},
		{`SELECT /* ? */ ?`, `SELECT /* ? */ $1`},
		{`SELECT 'it''s ?', ?`, `SELECT 'it''s ?', $1`},
		{`DO $$ BEGIN PERFORM '?'; END $$; SELECT ?`, `DO $$ BEGIN PERFORM '?'; END $$; SELECT $1`},
		{`SELECT $tag$ ? $tag$, ?`, `SELECT $tag$ ? $tag$, $1`},
		{`SELECT $1 FROM t`, `SELECT $1 FROM t`},
	} {
		if got := translatePlaceholders(c.in); got != c.want {
			t.Errorf("translatePlaceholders(%q)\n got %q\nwant %q", c.in, got, c.want)
		}
		if got := pgText(c.in); got != c.want {
			t.Errorf("pgText(%q) = %q from the cache, want %q", c.in, got, c.want)
		}
	}
}

// Two instances on one PostgreSQL database (two Stores, each with its own pool and caches)
// serve eight assessors at once, each assessor's requests alternating between them: every
// pair ends with exactly the judgments it needs, never more, the counters the triggers keep
// agree with a recount, and each instance's cached progress and desk show the other's writes.
func TestTwoInstancesShareOneProjectOnPostgres(t *testing.T) {
	dsn := pgtest.New(t)
	a, b := openAt(t, dsn), openAt(t, dsn)
	ctx := context.Background()
	p, _, pairs, users := fixture(t, a, 6, 5, 8)
	instances := []*Store{a, b}

	// Both instances cache the project before any judging: what follows must move them on.
	for _, s := range instances {
		if judged, _, err := s.JudgingProgress(ctx, p.ID); err != nil || judged != 0 {
			t.Fatalf("progress before judging: %d, %v", judged, err)
		}
		if _, err := s.Desk(ctx, p.ID); err != nil {
			t.Fatal(err)
		}
	}

	var wg sync.WaitGroup
	errs := make([]error, len(users))
	for i, u := range users {
		wg.Add(1)
		go func() {
			defer wg.Done()
			turn := i // which instance serves this assessor's next request
			serve := func() *Store { turn++; return instances[turn%2] }
			v, err := serve().NextPair(ctx, p.ID, u)
			for err == nil {
				g := int(v.PairID % 4)
				var tr Turn
				tr, err = serve().SubmitAndNext(ctx, p.ID, Submission{PairID: v.PairID, UserID: u, Grade: &g})
				if err != nil || tr.NoWork {
					break
				}
				v = tr.Next
			}
			if errors.Is(err, ErrNoWork) {
				err = nil
			}
			errs[i] = err
		}()
	}
	wg.Wait()
	for i, err := range errs {
		if err != nil {
			t.Errorf("assessor %d: %v", i, err)
		}
	}

	perPair := map[int64]int{}
	err := eachRow(ctx, a.r, `SELECT pair_id, COUNT(*) FROM judgments WHERE current = 1 GROUP BY pair_id`, func(r rowScanner) error {
		var id int64
		var n int
		err := r.Scan(&id, &n)
		perPair[id] = n
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	for _, id := range pairs {
		if perPair[id] != 2 {
			t.Errorf("pair %d has %d current judgments, want exactly the 2 it needs", id, perPair[id])
		}
	}
	checkProgress(t, a, "after two instances judged")
	want := 2 * len(pairs)
	for i, s := range instances {
		judged, needed, err := s.JudgingProgress(ctx, p.ID)
		if err != nil || judged != want || needed != want {
			t.Errorf("instance %d: progress %d of %d (%v), want %d of %d", i, judged, needed, err, want, want)
		}
		d, err := s.Desk(ctx, p.ID)
		if err != nil {
			t.Fatal(err)
		}
		if d.Progress.Judgments != want || d.Progress.Done != len(pairs) {
			t.Errorf("instance %d: desk shows %d judgments, %d pairs done; want %d and %d", i, d.Progress.Judgments, d.Progress.Done, want, len(pairs))
		}
	}

	// A change through one instance shows in the other's next read: a lead's new pair.
	err = b.Load(ctx, p.ID, func(l *Loader) error {
		q, err := l.Query(Query{ExternalID: "late", Text: "late query"})
		if err != nil {
			return err
		}
		d, err := l.Document(Document{ExternalID: "late-doc"})
		if err != nil {
			return err
		}
		_, err = l.Pair(PairSpec{QueryID: q, DocumentID: d})
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	if _, needed, err := a.JudgingProgress(ctx, p.ID); err != nil || needed != want+2 {
		t.Errorf("instance a after b added a pair: needed %d (%v), want %d", needed, err, want+2)
	}
	if d, err := a.Desk(ctx, p.ID); err != nil || d.Progress.Untouched != 1 {
		t.Errorf("instance a's desk after b added a pair: %+v (%v), want one untouched pair", d.Progress, err)
	}
}

// Instances starting together on a new PostgreSQL database agree on the session keys, so a
// cookie one of them signed is good at every other.
func TestInstancesStartingTogetherShareSessionKeys(t *testing.T) {
	dsn := pgtest.New(t)
	const n = 4
	stores := make([]*Store, n)
	for i := range stores {
		stores[i] = openAt(t, dsn)
	}
	keys := make([][]byte, n)
	errs := make([]error, n)
	var wg sync.WaitGroup
	for i, s := range stores {
		wg.Add(1)
		go func() {
			defer wg.Done()
			h, b, err := s.SessionKeys(context.Background())
			keys[i], errs[i] = append(h, b...), err
		}()
	}
	wg.Wait()
	for i := range stores {
		if errs[i] != nil {
			t.Fatalf("instance %d: %v", i, errs[i])
		}
		if string(keys[i]) != string(keys[0]) || len(keys[i]) != 96 {
			t.Errorf("instance %d has other session keys than instance 0", i)
		}
	}
}

// Instances started together on a new, empty database all open it: one migrates, the others
// wait and find the schema in place.
func TestInstancesStartingTogetherMigrateOnce(t *testing.T) {
	dsn := pgtest.New(t)
	const n = 4
	errs := make([]error, n)
	var wg sync.WaitGroup
	for i := range n {
		wg.Add(1)
		go func() {
			defer wg.Done()
			s, err := Open(context.Background(), dsn)
			if err == nil {
				s.Close()
			}
			errs[i] = err
		}()
	}
	wg.Wait()
	for i, err := range errs {
		if err != nil {
			t.Errorf("instance %d: %v", i, err)
		}
	}
	s := openAt(t, dsn)
	var applied, want int
	if err := s.r.QueryRow(`SELECT COUNT(*) FROM schema_migrations`).Scan(&applied); err != nil {
		t.Fatal(err)
	}
	all, _ := PostgresMigrations()
	if want = len(all); applied != want {
		t.Errorf("%d migrations recorded, want %d, each once", applied, want)
	}
}

// Preference judging takes the project's advisory lock as graded judging does: while another
// connection holds it, leasing a comparison, answering one (also when the request names no
// project: the comparison's project is locked), undoing and changing the task all wait, and
// each goes through once the lock is let go. pg_locks shows the waiter, so nothing is timed.
func TestPreferenceJudgingWaitsForTheProjectLockOnPostgres(t *testing.T) {
	s := openAt(t, pgtest.New(t))
	ctx := context.Background()
	p, lead, users := prefFixture(t, s, 1, 4, 2, func(q, d int) int { return 4 })
	v, err := s.NextComparison(ctx, p.ID, users[0])
	if err != nil {
		t.Fatal(err)
	}
	holder, err := s.w.Conn(ctx)
	if err != nil {
		t.Fatal(err)
	}
	defer holder.Close()
	waits := func(what string, fn func() error) {
		t.Helper()
		if _, err := holder.ExecContext(ctx, `SELECT pg_advisory_lock(?)`, p.ID); err != nil {
			t.Fatal(err)
		}
		done := make(chan error, 1)
		go func() { done <- fn() }()
		for waiting := false; !waiting; {
			select {
			case err := <-done:
				holder.ExecContext(ctx, `SELECT pg_advisory_unlock(?)`, p.ID)
				t.Fatalf("%s went through while the project's lock was held (%v)", what, err)
			case <-time.After(10 * time.Millisecond):
			}
			if err := holder.QueryRowContext(ctx, `SELECT EXISTS (SELECT 1 FROM pg_locks
				WHERE locktype = 'advisory' AND objid = ? AND NOT granted)`, p.ID).Scan(&waiting); err != nil {
				t.Fatal(err)
			}
		}
		if _, err := holder.ExecContext(ctx, `SELECT pg_advisory_unlock(?)`, p.ID); err != nil {
			t.Fatal(err)
		}
		if err := <-done; err != nil {
			t.Fatalf("%s: %v", what, err)
		}
	}
	waits("leasing a comparison", func() error {
		_, err := s.NextComparison(ctx, p.ID, users[1])
		return err
	})
	waits("answering without the project", func() error {
		_, err := s.AnswerComparison(ctx, PreferenceSubmission{ComparisonID: v.ComparisonID, UserID: users[0],
			LeftDoc: v.Left.ID, Outcome: better(v)})
		return err
	})
	waits("undoing", func() error {
		_, err := s.UndoPreference(ctx, p.ID, users[0])
		return err
	})
	waits("changing the task", func() error { return s.SetTaskKind(ctx, p.ID, TaskPreference, nil, lead.ID) })
}

// On a young PostgreSQL database, before judgments have statistics, the search for an open
// pair of the batch must still probe each pair's judgments by (pair, assessor) rather than walk
// every current judgment of the assessor once per pair: that walk grew with an assessor's
// history and held the project's lock while it ran.
func TestBatchSearchProbesJudgmentsWithoutStatistics(t *testing.T) {
	s := openAt(t, pgtest.New(t))
	ctx := context.Background()
	p, _, _, users := fixture(t, s, 2, 30, 1)
	// 30 judgments by the assessor, none analysed since the tables were created empty.
	for {
		v, err := s.NextPair(ctx, p.ID, users[0])
		if errors.Is(err, ErrNoWork) {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		if _, err := s.Submit(ctx, Submission{PairID: v.PairID, UserID: users[0], Grade: grade(1)}); err != nil {
			t.Fatal(err)
		}
	}
	var analysed sql.NullString
	if err := s.r.QueryRowContext(ctx, `SELECT COALESCE(last_analyze, last_autoanalyze)::text FROM pg_stat_user_tables WHERE relname = 'judgments'`).Scan(&analysed); err != nil {
		t.Fatal(err)
	}
	if analysed.Valid {
		t.Fatalf("judgments were analysed at %s: the test needs a table without statistics", analysed.String)
	}
	var query int64
	if err := s.r.QueryRowContext(ctx, `SELECT MIN(query_id) FROM pairs WHERE project_id = ?`, p.ID).Scan(&query); err != nil {
		t.Fatal(err)
	}
	rows, err := s.r.QueryContext(ctx, `EXPLAIN `+batchPairSQL, p.ID, users[0], "2026-01-01T00:00:00.000Z", 2, 5, 6, query)
	if err != nil {
		t.Fatal(err)
	}
	defer rows.Close()
	var plan []string
	for rows.Next() {
		var line string
		if err := rows.Scan(&line); err != nil {
			t.Fatal(err)
		}
		plan = append(plan, line)
	}
	text := strings.Join(plan, "\n")
	if !strings.Contains(text, "Index Cond: ((pair_id = p.id) AND (user_id = ") || strings.Contains(text, "Anti Join") {
		t.Errorf("the batch search does not probe judgments by pair and assessor:\n%s", text)
	}
}
