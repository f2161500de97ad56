package store

import (
	"bytes"
	"context"
	"testing"
)

func TestPasswordLinkKeepsOnlyTheHashAndExpires(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	_, lead, _, users := fixture(t, s, 1, 1, 1)
	l, err := s.IssuePasswordLink(ctx, users[0], lead.ID)
	if err != nil {
		t.Fatal(err)
	}
	var stored []byte
	if err := s.r.QueryRowContext(ctx, `SELECT token_hash FROM password_links WHERE user_id = ?`, users[0]).Scan(&stored); err != nil {
		t.Fatal(err)
	}
	if !bytes.Equal(stored, tokenHash(l.Token)) || bytes.Contains(stored, []byte(l.Token)) {
		t.Error("the database holds something other than the token's hash")
	}
	if _, err := s.UserByPasswordLink(ctx, l.Token); err != nil {
		t.Fatalf("a fresh link: %v", err)
	}
	// Expiry is read from the row: move it into the past.
	if _, err := s.w.ExecContext(ctx, `UPDATE password_links SET expires_at = '2000-01-01T00:00:00.000Z'`); err != nil {
		t.Fatal(err)
	}
	if _, err := s.UserByPasswordLink(ctx, l.Token); ErrorCode(err) != CodeNotFound {
		t.Errorf("an expired link: %v, want not found", err)
	}
	if _, err := s.UsePasswordLink(ctx, l.Token, "a password after expiry"); ErrorCode(err) != CodeNotFound {
		t.Errorf("using an expired link: %v, want not found", err)
	}
	if _, err := s.Authenticate(ctx, "aa", "a password after expiry"); err == nil {
		t.Error("an expired link set the password")
	}
}

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
