package web

import (
	"context"
	"time"

	"github.com/pertinent/pertinent/store"
)

// throttle refuses sign-ins for an account or from an address after too many failures within
// a window. The failures are kept in the database (store/account_throttle.go), so every
// instance serving it counts the same tries and a restart forgets nothing.
type throttle struct {
	store      *store.Store
	window     time.Duration
	perAccount int
	perAddress int
}

func newThrottle(st *store.Store) *throttle {
	return &throttle{store: st, window: 15 * time.Minute, perAccount: 5, perAddress: 20}
}

// allowed reports whether a sign-in for this account from this address may be tried now.
func (t *throttle) allowed(ctx context.Context, account, address string) (bool, error) {
	a, b, err := t.store.SignInFailures(ctx, account, address, t.window)
	return err == nil && a < t.perAccount && b < t.perAddress, err
}

func (t *throttle) failed(ctx context.Context, account, address string) error {
	return t.store.SignInFailed(ctx, account, address, t.window)
}

// succeeded clears the account's failures; the address keeps its count.
func (t *throttle) succeeded(ctx context.Context, account string) error {
	return t.store.SignInSucceeded(ctx, account)
}
