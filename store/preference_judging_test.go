package store

import (
	"context"
	"errors"
	"path/filepath"
	"slices"
	"sync"
	"testing"
	"time"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/internal/testclock"
	"github.com/pertinent/pertinent/preference"
)

// prefFixture makes a project of nq queries × nd documents and na assessors (two answers per
// comparison), settles every document's grade by adjudication (grade(q, d)) and switches it
// to preferences with the default threshold (3 on the 0–4 scale).
func prefFixture(t *testing.T, s *Store, nq, nd, na int, grade func(q, d int) int) (Project, User, []int64) {
	t.Helper()
	ctx := context.Background()
	p, lead, pairs, users := fixture(t, s, nq, nd, na)
	for i, pid := range pairs {
		if _, err := s.Adjudicate(ctx, pid, lead.ID, grade(i/nd, i%nd), "settled"); err != nil {
			t.Fatal(err)
		}
	}
	if err := s.SetTaskKind(ctx, p.ID, TaskPreference, nil, lead.ID); err != nil {
		t.Fatal(err)
	}
	return p, lead, users
}

// better is the test's assessors' opinion: the document with the smaller external id is the
// better one.
func better(v ComparisonView) string {
	if v.Left.ExternalID < v.Right.ExternalID {
		return "left"
	}
	return "right"
}

func answer(t *testing.T, s *Store, v ComparisonView, user int64, outcome string) PreferenceAnswer {
	t.Helper()
	a, err := s.AnswerComparison(context.Background(), PreferenceSubmission{ComparisonID: v.ComparisonID, ProjectID: v.ProjectID,
		UserID: user, LeftDoc: v.Left.ID, Outcome: outcome})
	if err != nil {
		t.Fatal(err)
	}
	return a
}

