package store

import (
	"context"
	"fmt"
	"slices"
	"strings"
	"testing"

	"github.com/pertinent/pertinent"
)

// prelabelProject: 2 queries × 10 documents, two assessors, and source model-x's grades of
// every pair with a confidence that differs per pair (pair k of the fixture: (k*7 % 20)/20).
func prelabelProject(t *testing.T, withConfidence bool) (*Store, Project, User, []int64, []int64, map[int64]float64) {
	t.Helper()
	s := openTest(t)
	p, lead, pairs, users := fixture(t, s, 2, 10, 2)
	var qrels strings.Builder
	conf := map[int64]float64{}
	k := 0
	for q := range 2 {
		for d := range 10 {
			c := float64(k*7%20) / 20
			conf[pairs[k]] = c
			qe, de := string(rune('A'+q)), string(rune('A'+q))+string(rune('a'+d))
			if withConfidence {
				fmt.Fprintf(&qrels, "%s 0 %s %d %g\n", qe, de, d%5, c)
			} else {
				fmt.Fprintf(&qrels, "%s 0 %s %d\n", qe, de, d%5)
			}
			k++
		}
	}
	mustImport(t, s, p, lead.ID, ImportSpec{Kind: ImportQrels, Source: "model-x"}, files("x.qrels", qrels.String())...)
	return s, p, lead, pairs, users, conf
}

func priorities(t *testing.T, s *Store, projectID int64) map[int64]int {
	t.Helper()
	out := map[int64]int{}
	err := eachRow(context.Background(), s.r, `SELECT id, priority FROM pairs WHERE project_id = ?`, func(r rowScanner) error {
		var id int64
		var p int
		err := r.Scan(&id, &p)
		out[id] = p
		return err
	}, projectID)
	if err != nil {
		t.Fatal(err)
	}
	return out
}

// Least sure first: the first pair an assessor gets is the one the source was least sure
// of, and within the query they work through, less sure pairs come before surer ones.
func TestPrelabelsLeastSureFirst(t *testing.T) {
	s, p, lead, pairs, users, conf := prelabelProject(t, true)
	ctx := context.Background()
	before := priorities(t, s, p.ID)
	raised, err := s.SetPrelabels(ctx, p.ID, lead.ID, &Prelabels{Source: "model-x", Mode: PrelabelLeastSure, Share: 0.5})
	if err != nil || raised != 10 {
		t.Fatalf("raised %d, %v; want 10", raised, err)
	}
	// The least sure band: the first quarter (3 of the 10 raised) by confidence. Bands
	// rather than one rank per pair, so that assessors still spread over several queries.
	byConf := slices.Clone(pairs)
	slices.SortFunc(byConf, func(a, b int64) int { return int(100*conf[a]) - int(100*conf[b]) })
	first := nextPair(t, s, p.ID, users[0])
	if !slices.Contains(byConf[:3], first.PairID) {
		t.Fatalf("first pair %d (confidence %g), want one of the least sure %v", first.PairID, conf[first.PairID], byConf[:3])
	}
	// Judge the batch through: the raised pairs of the query come before the others, least
	// sure first by band.
	now := priorities(t, s, p.ID)
	var seen []int
	v := first
	for v.Query.ID == first.Query.ID {
		seen = append(seen, now[v.PairID])
		g := 1
		if _, err := s.Submit(ctx, Submission{PairID: v.PairID, UserID: users[0], Grade: &g}); err != nil {
			t.Fatal(err)
		}
		if v, err = s.NextPair(ctx, p.ID, users[0]); err != nil {
			break
		}
	}
	if !slices.IsSortedFunc(seen, func(a, b int) int { return b - a }) {
		t.Fatalf("priorities in the order served %v: not highest first", seen)
	}
	// Saved and read back; taken away, every pair has its own priority again.
	got, ok, err := s.ProjectPrelabels(ctx, p.ID)
	if err != nil || !ok || got.Source != "model-x" || got.Mode != PrelabelLeastSure || got.Raised != 10 {
		t.Fatalf("setting %+v %v %v", got, ok, err)
	}
	if _, err := s.SetPrelabels(ctx, p.ID, lead.ID, nil); err != nil {
		t.Fatal(err)
	}
	if after := priorities(t, s, p.ID); fmt.Sprint(after) != fmt.Sprint(before) {
		t.Fatalf("priorities not restored:\n%v\nwant\n%v", after, before)
	}
	if _, ok, _ := s.ProjectPrelabels(ctx, p.ID); ok {
		t.Fatal("setting still there after it was taken away")
	}
}

// An audit sample: the share asked for, the same pairs each time the setting is saved, and
// not chosen by the source's confidence.
func TestPrelabelsAuditSample(t *testing.T) {
	s, p, lead, _, _, _ := prelabelProject(t, false)
	ctx := context.Background()
	base := priorities(t, s, p.ID)
	sample := func() []int64 {
		t.Helper()
		raised, err := s.SetPrelabels(ctx, p.ID, lead.ID, &Prelabels{Source: "model-x", Mode: PrelabelAudit, Share: 0.3})
		if err != nil || raised != 6 {
			t.Fatalf("raised %d, %v; want 6 of 20", raised, err)
		}
		var ids []int64
		for id, pr := range priorities(t, s, p.ID) {
			if pr > base[id] {
				ids = append(ids, id)
			}
		}
		slices.Sort(ids)
		return ids
	}
	a, b := sample(), sample()
	if len(a) != 6 || !slices.Equal(a, b) {
		t.Fatalf("samples %v and %v", a, b)
	}
	// Least sure needs confidences, and a source needs to exist.
	if _, err := s.SetPrelabels(ctx, p.ID, lead.ID, &Prelabels{Source: "model-x", Mode: PrelabelLeastSure}); pertinent.CodeOf(err) != CodeInvalid ||
		!strings.Contains(err.Error(), "fifth column") {
		t.Fatalf("least sure without confidences: %v", err)
	}
	if _, err := s.SetPrelabels(ctx, p.ID, lead.ID, &Prelabels{Source: "nobody", Mode: PrelabelAudit}); pertinent.CodeOf(err) != CodeInvalid {
		t.Fatalf("unknown source: %v", err)
	}
	if _, err := s.SetPrelabels(ctx, p.ID, lead.ID, &Prelabels{Source: "model-x", Mode: PrelabelAudit, Share: 1.5}); pertinent.CodeOf(err) != CodeInvalid {
		t.Fatalf("share 1.5: %v", err)
	}
	// A refused setting leaves the one before in force.
	if got, ok, _ := s.ProjectPrelabels(ctx, p.ID); !ok || got.Mode != PrelabelAudit || got.Raised != 6 {
		t.Fatalf("setting after refusals: %+v", got)
	}
}
