package store

import (
	"context"
	"errors"
	"fmt"
	"strings"
	"testing"
	"time"

	"github.com/pertinent/pertinent"
	"github.com/pertinent/pertinent/ingest"
)

// calibrationProject has queries q1..q3, documents d1..d12, pairs to judge (q1, d1..d4) and
// two assessors; calibration files may use (q2|q3, d5..d12).
func calibrationProject(t *testing.T) (*Store, Project, User, []User) {
	t.Helper()
	s := openTest(t)
	ctx := context.Background()
	p, lead := leadProject(t, s, NewProject{Name: "cal", JudgmentsPerPair: 2, AllowChanges: true})
	var as []User
	for _, name := range []string{"ana", "ben"} {
		u, err := s.CreateUser(ctx, name, "", RoleAssessor, "long enough password")
		if err != nil {
			t.Fatal(err)
		}
		if err := s.SetMember(ctx, p.ID, u.ID, RoleAssessor, lead.ID); err != nil {
			t.Fatal(err)
		}
		as = append(as, u)
	}
	var docs strings.Builder
	docs.WriteString("doc_id,title,body\n")
	for d := 1; d <= 12; d++ {
		fmt.Fprintf(&docs, "d%d,Leaflet %d,Text of leaflet %d\n", d, d, d)
	}
	importText(t, s, p, lead.ID, ImportQueries, "q.csv", "query_id,text\nq1,tide tables\nq2,ferry timetable\nq3,harbour fees\n")
	importText(t, s, p, lead.ID, ImportDocuments, "d.csv", docs.String())
	importText(t, s, p, lead.ID, ImportPairs, "p.csv", "query_id,doc_id\nq1,d1\nq1,d2\nq1,d3\nq1,d4\n")
	return s, p, lead, as
}

// tenCalibrationPairs covers 0..4 twice each, listed grade by grade.
const tenCalibrationPairs = `query_id,doc_id,grade,reason
q2,d5,0,The leaflet is about parking; nothing on ferries.
q2,d6,0,A menu: unrelated.
q2,d7,1,Mentions the ferry but gives no times.
q3,d5,1,Names the harbour without its fees.
q2,d8,2,Times for one crossing only.
q3,d6,2,Fees for cars but not for boats.
q2,d9,3,The whole timetable of summer.
q3,d7,3,Every fee but last year's.
q2,d10,4,This season's full timetable with changes.
q3,d8,4,"The current fee schedule, all vessel sizes."
`

