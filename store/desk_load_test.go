package store

import (
	"context"
	"encoding/json"
	"math/rand/v2"
	"reflect"
	"strconv"
	"testing"
	"time"

	"github.com/pertinent/pertinent/agreement"
)

// deskFigures is everything a desk shows, for comparing two desks.
type deskFigures struct {
	Version                                  int64
	Scale                                    int
	Report                                   string // JSON: NaN-free and exact to the last digit
	Gold                                     map[string]int
	Progress                                 Progress
	Judgments, Graded, CannotJudge, Flagged  int
	PerDay                                   []DayCount
	TimeMedianMs, TimeQ1Ms, TimeQ3Ms         int
	Assessors                                string // JSON
	BootstrapCount                           int
	Rows                                     []deskRow
	Pairs                                    []int
	Items, Raters                            []string
	Confusion                                map[int64][][]int
	Consensus                                []agreement.ItemConsensus
	GoldPair                                 map[int64]int
	Users                                    map[int64]string
	ColleagueKappas                          map[string]string
	SeenID, SeenLog                          int64
	AssessorJudgments, AssessorCannotJudge   int
	AssessorDriftDefined, AssessorGoldGraded int
}

func figuresOf(t *testing.T, d *Desk) deskFigures {
	t.Helper()
	rep, err := json.Marshal(d.Report)
	if err != nil {
		t.Fatal(err)
	}
	as, err := json.Marshal(d.Assessors)
	if err != nil {
		t.Fatal(err)
	}
	f := deskFigures{Version: d.Version, Scale: d.Scale, Report: string(rep), Gold: d.Gold, Progress: d.Progress,
		Judgments: d.Judgments, Graded: d.Graded, CannotJudge: d.CannotJudge, Flagged: d.Flagged, PerDay: d.PerDay,
		TimeMedianMs: d.TimeMedianMs, TimeQ1Ms: d.TimeQ1Ms, TimeQ3Ms: d.TimeQ3Ms, Assessors: string(as),
		BootstrapCount: d.BootstrapCount, Rows: d.rows, Pairs: d.pairs, Items: d.Data.ItemNames(), Raters: d.Data.RaterNames(),
		Confusion: map[int64][][]int{}, Consensus: agreement.Consensus(d.Data), GoldPair: d.goldPair, Users: d.users,
		ColleagueKappas: map[string]string{}, SeenID: d.seenID, SeenLog: d.seenLog}
	for _, a := range d.Assessors {
		f.Confusion[a.UserID] = d.ConsensusConfusion(a.UserID)
		k, _ := json.Marshal(d.ColleagueKappas(a.Username))
		f.ColleagueKappas[a.Username] = string(k)
		f.AssessorJudgments += a.Judgments
		f.AssessorCannotJudge += a.CannotJudge
		if a.Drift.OK {
			f.AssessorDriftDefined++
		}
		f.AssessorGoldGraded += a.Stats.GoldItems
	}
	return f
}

// The desk kept current from the changes since the previous one equals a desk built from
// scratch, after every step of random sequences of judgments, revisions through every path,
// undos, cannot-judge answers, adjudications, gold grades, renamed assessors and deleted
// pairs.
func TestIncrementalDeskEqualsRebuild(t *testing.T) {
	for seed := range uint64(3) {
		t.Run(strconv.FormatUint(seed, 10), func(t *testing.T) { incrementalDeskRun(t, seed) })
	}
}

