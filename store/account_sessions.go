package store

import (
	"context"
	"crypto/rand"
	"crypto/sha256"
	"database/sql"
	"encoding/base64"
	"errors"
	"time"
)

// newToken returns a random token for the client and the hash kept in the database, so a
// copy of the database does not hand out live sessions.
func newToken() (token string, hash []byte) {
	b := make([]byte, 32)
	rand.Read(b)
	token = base64.RawURLEncoding.EncodeToString(b)
	return token, tokenHash(token)
}

func tokenHash(token string) []byte {
	h := sha256.Sum256([]byte(token))
	return h[:]
}

// CreateSession starts a session for a user and returns its token.
func (s *Store) CreateSession(ctx context.Context, userID int64, ttl time.Duration) (string, error) {
	token, hash := newToken()
	t := s.clock()
	err := s.write(ctx, func(tx *sql.Tx) error {
		// Sweep this user's expired sessions so the table does not grow without bound.
		if _, err := tx.ExecContext(ctx, `DELETE FROM sessions WHERE user_id = ? AND expires_at < ?`, userID, timeText(t)); err != nil {
			return err
		}
		_, err := tx.ExecContext(ctx, `INSERT INTO sessions(token_hash, user_id, created_at, expires_at) VALUES (?, ?, ?, ?)`,
			hash, userID, timeText(t), timeText(t.Add(ttl)))
		return err
	})
	return token, err
}

// UserBySession returns the user of a live session: unexpired, and the account not disabled.
func (s *Store) UserBySession(ctx context.Context, token string) (User, error) {
	if token == "" {
		return User{}, ErrNotFound
	}
	u, err := scanUser(s.readRow(ctx, `SELECT u.id, u.username, u.display_name, u.role, u.disabled_at IS NOT NULL
		FROM sessions s JOIN users u ON u.id = s.user_id
		WHERE s.token_hash = ? AND s.expires_at > ? AND u.disabled_at IS NULL`, tokenHash(token), s.now()))
	if errors.Is(err, ErrNotFound) {
		return User{}, ErrNotFound
	}
	return u, err
}

// DeleteSession ends a session; ending one that does not exist is not an error.
func (s *Store) DeleteSession(ctx context.Context, token string) error {
	return s.write(ctx, func(tx *sql.Tx) error {
		_, err := tx.ExecContext(ctx, `DELETE FROM sessions WHERE token_hash = ?`, tokenHash(token))
		return err
	})
}

// SessionKeys returns the keys that sign and encrypt session cookies, generating and keeping
// them on first use so restarts do not sign everyone out.
func (s *Store) SessionKeys(ctx context.Context) (hashKey, blockKey []byte, err error) {
	err = s.write(ctx, func(tx *sql.Tx) error {
		var v []byte
		err := tx.QueryRowContext(ctx, `SELECT value FROM settings WHERE key = 'session_keys'`).Scan(&v)
		if errors.Is(err, sql.ErrNoRows) {
			v = make([]byte, 64+32)
			rand.Read(v)
			// Two instances starting together on one PostgreSQL database both get here: the
			// second's insert waits for the first's and does nothing, and both read its keys.
			if _, err = tx.ExecContext(ctx, `INSERT INTO settings(key, value) VALUES ('session_keys', ?) ON CONFLICT (key) DO NOTHING`, v); err == nil {
				err = tx.QueryRowContext(ctx, `SELECT value FROM settings WHERE key = 'session_keys'`).Scan(&v)
			}
		}
		if err != nil {
			return err
		}
		if len(v) != 96 {
			return errors.New("store: stored session keys are damaged")
		}
		hashKey, blockKey = v[:64], v[64:]
		return nil
	})
	return hashKey, blockKey, err
}
