package store

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"testing"
	"time"
)

// checkQueryProgress compares the trigger-kept per-query totals with a fresh count.
func checkQueryProgress(t *testing.T, s *Store) {
	t.Helper()
	var bad int
	err := s.r.QueryRow(`SELECT COUNT(*) FROM queries q LEFT JOIN query_progress g ON g.query_id = q.id
		WHERE COALESCE(g.pairs, 0) != (SELECT COUNT(*) FROM pairs p WHERE p.query_id = q.id AND p.gold_grade IS NULL)
		OR COALESCE(g.judged, 0) != (SELECT COALESCE(SUM(p.judged), 0) FROM pairs p WHERE p.query_id = q.id AND p.gold_grade IS NULL)
		OR (g.pairs > 0 AND g.top_priority != (SELECT MAX(p.priority) FROM pairs p WHERE p.query_id = q.id AND p.gold_grade IS NULL))`).Scan(&bad)
	if err != nil {
		t.Fatal(err)
	}
	if bad != 0 {
		t.Errorf("%d queries have per-query totals that disagree with their pairs", bad)
	}
}

// checkJudgingProgress compares the cached judging progress (JudgingProgress) with a fresh
// count (ProjectProgress) after step.
func checkJudgingProgress(t *testing.T, s *Store, projectID int64, step string) {
	t.Helper()
	ctx := context.Background()
	j, n, err := s.JudgingProgress(ctx, projectID)
	if err != nil {
		t.Fatal(err)
	}
	full, err := s.ProjectProgress(ctx, projectID)
	if err != nil {
		t.Fatal(err)
	}
	if j != full.Judgments || n != full.Needed {
		t.Errorf("%s: cached progress %d of %d, fresh count %d of %d", step, j, n, full.Judgments, full.Needed)
	}
}

func TestQueryProgressFollowsEveryChange(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, pairs, users := fixture(t, s, 3, 4, 2)
	checkQueryProgress(t, s)
	for _, pid := range pairs[:6] {
		if _, err := s.Submit(ctx, Submission{PairID: pid, UserID: users[0], Grade: grade(2)}); err != nil {
			t.Fatal(err)
		}
	}
	checkQueryProgress(t, s)
	if _, err := s.Undo(ctx, p.ID, users[0]); err != nil {
		t.Fatal(err)
	}
	checkQueryProgress(t, s)
	// Re-prioritise, make gold, move and delete pairs.
	for _, q := range []string{
		`UPDATE pairs SET priority = 7 WHERE id = ` + fmt.Sprint(pairs[1]),
		`UPDATE pairs SET gold_grade = 3 WHERE id = ` + fmt.Sprint(pairs[0]),
		`UPDATE pairs SET gold_grade = NULL WHERE id = ` + fmt.Sprint(pairs[0]),
		`UPDATE pairs SET query_id = (SELECT query_id FROM pairs WHERE id = ` + fmt.Sprint(pairs[11]) + `) WHERE id = ` + fmt.Sprint(pairs[2]),
		`DELETE FROM pairs WHERE id = ` + fmt.Sprint(pairs[1]),
	} {
		if _, err := s.w.ExecContext(ctx, q); err != nil {
			t.Fatalf("%s: %v", q, err)
		}
		checkQueryProgress(t, s)
	}
	checkJudgingProgress(t, s, p.ID, "after the pairs changed")
}

// judgeAll lets one assessor take and grade pairs until none is left, returning the pairs in
// the order they were served.
func judgeAll(t *testing.T, s *Store, projectID, userID int64) []PairView {
	t.Helper()
	ctx := context.Background()
	var out []PairView
	for {
		v, err := s.NextPair(ctx, projectID, userID)
		if errors.Is(err, ErrNoWork) {
			return out
		}
		if err != nil {
			t.Fatal(err)
		}
		out = append(out, v)
		if _, err := s.Submit(ctx, Submission{PairID: v.PairID, UserID: userID, Grade: grade(1)}); err != nil {
			t.Fatal(err)
		}
	}
}