func TestCalibrationRoundComesFirstMixesLevelsAndGivesFeedback(t *testing.T) {
	s, p, lead, as := calibrationProject(t)
	ctx := context.Background()
	rep := importText(t, s, p, lead.ID, ImportCalibration, "cal.csv", tenCalibrationPairs)
	if c := rep.Count("calibration pairs"); c.New != 10 {
		t.Fatalf("counts %+v", rep.Counts)
	}
	ana := as[0]
	var levels []int
	for i := 1; ; i++ {
		cp, err := s.NextCalibrationPair(ctx, p.ID, ana.ID)
		if errors.Is(err, ErrNoWork) {
			break
		}
		if err != nil {
			t.Fatal(err)
		}
		if cp.Number != i || cp.Total != 10 {
			t.Fatalf("pair %d shown as %d of %d", i, cp.Number, cp.Total)
		}
		// The known grade is never shown before an answer.
		if _, err := s.CalibrationFeedbackFor(ctx, p.ID, ana.ID, cp.ID); !errors.Is(err, ErrNotFound) {
			t.Fatalf("feedback before answering: %v", err)
		}
		g := 2
		fb, err := s.AnswerCalibration(ctx, p.ID, CalibrationAnswer{PairID: cp.ID, UserID: ana.ID, Grade: &g})
		if err != nil {
			t.Fatal(err)
		}
		if fb.Remaining != 10-i || fb.Reason == "" || *fb.Grade != 2 {
			t.Fatalf("feedback %+v", fb)
		}
		levels = append(levels, fb.Known)
		// A second answer (the form sent twice) changes nothing.
		g2 := 4
		again, err := s.AnswerCalibration(ctx, p.ID, CalibrationAnswer{PairID: cp.ID, UserID: ana.ID, Grade: &g2})
		if err != nil || *again.Grade != 2 {
			t.Fatalf("second answer: %+v %v", again, err)
		}
	}
	// Levels interleaved from the middle: 2 1 3 0 4, twice (Scholer et al., SIGIR 2013, for
	// why a round must not open with one level only).
	if got, want := fmt.Sprint(levels), "[2 1 3 0 4 2 1 3 0 4]"; got != want {
		t.Fatalf("levels in the order shown %s, want %s", got, want)
	}
	// The round answers are not judgments: the project's pairs are untouched, and ordinary
	// work follows.
	if v := nextPair(t, s, p.ID, ana.ID); v.Query.ExternalID != "q1" {
		t.Fatalf("after the round, a pair to judge: %+v", v)
	}
	var judgments int
	s.r.QueryRowContext(ctx, `SELECT COUNT(*) FROM judgments`).Scan(&judgments)
	if judgments != 0 {
		t.Fatalf("%d judgments after a calibration round", judgments)
	}
	round, err := s.CalibrationRound(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if round.Pairs != 10 || fmt.Sprint(round.ByGrade) != "[2 2 2 2 2]" || len(round.Scores) != 1 {
		t.Fatalf("round %+v", round)
	}
	sc := round.Scores[0]
	// Always answering 2 on known grades 0,0,1,1,2,2,3,3,4,4: 2 of 10 exact, 6 within one,
	// mean |d| = (2+2+1+1+0+0+1+1+2+2)/10 = 1.2, mean signed 0.
	if sc.Assessor != "ana" || !sc.Done || sc.Matched != 2 || sc.WithinOne.V != 0.6 || sc.MeanAbs.V != 1.2 || sc.MeanSigned.V != 0 {
		t.Fatalf("score %+v", sc)
	}
}

func TestCalibrationRoundStartsNewAssessorsOnly(t *testing.T) {
	s, p, lead, as := calibrationProject(t)
	ctx := context.Background()
	clock := time.Date(2026, 3, 1, 9, 0, 0, 0, time.UTC)
	s.SetClock(func() time.Time { return clock })
	// ben judges before the round exists; the round is set up later and starts only ana.
	v := nextPair(t, s, p.ID, as[1].ID)
	g := 1
	if _, err := s.Submit(ctx, Submission{PairID: v.PairID, UserID: as[1].ID, Grade: &g}); err != nil {
		t.Fatal(err)
	}
	clock = clock.Add(time.Hour)
	importText(t, s, p, lead.ID, ImportCalibration, "cal.csv", tenCalibrationPairs)
	if _, err := s.NextCalibrationPair(ctx, p.ID, as[1].ID); !errors.Is(err, ErrNoWork) {
		t.Fatalf("an assessor at work before the round was sent to it: %v", err)
	}
	if _, err := s.NextCalibrationPair(ctx, p.ID, as[0].ID); err != nil {
		t.Fatalf("a new assessor owes the round: %v", err)
	}
	// Only the project's assessors answer; a lead is refused.
	cp, _ := s.NextCalibrationPair(ctx, p.ID, as[0].ID)
	if _, err := s.AnswerCalibration(ctx, p.ID, CalibrationAnswer{PairID: cp.ID, UserID: lead.ID, Grade: &g}); pertinent.CodeOf(err) != CodeDenied {
		t.Fatalf("a lead's answer: %v", err)
	}
	bad := 7
	if _, err := s.AnswerCalibration(ctx, p.ID, CalibrationAnswer{PairID: cp.ID, UserID: as[0].ID, Grade: &bad}); pertinent.CodeOf(err) != CodeInvalid {
		t.Fatalf("a grade off the scale: %v", err)
	}
	fb, err := s.AnswerCalibration(ctx, p.ID, CalibrationAnswer{PairID: cp.ID, UserID: as[0].ID, CannotJudge: "disturbing"})
	if err != nil || fb.Grade != nil || fb.CannotJudge != "disturbing" {
		t.Fatalf("a flagged pair: %+v %v", fb, err)
	}
	round, _ := s.CalibrationRound(ctx, p.ID)
	if len(round.Scores) != 1 || round.Scores[0].Disturbing != 1 || round.Scores[0].Graded != 0 || round.Scores[0].Exact.OK {
		t.Fatalf("round %+v", round)
	}
}

func TestCalibrationImportRefusals(t *testing.T) {
	s, p, lead, _ := calibrationProject(t)
	ctx := context.Background()
	try := func(body string) error {
		_, err := s.Import(ctx, p.ID, lead.ID, ImportSpec{Kind: ImportCalibration}, []ImportFile{{Name: "cal.csv", R: strings.NewReader(body)}})
		return err
	}
	problem := func(err error, want string) {
		t.Helper()
		var ps *ingest.Problems
		if !errors.As(err, &ps) || !strings.Contains(err.Error(), want) {
			t.Fatalf("got %v, want a problem saying %q", err, want)
		}
	}
	// Missing a level: no grade 3.
	problem(try("query_id,doc_id,grade,reason\nq2,d5,0,a\nq2,d6,1,b\nq2,d7,2,c\nq2,d8,4,d\n"), "no pair has grade 3")
	// A pair to judge cannot be a calibration pair.
	problem(try("query_id,doc_id,grade,reason\nq1,d1,0,a\n"), "cal.csv:2")
	problem(try("query_id,doc_id,grade,reason\nq1,d1,0,a\n"), "is a pair to judge")
	// An empty reason, a grade off the scale, an unknown document.
	problem(try("query_id,doc_id,grade,reason\nq2,d5,0,\n"), "is empty")
	problem(try("query_id,doc_id,grade,reason\nq2,d5,5,x\n"), "outside the scale")
	problem(try("query_id,doc_id,grade,reason\nq2,d99,1,x\n"), "no document")
	var n int
	s.r.QueryRowContext(ctx, `SELECT COUNT(*) FROM calibration_pairs`).Scan(&n)
	if n != 0 {
		t.Fatalf("%d calibration pairs kept from refused imports", n)
	}
}

func importText(t *testing.T, s *Store, p Project, by int64, kind ImportKind, name, body string) ImportReport {
	t.Helper()
	return mustImport(t, s, p, by, ImportSpec{Kind: kind}, files(name, body)...)
}
