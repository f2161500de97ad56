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
