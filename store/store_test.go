package store

import (
	"context"
	"errors"
	"os"
	"path/filepath"
	"slices"
	"sync"
	"testing"

	"golang.org/x/crypto/bcrypt"

	"github.com/pertinent/pertinent/internal/pgtest"
)

// testEngine is the engine the store's tests run on: SQLite unless PERTINENT_TEST_DB=postgres,
// which scripts/test.sh sets for a second pass of this package. Each test then gets a fresh
// database in the test binary's one pgtest cluster (TestMain).
func testEngine() string {
	if os.Getenv("PERTINENT_TEST_DB") == "postgres" {
		return "postgres"
	}
	return "sqlite"
}

// openTest opens a fresh, migrated store on the engine the tests run on.
func openTest(t *testing.T) *Store {
	t.Helper()
	if testEngine() == "postgres" {
		return openAt(t, pgtest.New(t))
	}
	return openSQLiteTest(t)
}

// openSQLiteTest is openTest always on SQLite, for what only SQLite has (its file, its
// pragmas, its query plans): such tests run on SQLite in both passes rather than skip.
func openSQLiteTest(t *testing.T) *Store {
	t.Helper()
	return openAt(t, filepath.Join(t.TempDir(), "t.db"))
}

func openAt(t *testing.T, path string) *Store {
	t.Helper()
	SetPasswordCost(bcrypt.MinCost)
	s, err := Open(context.Background(), path)
	if err != nil {
		t.Fatal(err)
	}
	t.Cleanup(func() { s.Close() })
	return s
}

func TestMigrateEmptyFileToLatest(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	all, err := Migrations()
	if err != nil {
		t.Fatal(err)
	}
	v, err := s.SchemaVersion(ctx)
	if err != nil {
		t.Fatal(err)
	}
	if want := all[len(all)-1].Version; v != want {
		t.Fatalf("schema version %d, want %d", v, want)
	}
	tables, err := s.Tables(ctx)
	if err != nil {
		t.Fatal(err)
	}
	for _, want := range []string{"adjudications", "api_tokens", "audit_events", "documents", "feature_names",
		"guideline_revisions", "judgments", "leases", "preference_answers", "preference_comparisons", "preference_leases", "pair_features", "pair_sources", "pairs", "password_links",
		"project_members", "projects", "queries", "scale_levels", "schema_migrations", "sessions", "settings", "users"} {
		if !slices.Contains(tables, want) {
			t.Errorf("table %s missing after migration; have %v", want, tables)
		}
	}
	// Migrating again is a no-op, and the pragmas the store relies on are in force.
	if err := s.Migrate(ctx); err != nil {
		t.Fatal(err)
	}
	if s.Postgres() {
		return // PostgreSQL has no pragmas; its schema is compared in schema_engines_test.go
	}
	var mode string
	var fk int
	s.w.QueryRowContext(ctx, "PRAGMA journal_mode").Scan(&mode)
	s.w.QueryRowContext(ctx, "PRAGMA foreign_keys").Scan(&fk)
	if mode != "wal" || fk != 1 {
		t.Errorf("journal_mode=%s foreign_keys=%d, want wal and 1", mode, fk)
	}
	var ro int
	s.r.QueryRowContext(ctx, "PRAGMA query_only").Scan(&ro)
	if ro != 1 {
		t.Errorf("reader connections should be query-only")
	}
}

func TestJudgmentHistoryConstraintOneCurrentPerAssessor(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	_, _, pairs, users := fixture(t, s, 1, 1, 2)
	// The database itself refuses a second current judgment for the same pair and assessor.
	_, err := s.w.ExecContext(ctx, `INSERT INTO judgments(pair_id, user_id, grade, created_at) VALUES (?, ?, 1, 'x'), (?, ?, 2, 'x')`,
		pairs[0], users[0], pairs[0], users[0])
	if err == nil {
		t.Fatal("two current judgments by one assessor for one pair were accepted")
	}
}

// leadProject creates the lead account "lead" and a project it leads, made from np.
func leadProject(tb testing.TB, s *Store, np NewProject) (Project, User) {
	tb.Helper()
	ctx := context.Background()
	lead, err := s.CreateUser(ctx, "lead", "", RoleLead, "long enough password")
	if err != nil {
		tb.Fatal(err)
	}
	p, err := s.CreateProject(ctx, np, lead.ID)
	if err != nil {
		tb.Fatal(err)
	}
	return p, lead
}

// nextPair leases the next pair to an assessor, failing the test when none comes.
func nextPair(t *testing.T, s *Store, projectID, userID int64) PairView {
	t.Helper()
	v, err := s.NextPair(context.Background(), projectID, userID)
	if err != nil {
		t.Fatal(err)
	}
	return v
}