func TestBatchesStayOnAQueryInAnOrderOfTheirOwn(t *testing.T) {
	s := openTest(t)
	p, _, pairs, users := fixture(t, s, 4, 6, 2)
	a := judgeAll(t, s, p.ID, users[0])
	if len(a) != len(pairs) {
		t.Fatalf("assessor judged %d pairs, want all %d", len(a), len(pairs))
	}
	// Each query's pairs come together: the query changes exactly three times for four queries.
	changes := 0
	for i := 1; i < len(a); i++ {
		if a[i].Query.ID != a[i-1].Query.ID {
			changes++
		}
	}
	if changes != 3 {
		t.Errorf("query changed %d times in one assessor's sequence, want 3 (one batch per query)", changes)
	}
	b := judgeAll(t, s, p.ID, users[1])
	// Every query has coverage 1 after the first assessor, so the second starts where the ids
	// do; within a query, the two orders differ somewhere.
	orderOf := func(vs []PairView, q int64) []int64 {
		var out []int64
		for _, v := range vs {
			if v.Query.ID == q {
				out = append(out, v.PairID)
			}
		}
		return out
	}
	differ := 0
	for _, q := range []int64{a[0].Query.ID, a[6].Query.ID, a[12].Query.ID, a[18].Query.ID} {
		if fmt.Sprint(orderOf(a, q)) != fmt.Sprint(orderOf(b, q)) {
			differ++
		}
	}
	if differ < 3 {
		t.Errorf("only %d of 4 queries were shown in a different order to the second assessor", differ)
	}
}

func TestLeastCoveredQueryAndPriorityComeFirst(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, pairs, users := fixture(t, s, 3, 2, 3)
	// Query A has a judgment already; B and C none: a new batch starts on B.
	if _, err := s.Submit(ctx, Submission{PairID: pairs[0], UserID: users[0], Grade: grade(2)}); err != nil {
		t.Fatal(err)
	}
	if v := nextPair(t, s, p.ID, users[1]); v.Query.ExternalID != "B" {
		t.Errorf("new batch started on query %s, want the least-covered B", v.Query.ExternalID)
	}
	// A priority on a pair of C moves C (and that pair) ahead of everything.
	if _, err := s.w.ExecContext(ctx, `UPDATE pairs SET priority = 5 WHERE id = ?`, pairs[5]); err != nil {
		t.Fatal(err)
	}
	if v := nextPair(t, s, p.ID, users[2]); v.PairID != pairs[5] {
		t.Errorf("assessor got pair %d, want the prioritised pair %d", v.PairID, pairs[5])
	}
}

func TestUndoWithdrawsAndReturnsThePair(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, lead, pairs, users := fixture(t, s, 1, 3, 2)
	first := nextPair(t, s, p.ID, users[0])
	if _, err := s.Submit(ctx, Submission{PairID: first.PairID, UserID: users[0], Grade: grade(3)}); err != nil {
		t.Fatal(err)
	}
	second := nextPair(t, s, p.ID, users[0]) // on screen when the assessor presses undo
	j, err := s.Undo(ctx, p.ID, users[0])
	if err != nil {
		t.Fatal(err)
	}
	if j.PairID != first.PairID || !j.Withdrawn || j.Current {
		t.Fatalf("undo returned %+v, want the withdrawn judgment of pair %d", j, first.PairID)
	}
	h, _ := s.JudgmentHistory(ctx, first.PairID, users[0])
	if len(h) != 1 || !h[0].Withdrawn || h[0].Current {
		t.Errorf("after undo the history is %+v, want the one row kept, withdrawn and not current", h)
	}
	var judged int
	s.r.QueryRow(`SELECT judged FROM pairs WHERE id = ?`, first.PairID).Scan(&judged)
	if judged != 0 {
		t.Errorf("pair still counts %d judgments after undo", judged)
	}
	// A second undo has nothing to take back.
	if _, err := s.Undo(ctx, p.ID, users[0]); ErrorCode(err) != CodeConflict {
		t.Errorf("second undo: %v, want a conflict", err)
	}
	next, err := s.NextPair(ctx, p.ID, users[0])
	if err != nil || next.PairID != first.PairID {
		t.Fatalf("after undo the assessor got pair %d (%v), want the undone pair %d back", next.PairID, err, first.PairID)
	}
	if _, err := s.Submit(ctx, Submission{PairID: first.PairID, UserID: users[0], Grade: grade(1)}); err != nil {
		t.Fatal(err)
	}
	if v, _ := s.NextPair(ctx, p.ID, users[0]); v.PairID != second.PairID {
		t.Errorf("then got pair %d, want the pair that was on screen, %d", v.PairID, second.PairID)
	}
	// Once a lead adjudicates, neither undo nor change is possible.
	if _, err := s.w.ExecContext(ctx, `INSERT INTO adjudications(pair_id, lead_id, grade, created_at) VALUES (?, ?, 2, 'x')`, first.PairID, lead.ID); err != nil {
		t.Fatal(err)
	}
	if _, err := s.Undo(ctx, p.ID, users[0]); err != nil {
		// The latest judgment is now of first.PairID? No: the last submitted was first.PairID.
		if ErrorCode(err) != CodeConflict || !strings.Contains(err.Error(), "settled") {
			t.Errorf("undo after adjudication: %v, want a conflict naming the lead's decision", err)
		}
	} else {
		t.Error("undo of an adjudicated pair's judgment was accepted")
	}
	if _, err := s.Revise(ctx, Submission{PairID: first.PairID, UserID: users[0], Grade: grade(4)}); ErrorCode(err) != CodeConflict {
		t.Errorf("change after adjudication: %v, want a conflict", err)
	}
	if _, err := s.Revise(ctx, Submission{PairID: pairs[2], UserID: users[1], Grade: grade(4)}); ErrorCode(err) != CodeNotFound {
		t.Errorf("change of a pair never judged: %v, want not found", err)
	}
}

