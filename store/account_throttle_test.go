package store

import (
	"context"
	"testing"
	"time"
)

// Failures count within the window and no longer after it; a success clears the account's
// count but not the address's; what is stored is a hash, never the typed name or address.
func TestSignInFailuresWindowAndHashing(t *testing.T) {
	s := openTest(t)
	ctx := context.Background()
	now := time.Date(2026, 12, 1, 10, 0, 0, 0, time.UTC)
	s.SetClock(func() time.Time { return now })
	const w = 15 * time.Minute
	for range 3 {
		if err := s.SignInFailed(ctx, "bea", "192.0.2.7", w); err != nil {
			t.Fatal(err)
		}
		now = now.Add(time.Minute)
	}
	if a, b, err := s.SignInFailures(ctx, "bea", "192.0.2.7", w); err != nil || a != 3 || b != 3 {
		t.Fatalf("counts %d, %d (%v); want 3, 3", a, b, err)
	}
	if a, b, _ := s.SignInFailures(ctx, "amir", "192.0.2.8", w); a != 0 || b != 0 {
		t.Fatalf("another account and address: %d, %d", a, b)
	}
	var clear int
	if err := s.r.QueryRowContext(ctx, `SELECT COUNT(*) FROM signin_failures WHERE key_hash LIKE '%bea%' OR key_hash LIKE '%192.0.2%'`).Scan(&clear); err != nil || clear != 0 {
		t.Fatalf("%d rows hold the name or address in the clear (%v)", clear, err)
	}
	if err := s.SignInSucceeded(ctx, "bea"); err != nil {
		t.Fatal(err)
	}
	if a, b, _ := s.SignInFailures(ctx, "bea", "192.0.2.7", w); a != 0 || b != 3 {
		t.Fatalf("after a success: %d, %d; want 0, 3", a, b)
	}
	// Past the window the address's failures no longer count, and the next failure prunes them.
	now = now.Add(w)
	if _, b, _ := s.SignInFailures(ctx, "bea", "192.0.2.7", w); b != 0 {
		t.Fatalf("after the window: %d", b)
	}
	if err := s.SignInFailed(ctx, "cyd", "192.0.2.9", w); err != nil {
		t.Fatal(err)
	}
	var rows int
	s.r.QueryRowContext(ctx, `SELECT COUNT(*) FROM signin_failures`).Scan(&rows)
	if rows != 2 {
		t.Fatalf("%d rows kept, want only the 2 of the last failure", rows)
	}
}
