package store

import (
	"context"
	"encoding/json"
	"strconv"
	"testing"
	"time"

	"github.com/pertinent/pertinent/agreement"
	"github.com/pertinent/pertinent/internal/testclock"
)

func record(t *testing.T, s *Store, projectID int64, js ...RecordedJudgment) {
	t.Helper()
	err := s.Load(context.Background(), projectID, func(l *Loader) error {
		for _, j := range js {
			if err := l.Judgment(j); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
}

func grade(g int) *int { return &g }

// Two adjudications of one pair leave two rows: the first no longer current, with its
// grade and rationale as written; each is audited.
func TestAdjudicationHistoryIsAppendOnly(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	_, lead, pairs, _ := fixture(t, s, 1, 2, 2)
	first, err := s.Adjudicate(ctx, pairs[0], lead.ID, 3, "matches the need")
	if err != nil {
		t.Fatal(err)
	}
	second, err := s.Adjudicate(ctx, pairs[0], lead.ID, 1, "only a glancing answer on second reading")
	if err != nil {
		t.Fatal(err)
	}
	h, err := s.Adjudications(ctx, pairs[0])
	if err != nil {
		t.Fatal(err)
	}
	if len(h) != 2 {
		t.Fatalf("%d adjudication rows, want 2", len(h))
	}
	if h[0].ID != second.ID || !h[0].Current || h[0].Grade != 1 || h[0].Rationale != "only a glancing answer on second reading" {
		t.Errorf("newest row %+v", h[0])
	}
	if h[1].ID != first.ID || h[1].Current || h[1].Grade != 3 || h[1].Rationale != "matches the need" {
		t.Errorf("first row changed: %+v", h[1])
	}
	var audits int
	s.r.QueryRowContext(ctx, `SELECT COUNT(*) FROM audit_events WHERE action = 'pair.adjudicate' AND target = ?`, "pair:"+strconv.FormatInt(pairs[0], 10)).Scan(&audits)
	if audits != 2 {
		t.Errorf("%d audit events, want 2", audits)
	}
	if _, err := s.Adjudicate(ctx, pairs[0], lead.ID, 5, ""); ErrorCode(err) != CodeInvalid {
		t.Errorf("grade off the scale: %v", err)
	}
}

func queueHas(t *testing.T, s *Store, projectID, pairID int64) (QueueItem, bool) {
	t.Helper()
	d, err := s.Desk(context.Background(), projectID)
	if err != nil {
		t.Fatal(err)
	}
	q, err := s.Queue(context.Background(), d, QueueFilter{})
	if err != nil {
		t.Fatal(err)
	}
	for _, it := range q {
		if it.PairID == pairID {
			return it, true
		}
	}
	return QueueItem{}, false
}

// An adjudicated pair leaves the queue; a later judgment that agrees with the final grade
// keeps it closed, a later one that disagrees reopens it.
func TestQueueReopenRule(t *testing.T) {
	s := openTest(t)
	clock := testclock.New(time.Date(2025, 3, 1, 9, 0, 0, 0, time.UTC))
	s.SetClock(clock.Now)
	ctx := context.Background()
	p, lead, pairs, users := fixture(t, s, 1, 2, 4)
	past := timeText(clock.Now().Add(-time.Hour))
	record(t, s, p.ID,
		RecordedJudgment{PairID: pairs[0], UserID: users[0], Grade: grade(1), At: past},
		RecordedJudgment{PairID: pairs[0], UserID: users[1], Grade: grade(3), At: past},
		RecordedJudgment{PairID: pairs[1], UserID: users[0], Grade: grade(2), At: past},
		RecordedJudgment{PairID: pairs[1], UserID: users[1], Grade: grade(2), At: past})
	it, ok := queueHas(t, s, p.ID, pairs[0])
	if !ok || it.Spread != 2 || it.Severity != 2 {
		t.Fatalf("disagreeing pair in queue: %v %+v", ok, it)
	}
	if _, ok := queueHas(t, s, p.ID, pairs[1]); ok {
		t.Fatal("an agreeing pair is in the queue")
	}
	if _, err := s.Adjudicate(ctx, pairs[0], lead.ID, 2, "between the two"); err != nil {
		t.Fatal(err)
	}
	if _, ok := queueHas(t, s, p.ID, pairs[0]); ok {
		t.Fatal("adjudicated pair still in the queue")
	}
	clock.Advance(time.Second) // the next write is stamped after the one before
	record(t, s, p.ID, RecordedJudgment{PairID: pairs[0], UserID: users[2], Grade: grade(2)})
	if _, ok := queueHas(t, s, p.ID, pairs[0]); ok {
		t.Fatal("a later judgment agreeing with the final grade reopened the pair")
	}
	record(t, s, p.ID, RecordedJudgment{PairID: pairs[0], UserID: users[3], Grade: grade(4)})
	it, ok = queueHas(t, s, p.ID, pairs[0])
	if !ok || !it.Reopened {
		t.Fatalf("a later disagreeing judgment should reopen the pair: %v %+v", ok, it)
	}
	// An older judgment that disagrees does not count as "after" the adjudication.
	clock.Advance(time.Second) // the next write is stamped after the one before
	if _, err := s.Adjudicate(ctx, pairs[0], lead.ID, 4, "the last one was right"); err != nil {
		t.Fatal(err)
	}
	if _, ok := queueHas(t, s, p.ID, pairs[0]); ok {
		t.Fatal("judgments made before the adjudication reopened it")
	}
}

// The desk's report is the agreement package's report on AgreementData, and every
// judgment written moves the version so the cache is rebuilt.
func TestDeskMatchesAgreementData(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, pairs, users := fixture(t, s, 3, 5, 4)
	var js []RecordedJudgment
	for i, pid := range pairs {
		for u := 0; u < 3; u++ {
			g := (i + u*(i%3)) % 5
			js = append(js, RecordedJudgment{PairID: pid, UserID: users[(i+u)%4], Grade: &g, TimeSpentMs: 1000 * (u + 1)})
		}
	}
	js = append(js, RecordedJudgment{PairID: pairs[0], UserID: users[3], CannotJudge: "disturbing"})
	record(t, s, p.ID, js...)
	d1, err := s.Desk(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	data, gold, err := s.AgreementData(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	want, _ := json.Marshal(agreement.Compute(data, agreement.Options{Gold: gold}))
	got, _ := json.Marshal(d1.Report)
	if string(got) != string(want) {
		t.Errorf("desk report differs from AgreementData's:\n%s\n%s", got, want)
	}
	if d1.Flagged != 1 || d1.Judgments != len(js) || d1.CannotJudge != 1 {
		t.Errorf("flagged %d judgments %d cannot %d", d1.Flagged, d1.Judgments, d1.CannotJudge)
	}
	if d1.TimeMedianMs != 2000 || d1.TimeQ1Ms != 1000 || d1.TimeQ3Ms != 3000 {
		t.Errorf("times %d %d %d", d1.TimeQ1Ms, d1.TimeMedianMs, d1.TimeQ3Ms)
	}
	d2, _ := s.Desk(ctx, p.ID)
	if d2 != d1 {
		t.Error("an unchanged project rebuilt its desk")
	}
	record(t, s, p.ID, RecordedJudgment{PairID: pairs[1], UserID: users[0], Grade: grade(0)})
	d3, _ := s.Desk(ctx, p.ID)
	if d3 == d1 || d3.Judgments != len(js)+1 {
		t.Errorf("a new judgment did not rebuild the desk (judgments %d)", d3.Judgments)
	}
}