// Only documents at or above the threshold are compared; a graded project asks nothing.
func TestPreferenceComparesDocumentsAboveThreshold(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, lead, pairs, users := fixture(t, s, 1, 6, 2)
	grades := []int{4, 1, 3, 2, 4, 0} // documents Aa, Ac and Ae reach 3
	for i, pid := range pairs {
		if _, err := s.Adjudicate(ctx, pid, lead.ID, grades[i], ""); err != nil {
			t.Fatal(err)
		}
	}
	if _, err := s.NextComparison(ctx, p.ID, users[0]); !errors.Is(err, ErrNoWork) {
		t.Fatalf("a graded project gave a comparison: %v", err)
	}
	if err := s.SetTaskKind(ctx, p.ID, TaskPreference, nil, lead.ID); err != nil {
		t.Fatal(err)
	}
	// Both assessors answer whatever they are given until nothing is left.
	drain := func() []string {
		seen := map[string]bool{}
		for idle := 0; idle < len(users); {
			idle = 0
			for _, u := range users {
				v, err := s.NextComparison(ctx, p.ID, u)
				if errors.Is(err, ErrNoWork) {
					idle++
					continue
				}
				if err != nil {
					t.Fatal(err)
				}
				seen[v.Left.ExternalID], seen[v.Right.ExternalID] = true, true
				answer(t, s, v, u, better(v))
			}
		}
		var got []string
		for d := range seen {
			got = append(got, d)
		}
		slices.Sort(got)
		return got
	}
	if got, want := drain(), []string{"Aa", "Ac", "Ae"}; !slices.Equal(got, want) {
		t.Errorf("compared documents %v, want %v (those graded 3 or 4)", got, want)
	}
	// A lower threshold brings grade 2 in, and the schedule resumes from the answers so far.
	two := 2
	if err := s.SetTaskKind(ctx, p.ID, TaskPreference, &two, lead.ID); err != nil {
		t.Fatal(err)
	}
	if got := drain(); !slices.Contains(got, "Ad") || slices.Contains(got, "Ab") || slices.Contains(got, "Af") {
		t.Errorf("after lowering the threshold to 2 the compared documents were %v: want Ad among them, Ab and Af not", got)
	}
	js, err := s.PreferenceJudgments(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	plan, err := preference.Schedule("A", []string{"Aa", "Ac", "Ad", "Ae"}, js, 2)
	if err != nil || !plan.Done || !slices.Equal(plan.Order, []string{"Aa", "Ac", "Ad", "Ae"}) {
		t.Errorf("the four documents' order: %+v, %v", plan, err)
	}
	five := 5
	if err := s.SetTaskKind(ctx, p.ID, TaskPreference, &five, lead.ID); pertinent.CodeOf(err) != CodeInvalid {
		t.Errorf("threshold 5 on a 0–4 scale: %v, want Invalid", err)
	}
	if err := s.SetTaskKind(ctx, p.ID, "ranked", nil, lead.ID); pertinent.CodeOf(err) != CodeInvalid {
		t.Errorf("an unknown task kind: %v, want Invalid", err)
	}
}

// Many assessors answering at once: no comparison gets more answers than it needs, no
// assessor answers one twice, a query costs no more than merge sort's worst case, and the
// answers sort the documents as the assessors see them.
func TestConcurrentAssessorsNeverOverfillComparisons(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	const nd = 7
	p, _, users := prefFixture(t, s, 2, nd, 6, func(q, d int) int { return 4 })
	var wg sync.WaitGroup
	errs := make(chan error, len(users))
	for _, u := range users {
		wg.Add(1)
		go func(u int64) {
			defer wg.Done()
			for {
				v, err := s.NextComparison(ctx, p.ID, u)
				if errors.Is(err, ErrNoWork) {
					// The next comparisons of a sort open as others answer: come back
					// until nothing is open for anyone.
					open, _, _, err := s.PreferenceProgress(ctx, p.ID)
					if err != nil {
						errs <- err
						return
					}
					if open == 0 {
						return
					}
					time.Sleep(time.Millisecond)
					continue
				}
				if err != nil {
					errs <- err
					return
				}
				_, err = s.AnswerComparison(ctx, PreferenceSubmission{ComparisonID: v.ComparisonID, ProjectID: p.ID, UserID: u,
					LeftDoc: v.Left.ID, Outcome: better(v)})
				if err != nil {
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
	js, err := s.PreferenceJudgments(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	byPair := map[[3]string][]string{}
	for _, j := range js {
		a, b := min(j.Left, j.Right), max(j.Left, j.Right)
		k := [3]string{j.Query, a, b}
		if slices.Contains(byPair[k], j.Assessor) {
			t.Errorf("%s answered %v twice", j.Assessor, k)
		}
		byPair[k] = append(byPair[k], j.Assessor)
	}
	perQuery := map[string]int{}
	for k, who := range byPair {
		if len(who) != 2 {
			t.Errorf("comparison %v has %d answers, want 2", k, len(who))
		}
		perQuery[k[0]]++
	}
	// Merge sort's worst case for 7 items is 7·3 − 2³ + 1 = 14 comparisons (Knuth, TAOCP
	// vol. 3 §5.2.4, from memory).
	for q, n := range perQuery {
		if n > 14 {
			t.Errorf("query %s took %d comparisons, more than merge sort's worst case of 14", q, n)
		}
		var docs []string
		for d := 0; d < nd; d++ {
			docs = append(docs, q+string(rune('a'+d)))
		}
		plan, err := preference.Schedule(q, docs, preference.ByQuery(js)[q], 2)
		if err != nil {
			t.Fatal(err)
		}
		if !plan.Done || !slices.Equal(plan.Order, docs) {
			t.Errorf("query %s: done %v, order %v, want %v", q, plan.Done, plan.Order, docs)
		}
	}
	if open, _, _, err := s.PreferenceProgress(ctx, p.ID); err != nil || open != 0 {
		t.Errorf("open comparisons after the drain: %d, %v", open, err)
	}
}

// A lease holds its place against k: with one answer per comparison, a second assessor is
// not given the comparison on another's screen until that lease has run out.
func TestPreferenceLeaseCountsUntilItExpires(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	clock := testclock.New(time.Date(2026, 3, 1, 9, 0, 0, 0, time.UTC))
	s.SetClock(clock.Now)
	p, lead, users := prefFixture(t, s, 1, 2, 2, func(q, d int) int { return 4 })
	ps := p.Settings()
	ps.JudgmentsPerPair = 1
	if err := s.UpdateProject(ctx, p.ID, ps, lead.ID); err != nil {
		t.Fatal(err)
	}
	v, err := s.NextComparison(ctx, p.ID, users[0])
	if err != nil {
		t.Fatal(err)
	}
	again, err := s.NextComparison(ctx, p.ID, users[0])
	if err != nil || again.ComparisonID != v.ComparisonID || again.Left.ID != v.Left.ID {
		t.Fatalf("the same assessor asking again got %+v, %v; want the comparison on screen, placed as before", again, err)
	}
	if _, err := s.NextComparison(ctx, p.ID, users[1]); !errors.Is(err, ErrNoWork) {
		t.Fatalf("a second assessor got the leased comparison: %v", err)
	}
	clock.Advance(time.Duration(p.LeaseSeconds+1) * time.Second)
	w, err := s.NextComparison(ctx, p.ID, users[1])
	if err != nil || w.ComparisonID != v.ComparisonID {
		t.Fatalf("after the lease ran out: %+v, %v", w, err)
	}
	answer(t, s, w, users[1], "same")
	// The first assessor's late answer is refused: the comparison has what it needs.
	_, err = s.AnswerComparison(ctx, PreferenceSubmission{ComparisonID: v.ComparisonID, ProjectID: p.ID, UserID: users[0],
		LeftDoc: v.Left.ID, Outcome: "left"})
	if pertinent.CodeOf(err) != CodeConflict {
		t.Errorf("a late answer to a full comparison: %v, want Conflict", err)
	}
}

// Undo withdraws the latest answer, keeps the row, and gives the comparison back in the same
// placement; a "cannot judge" counts for nobody, and the flag and note are kept.
func TestPreferenceUndoCannotJudgeFlagAndNote(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, users := prefFixture(t, s, 1, 2, 3, func(q, d int) int { return 4 })
	v, err := s.NextComparison(ctx, p.ID, users[0])
	if err != nil {
		t.Fatal(err)
	}
	answer(t, s, v, users[0], "left")
	if _, err := s.NextComparison(ctx, p.ID, users[0]); !errors.Is(err, ErrNoWork) {
		t.Fatalf("the only comparison came again after it was answered: %v", err)
	}
	u, err := s.UndoPreference(ctx, p.ID, users[0])
	if err != nil || !u.Withdrawn || u.Outcome != "left" {
		t.Fatalf("undo: %+v, %v", u, err)
	}
	back, err := s.NextComparison(ctx, p.ID, users[0])
	if err != nil || back.ComparisonID != v.ComparisonID || back.Left.ID != v.Left.ID {
		t.Fatalf("after undo: %+v, %v; want the same comparison, placed as before", back, err)
	}
	if _, err := s.UndoPreference(ctx, p.ID, users[0]); pertinent.CodeOf(err) != CodeConflict {
		t.Errorf("a second undo: %v, want Conflict", err)
	}
	// Cannot judge, with the flag and a note: stored, and not counted among the two answers.
	_, err = s.AnswerComparison(ctx, PreferenceSubmission{ComparisonID: back.ComparisonID, ProjectID: p.ID, UserID: users[0],
		LeftDoc: back.Left.ID, CannotJudge: "disturbing", Flagged: true, Note: "graphic images on the right"})
	if err != nil {
		t.Fatal(err)
	}
	hist, err := s.PreferenceAnswersByAssessor(ctx, p.ID, users[0])
	if err != nil {
		t.Fatal(err)
	}
	if len(hist) != 2 || !hist[0].Withdrawn || hist[0].Current || !hist[1].Current || hist[1].CannotJudge != "disturbing" ||
		!hist[1].Flagged || hist[1].Note != "graphic images on the right" || hist[1].LeftDoc != v.Left.ID {
		t.Fatalf("history %+v", hist)
	}
	rep, err := s.PreferenceFigures(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if f := rep.FlaggedComparisons; len(f) != 1 || f[0].Flagged != 1 || f[0].Disturbing != 1 || f[0].DocumentA != "Aa" || f[0].DocumentB != "Ab" || rep.Flagged != 1 {
		t.Errorf("flagged comparisons %+v (%d flagged)", f, rep.Flagged)
	}
	for _, u := range users[1:] {
		w, err := s.NextComparison(ctx, p.ID, u)
		if err != nil {
			t.Fatalf("assessor %d: %v (a cannot-judge must not fill the comparison)", u, err)
		}
		answer(t, s, w, u, better(w))
	}
	if _, err := s.NextComparison(ctx, p.ID, users[0]); !errors.Is(err, ErrNoWork) {
		t.Errorf("an assessor who could not judge was asked again: %v", err)
	}
	js, _ := s.PreferenceJudgments(ctx, p.ID)
	if len(js) != 2 {
		t.Errorf("%d counted answers, want 2", len(js))
	}
}

// What the store refuses, before anything is written.
func TestPreferenceRefusals(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, lead, users := prefFixture(t, s, 1, 3, 2, func(q, d int) int { return 4 })
	v, err := s.NextComparison(ctx, p.ID, users[0])
	if err != nil {
		t.Fatal(err)
	}
	outsider, err := s.CreateUser(ctx, "outsider", "", RoleAssessor, "long enough password")
	if err != nil {
		t.Fatal(err)
	}
	sub := PreferenceSubmission{ComparisonID: v.ComparisonID, ProjectID: p.ID, UserID: users[0], LeftDoc: v.Left.ID, Outcome: "left"}
	cases := []struct {
		name string
		edit func(*PreferenceSubmission)
		code pertinent.Code
	}{
		{"no answer", func(x *PreferenceSubmission) { x.Outcome = "" }, CodeInvalid},
		{"both answer and reason", func(x *PreferenceSubmission) { x.CannotJudge = "other" }, CodeInvalid},
		{"unknown outcome", func(x *PreferenceSubmission) { x.Outcome = "both" }, CodeInvalid},
		{"a document not in the comparison", func(x *PreferenceSubmission) { x.LeftDoc = -1 }, CodeInvalid},
		{"another project", func(x *PreferenceSubmission) { x.ProjectID = p.ID + 1 }, CodeNotFound},
		{"not a member", func(x *PreferenceSubmission) { x.UserID = outsider.ID }, CodeDenied},
	}
	for _, c := range cases {
		x := sub
		c.edit(&x)
		if _, err := s.AnswerComparison(ctx, x); pertinent.CodeOf(err) != c.code {
			t.Errorf("%s: %v, want %v", c.name, err, c.code)
		}
	}
	if _, err := s.NextComparison(ctx, p.ID, outsider.ID); pertinent.CodeOf(err) != CodeDenied {
		t.Errorf("an outsider asking for work: %v", err)
	}
	answer(t, s, v, users[0], "left")
	if _, err := s.AnswerComparison(ctx, sub); pertinent.CodeOf(err) != CodeConflict {
		t.Errorf("answering twice: %v, want Conflict", err)
	}
	if err := s.SetProjectArchived(ctx, p.ID, true, lead.ID); err != nil {
		t.Fatal(err)
	}
	if _, err := s.NextComparison(ctx, p.ID, users[1]); !errors.Is(err, ErrNoWork) {
		t.Errorf("an archived project gave work: %v", err)
	}
}

// An acknowledged answer is in the file: reopened, the store still has it.
func TestPreferenceAnswersSurviveReopening(t *testing.T) {
	SetPasswordCost(4)
	ctx := context.Background()
	path := filepath.Join(t.TempDir(), "p.db")
	s, err := Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	p, _, users := prefFixture(t, s, 1, 4, 2, func(q, d int) int { return 3 + d%2 })
	var acked []int64
	for i := 0; i < 2; i++ { // the first two comparisons of a sort of four are independent
		v, err := s.NextComparison(ctx, p.ID, users[0])
		if err != nil {
			t.Fatal(err)
		}
		acked = append(acked, answer(t, s, v, users[0], better(v)).ID)
	}
	s.Close()
	s, err = Open(ctx, path)
	if err != nil {
		t.Fatal(err)
	}
	defer s.Close()
	hist, err := s.PreferenceAnswersByAssessor(ctx, p.ID, users[0])
	if err != nil {
		t.Fatal(err)
	}
	var got []int64
	for _, a := range hist {
		got = append(got, a.ID)
	}
	if !slices.Equal(got, acked) {
		t.Errorf("after reopening: answers %v, acknowledged %v", got, acked)
	}
}

// An assessor who found nothing open gets work once grades come in or the judgments per
// comparison rise, without anything else replaying the schedule first.
func TestPreferenceWorkFollowsNewGradesAndK(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, lead, pairs, users := fixture(t, s, 1, 3, 2)
	if _, err := s.Adjudicate(ctx, pairs[0], lead.ID, 4, ""); err != nil {
		t.Fatal(err)
	}
	if err := s.SetTaskKind(ctx, p.ID, TaskPreference, nil, lead.ID); err != nil {
		t.Fatal(err)
	}
	for range 2 { // the second miss is answered from what the first one worked out
		if _, err := s.NextComparison(ctx, p.ID, users[0]); !errors.Is(err, ErrNoWork) {
			t.Fatalf("one document above the threshold gave a comparison: %v", err)
		}
	}
	// A grade by a person: the lower median of 3 and 4 is 3, at the threshold.
	for i, g := range []int{3, 4} {
		v := nextPair(t, s, p.ID, users[i])
		if _, err := s.Submit(ctx, Submission{PairID: pairs[1], UserID: users[i], Grade: &g}); err != nil {
			t.Fatalf("grading %d (leased %d): %v", pairs[1], v.PairID, err)
		}
	}
	v, err := s.NextComparison(ctx, p.ID, users[0])
	if err != nil {
		t.Fatalf("after a second document reached the threshold: %v", err)
	}
	answer(t, s, v, users[0], "left")
	w, err := s.NextComparison(ctx, p.ID, users[1])
	if err != nil {
		t.Fatal(err)
	}
	answer(t, s, w, users[1], "left")
	if _, err := s.NextComparison(ctx, p.ID, users[1]); !errors.Is(err, ErrNoWork) {
		t.Fatalf("after both answers: %v", err)
	}
	// Three answers per comparison now: a third assessor is asked.
	third, err := s.CreateUser(ctx, "third", "", RoleAssessor, "long enough password")
	if err != nil {
		t.Fatal(err)
	}
	if err := s.SetMember(ctx, p.ID, third.ID, RoleAssessor, lead.ID); err != nil {
		t.Fatal(err)
	}
	if _, err := s.NextComparison(ctx, p.ID, third.ID); !errors.Is(err, ErrNoWork) {
		t.Fatalf("the comparison had its two answers, yet a third assessor was asked: %v", err)
	}
	ps := p.Settings()
	ps.JudgmentsPerPair = 3
	if err := s.UpdateProject(ctx, p.ID, ps, lead.ID); err != nil {
		t.Fatal(err)
	}
	if x, err := s.NextComparison(ctx, p.ID, third.ID); err != nil || x.ComparisonID != v.ComparisonID {
		t.Fatalf("after raising the answers per comparison to 3: %+v, %v", x, err)
	}
}