func incrementalDeskRun(t *testing.T, seed uint64) {
	s := openTest(t)
	ctx := context.Background()
	p, lead, pairs, users := fixture(t, s, 6, 20, 4)
	rng := rand.New(rand.NewPCG(seed, 11))
	base := time.Date(2025, 3, 1, 0, 0, 0, 0, time.UTC)
	reasons := []string{"broken", "language", "disturbing", "other"}
	answer := func() (*int, string) {
		if rng.IntN(8) == 0 {
			return nil, reasons[rng.IntN(len(reasons))]
		}
		return grade(rng.IntN(5)), ""
	}
	// Start with a good number of judgments so that drift is defined for some assessors.
	var js []RecordedJudgment
	for _, pid := range pairs {
		for _, u := range users[:3] {
			g, why := answer()
			js = append(js, RecordedJudgment{PairID: pid, UserID: u, Grade: g, CannotJudge: why, TimeSpentMs: rng.IntN(40000),
				At: timeText(base.Add(time.Duration(rng.IntN(10*86400)) * time.Second))})
		}
	}
	record(t, s, p.ID, js...)

	incremental, steps := 0, 120
	for step := range steps {
		var did []string
		for range 1 + rng.IntN(4) {
			pid, u := pairs[rng.IntN(len(pairs))], users[rng.IntN(len(users))]
			g, why := answer()
			switch op := rng.IntN(100); {
			case op < 40: // the loaders' path (import), which supersedes too
				record(t, s, p.ID, RecordedJudgment{PairID: pid, UserID: u, Grade: g, CannotJudge: why, TimeSpentMs: rng.IntN(40000),
					At: timeText(base.Add(time.Duration(rng.IntN(12*86400)) * time.Second))})
				did = append(did, "record")
			case op < 55:
				if _, err := s.Submit(ctx, Submission{PairID: pid, UserID: u, Grade: g, CannotJudge: why, TimeSpentMs: 1 + rng.IntN(9000)}); err == nil {
					did = append(did, "submit")
				}
			case op < 70:
				if _, err := s.Revise(ctx, Submission{PairID: pid, UserID: u, Grade: g, CannotJudge: why}); err == nil {
					did = append(did, "revise")
				}
			case op < 85:
				if _, err := s.Undo(ctx, p.ID, u); err == nil {
					did = append(did, "undo")
				}
			case op < 92:
				if _, err := s.Adjudicate(ctx, pid, lead.ID, rng.IntN(5), "settled"); err == nil {
					did = append(did, "adjudicate")
				}
			case op < 96:
				if _, err := s.w.ExecContext(ctx, `UPDATE pairs SET gold_grade = ? WHERE id = ?`, rng.IntN(5), pid); err != nil {
					t.Fatal(err)
				}
				did = append(did, "gold")
			case op < 98:
				if _, err := s.w.ExecContext(ctx, `UPDATE users SET username = ? WHERE id = ?`, "z"+strconv.Itoa(step)+"-"+strconv.FormatInt(u, 10), u); err != nil {
					t.Fatal(err)
				}
				did = append(did, "rename")
			default:
				if len(pairs) > 40 {
					i := rng.IntN(len(pairs))
					if _, err := s.w.ExecContext(ctx, `DELETE FROM pairs WHERE id = ?`, pairs[i]); err != nil {
						t.Fatal(err)
					}
					pairs = append(pairs[:i], pairs[i+1:]...)
					did = append(did, "delete pair")
				}
			}
		}
		got, err := s.Desk(ctx, p.ID)
		if err != nil {
			t.Fatal(err)
		}
		if got.Incremental {
			incremental++
		}
		if pp, err := s.ProjectProgress(ctx, p.ID); err != nil || pp != got.Progress {
			t.Fatalf("after %v: progress %+v, ProjectProgress %+v (%v)", did, got.Progress, pp, err)
		}
		want, err := s.loadDesk(ctx, p.ID, nil)
		if err != nil {
			t.Fatal(err)
		}
		if want.Incremental {
			t.Fatal("a desk without a predecessor claims to be incremental")
		}
		gf, wf := figuresOf(t, got), figuresOf(t, want)
		if !reflect.DeepEqual(gf, wf) {
			gv, wv := reflect.ValueOf(gf), reflect.ValueOf(wf)
			for i := range gv.NumField() {
				if !reflect.DeepEqual(gv.Field(i).Interface(), wv.Field(i).Interface()) {
					t.Errorf("after %v: %s differs:\nkept    %v\nrebuilt %v", did, gv.Type().Field(i).Name, gv.Field(i).Interface(), wv.Field(i).Interface())
				}
			}
			t.FailNow()
		}
		if step%40 == 39 {
			// The data is the same to the bootstrap too (same items in the same order).
			o := agreement.BootstrapOptions{Replicates: 50, Seed: 5, Workers: 1}
			a, _ := json.Marshal(agreement.Bootstrap(got.Data, o))
			b, _ := json.Marshal(agreement.Bootstrap(want.Data, o))
			if string(a) != string(b) {
				t.Fatalf("bootstrap differs:\n%s\n%s", a, b)
			}
		}
	}
	// Most steps must have taken the incremental path, or this test shows nothing.
	if incremental < steps/2 {
		t.Fatalf("only %d of %d desks were kept incrementally", incremental, steps)
	}
	t.Logf("%d of %d desks kept incrementally", incremental, steps)
}

// The log keeps its newest 100,000 entries; a desk older than what is left is rebuilt from
// scratch (and still right), and a deleted judgment always rebuilds.
func TestDeskLogPruningRebuilds(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, _, pairs, users := fixture(t, s, 1, 4, 3)
	record(t, s, p.ID, RecordedJudgment{PairID: pairs[0], UserID: users[0], Grade: grade(1)},
		RecordedJudgment{PairID: pairs[0], UserID: users[1], Grade: grade(2)})
	if _, err := s.Desk(ctx, p.ID); err != nil {
		t.Fatal(err)
	}
	// 100,002 entries of another project, then one retirement here: the trigger prunes.
	if _, err := s.w.ExecContext(ctx, `WITH RECURSIVE n(i) AS (SELECT 1 UNION ALL SELECT i + 1 FROM n WHERE i < 100002)
		INSERT INTO desk_log(project_id, judgment_id, kind) SELECT 999, i, 0 FROM n`); err != nil {
		t.Fatal(err)
	}
	record(t, s, p.ID, RecordedJudgment{PairID: pairs[0], UserID: users[0], Grade: grade(3)}) // supersedes
	var lo, hi, n int64
	if err := s.r.QueryRowContext(ctx, `SELECT MIN(seq), MAX(seq), COUNT(*) FROM desk_log`).Scan(&lo, &hi, &n); err != nil {
		t.Fatal(err)
	}
	if hi-lo+1 != n || n != 100000 {
		t.Fatalf("log holds seq %d..%d (%d entries), want the newest 100000 without gaps", lo, hi, n)
	}
	d, err := s.Desk(ctx, p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if d.Incremental {
		t.Error("a desk older than the log was kept incrementally")
	}
	if d.Judgments != 2 || d.Report.Judgments != 2 || d.Assessors[0].Grades[3] != 1 {
		t.Errorf("after pruning: %d judgments, grades %v", d.Judgments, d.Assessors[0].Grades)
	}
	record(t, s, p.ID, RecordedJudgment{PairID: pairs[1], UserID: users[2], Grade: grade(0)})
	if d, err = s.Desk(ctx, p.ID); err != nil || !d.Incremental || d.Judgments != 3 {
		t.Fatalf("next change: incremental %v, %d judgments (%v)", d.Incremental, d.Judgments, err)
	}
	if _, err := s.w.ExecContext(ctx, `DELETE FROM judgments WHERE pair_id = ? AND user_id = ?`, pairs[1], users[2]); err != nil {
		t.Fatal(err)
	}
	if d, err = s.Desk(ctx, p.ID); err != nil || d.Incremental || d.Judgments != 2 {
		t.Fatalf("after a deletion: incremental %v, %d judgments (%v)", d.Incremental, d.Judgments, err)
	}
}
