package store

import (
	"context"
	"crypto/sha256"
	"database/sql"
	"encoding/hex"
	"time"
)

// Sign-in throttling keeps its count in the database, so that every instance serving one
// database refuses the same guesses: spreading attempts over instances gains nothing.

const (
	countSignInFailures = `SELECT
		(SELECT COUNT(*) FROM signin_failures WHERE key_hash = ?1 AND at > ?3),
		(SELECT COUNT(*) FROM signin_failures WHERE key_hash = ?2 AND at > ?3)`
	addSignInFailure    = `INSERT INTO signin_failures(key_hash, at) VALUES (?, ?)`
	pruneSignInFailures = `DELETE FROM signin_failures WHERE at <= ?`
	clearSignInFailures = `DELETE FROM signin_failures WHERE key_hash = ?`
)

// signInKey is what a failure is recorded under: the SHA-256 of the kind and the value.
func signInKey(kind, value string) string {
	h := sha256.Sum256([]byte(kind + "\x00" + value))
	return hex.EncodeToString(h[:])
}

// SignInFailures counts the failed sign-ins for the account and from the address within the
// window up to now.
func (s *Store) SignInFailures(ctx context.Context, account, address string, window time.Duration) (forAccount, fromAddress int, err error) {
	cut := timeText(s.clock().Add(-window))
	err = s.r.QueryRowContext(ctx, countSignInFailures, signInKey("account", account), signInKey("address", address), cut).
		Scan(&forAccount, &fromAddress)
	return forAccount, fromAddress, err
}

// SignInFailed records a failed sign-in for the account and from the address, and forgets
// failures older than the window.
func (s *Store) SignInFailed(ctx context.Context, account, address string, window time.Duration) error {
	now := s.clock()
	return s.write(ctx, func(tx *sql.Tx) error {
		for _, k := range []string{signInKey("account", account), signInKey("address", address)} {
			if _, err := tx.ExecContext(ctx, addSignInFailure, k, timeText(now)); err != nil {
				return err
			}
		}
		_, err := tx.ExecContext(ctx, pruneSignInFailures, timeText(now.Add(-window)))
		return err
	})
}

// SignInSucceeded clears the account's failures; the address keeps its count.
func (s *Store) SignInSucceeded(ctx context.Context, account string) error {
	return s.write(ctx, func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, clearSignInFailures, signInKey("account", account))
		return err
	})
}