// fixture makes a project with nq queries × nd documents and na assessors, needing 2
// judgments per pair.
func fixture(t *testing.T, s *Store, nq, nd, na int) (Project, User, []int64, []int64) {
	t.Helper()
	ctx := context.Background()
	p, lead := leadProject(t, s, NewProject{Name: "p", JudgmentsPerPair: 2, AllowChanges: true})
	var users []int64
	for i := 0; i < na; i++ {
		u, err := s.CreateUser(ctx, "a"+string(rune('a'+i)), "", RoleAssessor, "long enough password")
		if err != nil {
			t.Fatal(err)
		}
		if err := s.SetMember(ctx, p.ID, u.ID, RoleAssessor, lead.ID); err != nil {
			t.Fatal(err)
		}
		users = append(users, u.ID)
	}
	var pairs []int64
	err := s.Load(ctx, p.ID, func(l *Loader) error {
		for q := 0; q < nq; q++ {
			qid, err := l.Query(Query{ExternalID: string(rune('A' + q)), Text: "query"})
			if err != nil {
				return err
			}
			for d := 0; d < nd; d++ {
				did, err := l.Document(Document{ExternalID: string(rune('A'+q)) + string(rune('a'+d))})
				if err != nil {
					return err
				}
				pid, err := l.Pair(PairSpec{QueryID: qid, DocumentID: did})
				if err != nil {
					return err
				}
				pairs = append(pairs, pid)
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return p, lead, pairs, users
}

// Many assessors draining a project at once: every pair ends with exactly the judgments it
// needs, from different assessors, and each assessor's batches stay on one query at a time.
func TestConcurrentAssessorsNeverOverfillPairs(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, pairs, users := fixture(t, s, 5, 8, 12)
	var wg sync.WaitGroup
	errs := make(chan error, len(users))
	for _, u := range users {
		wg.Add(1)
		go func(u int64) {
			defer wg.Done()
			for {
				v, err := s.NextPair(ctx, p.ID, u)
				if errors.Is(err, ErrNoWork) {
					return
				}
				if err != nil {
					errs <- err
					return
				}
				g := int(u % 5)
				if _, err := s.Submit(ctx, Submission{PairID: v.PairID, UserID: u, Grade: &g}); err != nil {
					errs <- err
					return
				}
			}
		}(u)
	}
	wg.Wait()
	close(errs)
	for err := range errs {
		t.Fatal(err)
	}
	var bad int
	s.r.QueryRowContext(ctx, `SELECT COUNT(*) FROM pairs x WHERE x.judged != 2
		OR (SELECT COUNT(DISTINCT user_id) FROM judgments j WHERE j.pair_id = x.id AND j.current = 1) != 2`).Scan(&bad)
	if bad != 0 {
		t.Errorf("%d of %d pairs do not have exactly 2 judgments from 2 assessors", bad, len(pairs))
	}
}

func TestFullPairRefusesAThirdAssessor(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	_, _, pairs, users := fixture(t, s, 1, 1, 3)
	g := 2
	for i, u := range users {
		_, err := s.Submit(ctx, Submission{PairID: pairs[0], UserID: u, Grade: &g})
		if i < 2 && err != nil {
			t.Fatal(err)
		}
		if i == 2 && ErrorCode(err) != CodeConflict {
			t.Errorf("third judgment of a pair needing two: err = %v, want a conflict", err)
		}
	}
	// An assessor who already judged may still revise.
	g = 3
	if _, err := s.Submit(ctx, Submission{PairID: pairs[0], UserID: users[0], Grade: &g}); err != nil {
		t.Errorf("revising a judgment on a full pair: %v", err)
	}
}

func TestExpiredLeaseReturnsPairToPool(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, pairs, users := fixture(t, s, 1, 1, 3)
	for _, u := range users[:2] {
		nextPair(t, s, p.ID, u)
	}
	if _, err := s.NextPair(ctx, p.ID, users[2]); !errors.Is(err, ErrNoWork) {
		t.Fatalf("a pair needing 2 judgments and leased to 2 assessors went to a third: %v", err)
	}
	if _, err := s.w.ExecContext(ctx, `UPDATE leases SET expires_at = '2000-01-01T00:00:00.000Z' WHERE user_id = ?`, users[0]); err != nil {
		t.Fatal(err)
	}
	v, err := s.NextPair(ctx, p.ID, users[2])
	if err != nil || v.PairID != pairs[0] {
		t.Fatalf("after one lease expired the third assessor got %v, %v; want pair %d", v.PairID, err, pairs[0])
	}
}

func TestProgressOfEmptyProject(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, err := s.CreateProject(ctx, NewProject{Name: "empty"}, 0)
	if err != nil {
		t.Fatal(err)
	}
	prog, err := s.ProjectProgress(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if prog != (Progress{}) {
		t.Errorf("a project without pairs reports %+v, want all zero", prog)
	}
}