func TestChangesRespectTheProjectSetting(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, pairs, users := fixture(t, s, 1, 2, 1)
	if _, err := s.w.ExecContext(ctx, `UPDATE projects SET allow_changes = 0 WHERE id = ?`, p.ID); err != nil {
		t.Fatal(err)
	}
	if _, err := s.Submit(ctx, Submission{PairID: pairs[0], UserID: users[0], Grade: grade(2)}); err != nil {
		t.Fatal(err)
	}
	if _, err := s.Revise(ctx, Submission{PairID: pairs[0], UserID: users[0], Grade: grade(3)}); ErrorCode(err) != CodeConflict {
		t.Errorf("change with allow_changes off: %v, want a conflict", err)
	}
	mine, err := s.JudgmentsByAssessor(ctx, p.ID, users[0], 10)
	if err != nil {
		t.Fatal(err)
	}
	if len(mine) != 1 || mine[0].Changeable || *mine[0].Grade != 2 {
		t.Errorf("my judgments = %+v, want one grade 2 marked not changeable", mine)
	}
}

func TestGoldPairsAreServedOnceAndScored(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, pairs, users := fixture(t, s, 2, 3, 2)
	// Two gold pairs with known grades 3 and 0; every request may draw gold.
	for i, g := range []int{3, 0} {
		if _, err := s.w.ExecContext(ctx, `UPDATE pairs SET gold_grade = ? WHERE id = ?`, g, pairs[i]); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := s.w.ExecContext(ctx, `UPDATE projects SET gold_rate = 1 WHERE id = ?`, p.ID); err != nil {
		t.Fatal(err)
	}
	served := judgeAll(t, s, p.ID, users[0]) // grades everything 1
	gold := 0
	for _, v := range served {
		if v.PairID == pairs[0] || v.PairID == pairs[1] {
			gold++
		}
	}
	if gold != 2 || len(served) != 6 {
		t.Errorf("served %d pairs with %d gold, want 6 with each gold pair once", len(served), gold)
	}
	prog, _ := s.ProjectProgress(ctx, p.ID)
	if prog.Pairs != 4 || prog.Judgments != 4 {
		t.Errorf("progress %+v: gold pairs must not count (want 4 pairs, 4 judgments)", prog)
	}
	scores, err := s.GoldAccuracy(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	// Grades 1 and 1 against gold 3 and 0: no exact match, errors 2 and 1, mean 1.5.
	if len(scores) != 1 || scores[0].Judged != 2 || scores[0].Exact != 0 || scores[0].MeanAbsError != 1.5 {
		t.Errorf("gold scores = %+v, want 2 judged, 0 exact, mean absolute error 1.5", scores)
	}
}

func TestFlaggedPairsCountWithoutNames(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, pairs, users := fixture(t, s, 1, 2, 2)
	for _, u := range users {
		if _, err := s.Submit(ctx, Submission{PairID: pairs[1], UserID: u, CannotJudge: "disturbing"}); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := s.Submit(ctx, Submission{PairID: pairs[0], UserID: users[0], CannotJudge: "broken"}); err != nil {
		t.Fatal(err)
	}
	f, err := s.FlaggedPairs(ctx, p.ID, 10)
	if err != nil {
		t.Fatal(err)
	}
	if len(f) != 2 || f[0].PairID != pairs[1] || f[0].Reason != "disturbing" || f[0].Count != 2 || f[1].Reason != "broken" {
		t.Errorf("flagged = %+v, want the disturbing pair (2) first, then the broken one", f)
	}
	today, overall, err := s.JudgmentCountsByAssessor(ctx, p.ID, users[0], time.Now().Add(-time.Hour))
	if err != nil || today != 2 || overall != 2 {
		t.Errorf("counts today %d overall %d (%v), want 2 and 2", today, overall, err)
	}
}

// The assignment statements must reach pairs through indexes: a plan that scans the pairs
// table would make every request cost the size of the project.
func TestAssignmentPlansUseIndexes(t *testing.T) {
	s := openSQLiteTest(t) // SQLite's plans (EXPLAIN QUERY PLAN); PostgreSQL plans from statistics
	fixture(t, s, 2, 2, 1)
	// Without statistics (a fresh file) and with them (after ANALYZE on a small project).
	checkPlans(t, s)
	if _, err := s.w.Exec(`ANALYZE`); err != nil {
		t.Fatal(err)
	}
	checkPlans(t, s)
}

func checkPlans(t *testing.T, s *Store) {
	t.Helper()
	for name, q := range map[string]string{"resume": resumeLeaseSQL, "batch": batchPairSQL, "next query": nextQuerySQL, "gold": goldPairSQL, "spread": spreadQuerySQL} {
		args := []any{1, 2, "2026-01-01T00:00:00.000Z", 3, 5, 6, 1}
		if name == "spread" {
			args = append(args, 0, 0.0, 1)
		}
		rows, err := s.r.Query(`EXPLAIN QUERY PLAN `+q, args...)
		if err != nil {
			t.Fatalf("%s: %v", name, err)
		}
		var plan []string
		for rows.Next() {
			var id, parent, unused int
			var detail string
			rows.Scan(&id, &parent, &unused, &detail)
			plan = append(plan, detail)
		}
		rows.Close()
		for _, step := range plan {
			if strings.HasPrefix(step, "SCAN ") || strings.Contains(step, "pairs_judged (project_id") ||
				strings.Contains(step, "judgments_user_latest") || strings.Contains(step, "query_progress_totals") {
				t.Errorf("%s plan walks a whole table, project or assessor history: %q\n%s", name, step, strings.Join(plan, "\n"))
			}
		}
		if (name == "next query" || name == "spread") && strings.Contains(strings.Join(plan, "\n"), "TEMP B-TREE") {
			t.Errorf("next query sorts every query of the project instead of walking query_progress_order:\n%s", strings.Join(plan, "\n"))
		}
		t.Logf("%s:\n  %s", name, strings.Join(plan, "\n  "))
	}
}

// Assessors starting batches at once are spread over equally ranked queries rather than all
// piling onto the first: the first one takes query A (the lowest id, nobody on it), the rest,
// finding it worked on, start at random points among the 40 untouched queries. Ten random
// picks out of 39 landing on fewer than 5 distinct queries has a probability below 1e-6.
func TestNewBatchesSpreadOverEquallyRankedQueries(t *testing.T) {
	s := openTest(t)
	p, _, _, users := fixture(t, s, 40, 3, 11)
	if first := nextPair(t, s, p.ID, users[0]); first.Query.ExternalID != "A" {
		t.Errorf("the first batch started on %s, want A", first.Query.ExternalID)
	}
	seen := map[int64]bool{}
	for _, u := range users[1:] {
		seen[nextPair(t, s, p.ID, u).Query.ID] = true
	}
	if len(seen) < 5 {
		t.Errorf("10 assessors started on %d distinct queries, want them spread", len(seen))
	}
}
