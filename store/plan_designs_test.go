package store

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/estimate"
	"github.com/pertinent/pertinent/rankeval"
)

// planFixture is a project with 6 queries of 40 documents each, a lead and an assessor, and
// three kept runs over them with distinct scores; truth holds an invented grade for every pair.
type planFixture struct {
	s        *Store
	project  Project
	lead     User
	assessor int64
	runs     []KeptRun
	texts    []string
	truth    map[string]map[string]int
}

func newPlanFixture(t *testing.T) *planFixture {
	t.Helper()
	s := openTest(t)
	ctx := context.Background()
	f := &planFixture{s: s, truth: map[string]map[string]int{}}
	f.project, f.lead = leadProject(t, s, NewProject{Name: "sampled", JudgmentsPerPair: 1})
	a, err := s.CreateUser(ctx, "asa", "", RoleAssessor, "long enough password")
	if err != nil {
		t.Fatal(err)
	}
	f.assessor = a.ID
	if err := s.SetMember(ctx, f.project.ID, a.ID, RoleAssessor, f.lead.ID); err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(7, 11))
	err = s.Load(ctx, f.project.ID, func(l *Loader) error {
		for q := 1; q <= 6; q++ {
			qid := fmt.Sprintf("q%d", q)
			if _, err := l.Query(Query{ExternalID: qid, Text: "query " + qid}); err != nil {
				return err
			}
			f.truth[qid] = map[string]int{}
			for d := 1; d <= 40; d++ {
				did := fmt.Sprintf("%s-d%02d", qid, d)
				if _, err := l.Document(Document{ExternalID: did, Title: did}); err != nil {
					return err
				}
				// Lower-numbered documents are more often relevant.
				g := 0
				if rng.Float64() < 1-float64(d)/45 {
					g = 1 + rng.IntN(4)
				}
				f.truth[qid][did] = g
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	for r := 0; r < 3; r++ {
		var b strings.Builder
		for q := 1; q <= 6; q++ {
			perm := rng.Perm(40)
			for i, p := range perm {
				// Run 0 is best: it tends to put low-numbered documents first.
				score := float64(40-i) + float64(r)*float64(p%7) + float64(p)/1000
				fmt.Fprintf(&b, "q%d Q0 q%d-d%02d %d %.4f run%d\n", q, q, p+1, i+1, score, r)
			}
		}
		f.texts = append(f.texts, b.String())
		kr, err := s.KeepRun(ctx, f.project.ID, f.lead.ID, fmt.Sprintf("run%d.txt", r), strings.NewReader(b.String()))
		if err != nil {
			t.Fatal(err)
		}
		f.runs = append(f.runs, kr)
	}
	return f
}

func (f *planFixture) ids() []int64 {
	var out []int64
	for _, r := range f.runs {
		out = append(out, r.ID)
	}
	return out
}

// gradeAll gives every pair of the project without a judgment its true grade.
func (f *planFixture) gradeAll(t *testing.T) int {
	t.Helper()
	ctx := context.Background()
	rows, err := f.s.r.QueryContext(ctx, `SELECT p.id, q.external_id, d.external_id FROM pairs p
		JOIN queries q ON q.id = p.query_id JOIN documents d ON d.id = p.document_id
		WHERE p.project_id = ? AND p.judged = 0`, f.project.ID)
	if err != nil {
		t.Fatal(err)
	}
	type pr struct {
		id   int64
		q, d string
	}
	var ps []pr
	for rows.Next() {
		var p pr
		if err := rows.Scan(&p.id, &p.q, &p.d); err != nil {
			t.Fatal(err)
		}
		ps = append(ps, p)
	}
	rows.Close()
	err = f.s.Load(ctx, f.project.ID, func(l *Loader) error {
		for _, p := range ps {
			g := f.truth[p.q][p.d]
			if err := l.Judgment(RecordedJudgment{PairID: p.id, UserID: f.assessor, Grade: &g}); err != nil {
				return err
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	return len(ps)
}

func (f *planFixture) counts(t *testing.T) [3]int {
	t.Helper()
	var c [3]int
	for i, table := range []string{"pairs", "pair_choices", "designs"} {
		if err := f.s.r.QueryRow(`SELECT COUNT(*) FROM ` + table).Scan(&c[i]); err != nil {
			t.Fatal(err)
		}
	}
	return c
}

func TestKeepRunChecksAndKeepsOnce(t *testing.T) {
	f := newPlanFixture(t)
	ctx := context.Background()
	again, err := f.s.KeepRun(ctx, f.project.ID, f.lead.ID, "run0.txt", strings.NewReader(f.texts[0]))
	if err != nil || again.ID != f.runs[0].ID {
		t.Errorf("keeping the same run again: %+v, %v; want the kept run %d", again, err, f.runs[0].ID)
	}
	if _, err := f.s.KeepRun(ctx, f.project.ID, f.lead.ID, "run0.txt", strings.NewReader("q1 Q0 q1-d01 1 2.0 other\n")); ErrorCode(err) != CodeConflict {
		t.Errorf("a different run under a kept name: %v, want a conflict", err)
	}
	_, err = f.s.KeepRun(ctx, f.project.ID, f.lead.ID, "two.txt", strings.NewReader("q1 Q0 q1-d01 1 2.0 a\nq1 Q0 q1-d02 2 1.0 b\n"))
	if ErrorCode(err) != CodeInvalid || !strings.Contains(err.Error(), "two.txt:2") {
		t.Errorf("two run tags in one file: %v, want a problem at two.txt:2", err)
	}
	_, err = f.s.KeepRun(ctx, f.project.ID, f.lead.ID, "bad.txt", strings.NewReader("q1 Q0 q1-d01 one 2.0 a\n"))
	if ErrorCode(err) != CodeInvalid || !strings.Contains(err.Error(), "bad.txt:1") {
		t.Errorf("a bad rank: %v, want a problem at bad.txt:1", err)
	}
	kept, err := f.s.KeptRuns(ctx, f.project.ID)
	if err != nil || len(kept) != 3 || kept[0].Entries != 240 || kept[0].Queries != 6 {
		t.Errorf("kept runs %+v, %v; want the three runs of 240 entries over 6 queries", kept, err)
	}
}

// With every pair of a depth design judged, the design's estimates are rankeval's scores of
// the same final grades, exactly (every inclusion probability is 1).
func TestDepthDesignEstimateEqualsRankeval(t *testing.T) {
	f := newPlanFixture(t)
	ctx := context.Background()
	req := PlanRequest{Runs: f.ids(), Settings: DesignSettings{Design: estimate.Design{Kind: estimate.KindDepth, Depth: 10, K: 10}, Threshold: 2}}
	out, err := f.s.PlanJudging(ctx, f.project.ID, f.lead.ID, req)
	if err != nil {
		t.Fatal(err)
	}
	if out.Added == 0 || out.Added != len(out.Plan.Choices) {
		t.Fatalf("depth design added %d of %d choices", out.Added, len(out.Plan.Choices))
	}
	if n := f.gradeAll(t); n != out.Added {
		t.Fatalf("graded %d pairs, want the %d the design added", n, out.Added)
	}
	rep, err := f.s.DesignEstimate(ctx, f.project.ID, out.DesignID)
	if err != nil {
		t.Fatal(err)
	}
	if rep.Chosen != out.Added || rep.Graded != out.Added || rep.Pending != 0 {
		t.Errorf("chosen %d graded %d pending %d, want %d, %d, 0", rep.Chosen, rep.Graded, rep.Pending, out.Added, out.Added)
	}
	qrels, top, err := f.s.FinalGrades(ctx, f.project.ID, DefaultPlanPolicy)
	if err != nil {
		t.Fatal(err)
	}
	for i, text := range f.texts {
		want, err := rankeval.Evaluate(qrels, readRun(t, text), rankeval.Options{K: 10, Gain: rankeval.GainExponential, Threshold: 2, MaxGrade: top})
		if err != nil {
			t.Fatal(err)
		}
		got := rep.Estimates.Runs[i]
		if math.Abs(got.NDCG.Est-want.NDCG) > 1e-12 || math.Abs(got.AP.Est-want.MAP) > 1e-12 || got.NDCG.SE != 0 {
			t.Errorf("run %d: estimate NDCG %v AP %v (SE %v), rankeval NDCG %v MAP %v", i, got.NDCG.Est, got.AP.Est, got.NDCG.SE, want.NDCG, want.MAP)
		}
	}
}

// A stratified design records every chosen pair with its stratum, rate and reason; a later
// import keeps that record; a second design nests in the first (the inclusion probability is the
// larger rate); a dry run and refused designs store nothing.
func TestStratifiedDesignRecordsHowPairsWereChosen(t *testing.T) {
	f := newPlanFixture(t)
	ctx := context.Background()
	before := f.counts(t)
	req := PlanRequest{Runs: f.ids(), Settings: DesignSettings{Design: estimate.Design{Kind: estimate.KindStratified, Depth: 3, MaxDepth: 40, Budget: 90, K: 10}, Threshold: 2}}

	dry := req
	dry.DryRun = true
	preview, err := f.s.PlanJudging(ctx, f.project.ID, f.lead.ID, dry)
	if err != nil {
		t.Fatal(err)
	}
	if f.counts(t) != before || preview.Added == 0 {
		t.Fatalf("a dry run changed the tables %v -> %v, or chose nothing (%d)", before, f.counts(t), preview.Added)
	}

	// Refusals store nothing: a budget below the top stratum, ties without leave, a document
	// the project lacks.
	small := req
	small.Settings.Design.Budget = 2
	if _, err := f.s.PlanJudging(ctx, f.project.ID, f.lead.ID, small); ErrorCode(err) != CodeInvalid || !strings.Contains(err.Error(), "budget") {
		t.Errorf("budget below the top stratum: %v", err)
	}
	tied, err := f.s.KeepRun(ctx, f.project.ID, f.lead.ID, "tied.txt", strings.NewReader("q1 Q0 q1-d01 1 2.0 t\nq1 Q0 q1-d02 2 2.0 t\n"))
	if err != nil {
		t.Fatal(err)
	}
	if _, err := f.s.PlanJudging(ctx, f.project.ID, f.lead.ID, PlanRequest{Runs: []int64{tied.ID}, Settings: req.Settings}); ErrorCode(err) != CodeInvalid || !strings.Contains(err.Error(), "same score") {
		t.Errorf("tied scores: %v, want a problem naming the tie", err)
	}
	stranger, err := f.s.KeepRun(ctx, f.project.ID, f.lead.ID, "stranger.txt", strings.NewReader("q1 Q0 nowhere 1 2.0 s\n"))
	if err != nil {
		t.Fatal(err)
	}
	depthReq := PlanRequest{Runs: []int64{stranger.ID}, Settings: DesignSettings{Design: estimate.Design{Kind: estimate.KindDepth, Depth: 5}}}
	if _, err := f.s.PlanJudging(ctx, f.project.ID, f.lead.ID, depthReq); ErrorCode(err) != CodeInvalid || !strings.Contains(err.Error(), `"nowhere"`) {
		t.Errorf("unknown document: %v, want a problem naming it", err)
	}
	if after := f.counts(t); after != before {
		t.Fatalf("refused designs changed the tables: %v -> %v", before, after)
	}

	out, err := f.s.PlanJudging(ctx, f.project.ID, f.lead.ID, req)
	if err != nil {
		t.Fatal(err)
	}
	if out.Added != preview.Added {
		t.Errorf("the design added %d pairs, its preview said %d", out.Added, preview.Added)
	}
	rates := map[string]float64{}
	rows, err := f.s.r.Query(`SELECT q.external_id || ' ' || d.external_id, c.stratum, c.rate, c.reason FROM pair_choices c
		JOIN pairs p ON p.id = c.pair_id JOIN queries q ON q.id = p.query_id JOIN documents d ON d.id = p.document_id WHERE c.design_id = ?`, out.DesignID)
	if err != nil {
		t.Fatal(err)
	}
	for rows.Next() {
		var key, reason string
		var stratum int
		var rate float64
		if err := rows.Scan(&key, &stratum, &rate, &reason); err != nil {
			t.Fatal(err)
		}
		if reason == "" || (stratum == 0) != (rate == 1) {
			t.Errorf("%s: stratum %d rate %v reason %q", key, stratum, rate, reason)
		}
		rates[key] = rate
	}
	rows.Close()
	if len(rates) != len(out.Plan.Choices) {
		t.Fatalf("%d choices recorded, plan had %d", len(rates), len(out.Plan.Choices))
	}
	for _, c := range out.Plan.Choices {
		if rates[c.Query+" "+c.Doc] != c.Prob {
			t.Errorf("%s %s: recorded rate %v, planned %v", c.Query, c.Doc, rates[c.Query+" "+c.Doc], c.Prob)
		}
	}

	// An import that touches the pairs again keeps how they were chosen.
	if _, err := f.s.Import(ctx, f.project.ID, f.lead.ID, ImportSpec{Kind: ImportRows}, []ImportFile{{Name: "rows.csv",
		R: strings.NewReader("query_id,query_text,doc_id,title\nq1,query q1,q1-d01,q1-d01\n")}}); err != nil {
		t.Fatal(err)
	}
	labels, err := f.s.designLabels(ctx, f.project.ID, DefaultPlanPolicy)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range out.Plan.Choices {
		if got := labels[c.Query][c.Doc].Prob; got != c.Prob {
			t.Errorf("%s %s after a later import: probability %v, want %v", c.Query, c.Doc, got, c.Prob)
		}
	}

	// Estimates while judging is in progress say so; after grading they carry intervals.
	rep, err := f.s.DesignEstimate(ctx, f.project.ID, out.DesignID)
	if err != nil {
		t.Fatal(err)
	}
	if rep.Pending == 0 || rep.Signal.State != "judging" {
		t.Errorf("before grading: pending %d, signal %+v; want pairs pending and the judging signal", rep.Pending, rep.Signal)
	}
	f.gradeAll(t)
	rep, err = f.s.DesignEstimate(ctx, f.project.ID, out.DesignID)
	if err != nil {
		t.Fatal(err)
	}
	if rep.Estimates.Sampled == 0 {
		t.Fatal("the first design sampled nothing below its top stratum")
	}
	if rep.Pending != 0 || len(rep.Estimates.Runs) != 3 || len(rep.Estimates.Differences) != 6 {
		t.Fatalf("after grading: pending %d, %d runs, %d differences; want 0, 3 and 6 (3 run pairs × NDCG and AP)", rep.Pending, len(rep.Estimates.Runs), len(rep.Estimates.Differences))
	}
	for _, r := range rep.Estimates.Runs {
		if !(r.NDCG.Low <= r.NDCG.Est && r.NDCG.Est <= r.NDCG.High) || r.NDCG.SE <= 0 {
			t.Errorf("run %s: NDCG %+v, want an interval around the estimate with a positive SE (pairs were sampled)", r.Run, r.NDCG)
		}
	}
	// A second design with twice the budget nests: each pair's probability is the larger rate.
	req2 := req
	req2.Settings.Design.Budget = 180
	out2, err := f.s.PlanJudging(ctx, f.project.ID, f.lead.ID, req2)
	if err != nil {
		t.Fatal(err)
	}
	labels, err = f.s.designLabels(ctx, f.project.ID, DefaultPlanPolicy)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range out2.Plan.Choices {
		want := max(c.Prob, rates[c.Query+" "+c.Doc])
		if got := labels[c.Query][c.Doc].Prob; got != want {
			t.Errorf("%s %s after two designs: probability %v, want the larger rate %v", c.Query, c.Doc, got, want)
		}
	}
	for key := range rates {
		q, d, _ := strings.Cut(key, " ")
		if labels[q][d].Prob < rates[key] {
			t.Errorf("%s lost probability after the second design: %v < %v", key, labels[q][d].Prob, rates[key])
		}
	}

}
