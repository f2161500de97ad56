package store

import (
	"context"
	"testing"
)

// Gold answers and adjudications fix the scale's size just as judgments do.
func TestGoldPairsFixTheScaleSize(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	p, lead, _, _ := fixture(t, s, 1, 1, 1)
	four := []ScaleLevel{{0, "a", ""}, {1, "b", ""}, {2, "c", ""}, {3, "d", ""}}
	if err := s.SetScale(ctx, p.ID, four, lead.ID); err != nil {
		t.Fatalf("resizing an ungraded project: %v", err)
	}
	g := 2
	err := s.Load(ctx, p.ID, func(l *Loader) error {
		q, _ := l.Query(Query{ExternalID: "gq", Text: "gold"})
		d, _ := l.Document(Document{ExternalID: "gd"})
		_, err := l.Pair(PairSpec{QueryID: q, DocumentID: d, GoldGrade: &g})
		return err
	})
	if err != nil {
		t.Fatal(err)
	}
	if n, _ := s.GradeUses(ctx, p.ID); n != 1 {
		t.Errorf("grade uses = %d, want 1 gold answer", n)
	}
	if err := s.SetScale(ctx, p.ID, four[:3], lead.ID); ErrorCode(err) != CodeConflict {
		t.Errorf("shrinking a scale with a gold answer on it: %v, want a conflict", err)
	}
	four[3].Label = "dd"
	if err := s.SetScale(ctx, p.ID, four, lead.ID); err != nil {
		t.Errorf("relabelling: %v", err)
	}
}
