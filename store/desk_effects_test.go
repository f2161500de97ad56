package store

import (
	"context"
	"fmt"
	"math/rand/v2"
	"slices"
	"strings"
	"testing"

	"github.com/pertinent/pertinent/rankeval"
)

// effectsProject fills a project with an invented judging effort: 30 queries of 12
// documents with true grades, 8 kept runs whose scores are the true grade plus noise of
// growing size, and five assessors of whom three grade each pair. Everybody gives the true
// grade, except random (if named), who grades uniformly at random. A source account grades
// everything 4: it is not an assessor and must not appear.
func effectsProject(t *testing.T, random string, seed uint64) (*Store, Project) {
	s, p, _, _ := effectsProjectTruth(t, random, seed)
	return s, p
}

// effectsProjectTruth is effectsProject with its true grades as a qrels text, and the lead.
func effectsProjectTruth(t *testing.T, random string, seed uint64) (*Store, Project, map[[2]string]int, User) {
	t.Helper()
	ctx := context.Background()
	s := openTest(t)
	p, lead := leadProject(t, s, NewProject{Name: "effects", JudgmentsPerPair: 3})
	names := []string{"ann", "bob", "cat", "dan", "eve"}
	ids := map[string]int64{}
	for _, n := range names {
		u, err := s.CreateUser(ctx, n, "", RoleAssessor, "long enough password")
		if err != nil {
			t.Fatal(err)
		}
		ids[n] = u.ID
	}
	var source int64
	if err := s.w.QueryRowContext(ctx, `INSERT INTO users(username, display_name, role, created_at) VALUES ('model-x', '', 'source', ?) RETURNING id`, s.now()).Scan(&source); err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(seed, seed+1))
	runs := make([]strings.Builder, 8)
	truths := map[[2]string]int{}
	err := s.Load(ctx, p.ID, func(l *Loader) error {
		for q := range 30 {
			qid, err := l.Query(Query{ExternalID: fmt.Sprintf("q%02d", q), Text: "query"})
			if err != nil {
				return err
			}
			for d := range 12 {
				ext := fmt.Sprintf("q%02d-d%02d", q, d)
				did, err := l.Document(Document{ExternalID: ext})
				if err != nil {
					return err
				}
				pid, err := l.Pair(PairSpec{QueryID: qid, DocumentID: did})
				if err != nil {
					return err
				}
				truth := min(int(rng.ExpFloat64()*1.2), 4)
				truths[[2]string{fmt.Sprintf("q%02d", q), ext}] = truth
				for i := range runs {
					fmt.Fprintf(&runs[i], "q%02d Q0 %s 0 %.4f r%d\n", q, ext, float64(truth)+(0.6+0.15*float64(i))*rng.NormFloat64(), i)
				}
				who := slices.Clone(names)
				rng.Shuffle(len(who), func(i, j int) { who[i], who[j] = who[j], who[i] })
				for _, a := range who[:3] {
					grade := truth
					if a == random {
						grade = rng.IntN(5)
					}
					if err := l.Judgment(RecordedJudgment{PairID: pid, UserID: ids[a], Grade: &grade}); err != nil {
						return err
					}
				}
				four := 4
				if err := l.Judgment(RecordedJudgment{PairID: pid, UserID: source, Grade: &four}); err != nil {
					return err
				}
			}
		}
		return nil
	})
	if err != nil {
		t.Fatal(err)
	}
	for i := range runs {
		if _, err := s.KeepRun(ctx, p.ID, lead.ID, fmt.Sprintf("r%d", i), strings.NewReader(runs[i].String())); err != nil {
			t.Fatal(err)
		}
	}
	return s, p, truths, lead
}

// One assessor grading at random is named by the store's figures, from stored judgments and
// kept runs; the source account is nobody's assessor.
func TestAssessorEffectsNameTheRandomAssessor(t *testing.T) {
	s, p := effectsProject(t, "dan", 5)
	e, err := s.AssessorEffects(context.Background(), p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if e.Standout != "dan" || len(e.Runs) != 8 || len(e.Alone) != 5 || len(e.Replaced) != 5 || len(e.LeftOut) != 5 {
		t.Fatalf("standout %q, runs %v, %d/%d/%d effects", e.Standout, e.Runs, len(e.Alone), len(e.Replaced), len(e.LeftOut))
	}
	if e.Alone[0].Assessor != "dan" || e.Alone[0].Order.Tau > 0.6 {
		t.Errorf("alone: first %s at tau %.3f", e.Alone[0].Assessor, e.Alone[0].Order.Tau)
	}
	for _, l := range e.Leniency {
		if l.Rater == "model-x" {
			t.Error("the source is counted as an assessor")
		}
	}
	// Verdicts between runs near the 0.05 line turn when one assessor's grades go (here
	// several, on this seed); each listed change is a real change at the level.
	changed := 0
	for _, x := range e.LeftOut {
		changed += len(x.SignificanceChanged)
		for _, c := range x.SignificanceChanged {
			if c.Before == c.After || (c.PBefore < 0.05) != c.Before || (c.PAfter < 0.05) != c.After {
				t.Errorf("%s: %+v", x.Assessor, c)
			}
		}
	}
	if changed == 0 {
		t.Error("no assessor's grades change any verdict between runs")
	}
	for _, x := range [][]string{raters(e.Alone), raters(e.Replaced)} {
		if slices.Contains(x, "model-x") {
			t.Errorf("the source is counted as an assessor: %v", x)
		}
	}
}

// With identical assessors nothing changes: every tau is 1 and nobody is named.
func TestAssessorEffectsIdenticalAssessors(t *testing.T) {
	s, p := effectsProject(t, "", 6)
	e, err := s.AssessorEffects(context.Background(), p.ID)
	if err != nil {
		t.Fatal(err)
	}
	if e.Standout != "" {
		t.Errorf("named %s", e.Standout)
	}
	for _, list := range [][]string{raters(e.Alone), raters(e.Replaced), raters(e.LeftOut)} {
		if len(list) != 5 {
			t.Errorf("%d assessors, want 5", len(list))
		}
	}
	for _, x := range append(append(e.Alone, e.Replaced...), e.LeftOut...) {
		if !x.Order.TauDefined || x.Order.Tau != 1 || len(x.Order.Changed) != 0 || len(x.SignificanceChanged) != 0 {
			t.Errorf("%s: %+v, significance changed %+v", x.Assessor, x.Order, x.SignificanceChanged)
		}
	}
	for _, l := range e.Leniency {
		if !l.MeanDiff.OK || l.MeanDiff.V != 0 {
			t.Errorf("%s: mean difference %+v", l.Rater, l.MeanDiff)
		}
	}
}

func raters(xs []rankeval.AssessorEffect) []string {
	out := make([]string, len(xs))
	for i, x := range xs {
		out[i] = x.Assessor
	}
	return out
}
