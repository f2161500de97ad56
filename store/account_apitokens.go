package store

import (
	"context"
	"database/sql"
	"errors"
	"strconv"
	"strings"
	"time"
)

// APITokenPrefix starts every API token, so a leaked one is recognisable in logs and files.
const APITokenPrefix = "pt_"

// APIToken is one of a user's API tokens as the settings page lists it; the token text itself
// is shown once, at creation, and only its SHA-256 is kept.
type APIToken struct {
	ID        int64
	Name      string
	CreatedAt time.Time
	LastUsed  time.Time // zero when never used
	Revoked   bool
	RevokedAt time.Time
}

// CreateAPIToken makes a new token for a user and returns its text, which cannot be read
// back later.
func (s *Store) CreateAPIToken(ctx context.Context, userID int64, name string) (string, APIToken, error) {
	name = strings.TrimSpace(name)
	if name == "" || len(name) > 80 {
		return "", APIToken{}, errorf(CodeInvalid, "name the token (1 to 80 characters), e.g. after the machine that uses it")
	}
	raw, _ := newToken()
	token := APITokenPrefix + raw
	t := APIToken{Name: name, CreatedAt: parseTime(s.now())}
	err := s.write(ctx, func(tx *sql.Tx) error {
		err := tx.QueryRowContext(ctx, `INSERT INTO api_tokens(user_id, name, token_hash, created_at) VALUES (?, ?, ?, ?) RETURNING id`,
			userID, name, tokenHash(token), timeText(t.CreatedAt)).Scan(&t.ID)
		if err != nil {
			return err
		}
		return s.audit(ctx, tx, userID, 0, "token.create", userRef(userID), "token "+strconv.FormatInt(t.ID, 10)+": "+name)
	})
	if err != nil {
		return "", APIToken{}, err
	}
	return token, t, nil
}

// APITokens lists a user's tokens, newest first, revoked ones included.
func (s *Store) APITokens(ctx context.Context, userID int64) ([]APIToken, error) {
	return queryAll(ctx, s.r, `SELECT id, name, created_at, COALESCE(last_used_at, ''), COALESCE(revoked_at, '')
		FROM api_tokens WHERE user_id = ? ORDER BY id DESC`, func(r rowScanner) (APIToken, error) {
		var t APIToken
		var created, used, revoked string
		err := r.Scan(&t.ID, &t.Name, &created, &used, &revoked)
		t.CreatedAt, t.LastUsed, t.RevokedAt = parseTime(created), parseTime(used), parseTime(revoked)
		t.Revoked = revoked != ""
		return t, err
	}, userID)
}

// RevokeAPIToken ends one of the user's own tokens at once; the row stays for the record.
func (s *Store) RevokeAPIToken(ctx context.Context, userID, tokenID int64) error {
	return s.write(ctx, func(tx *sql.Tx) error {
		var name string
		err := tx.QueryRowContext(ctx, `UPDATE api_tokens SET revoked_at = ? WHERE id = ? AND user_id = ? AND revoked_at IS NULL RETURNING name`,
			s.now(), tokenID, userID).Scan(&name)
		if errors.Is(err, sql.ErrNoRows) {
			return errorf(CodeNotFound, "you have no such token, or it is revoked already")
		}
		if err != nil {
			return err
		}
		return s.audit(ctx, tx, userID, 0, "token.revoke", userRef(userID), "token "+strconv.FormatInt(tokenID, 10)+": "+name)
	})
}

// UserByAPIToken returns the account of a live API token (not revoked, account enabled) and
// notes when the token was used. An unknown, revoked or malformed token, or a disabled account,
// is ErrNotFound; a database failure is returned as it is.
func (s *Store) UserByAPIToken(ctx context.Context, token string) (User, error) {
	if !strings.HasPrefix(token, APITokenPrefix) {
		return User{}, ErrNotFound
	}
	var u User
	err := s.write(ctx, func(tx *sql.Tx) error {
		var uid int64
		err := tx.QueryRowContext(ctx, `UPDATE api_tokens SET last_used_at = ?
			WHERE token_hash = ? AND revoked_at IS NULL
			AND user_id IN (SELECT id FROM users WHERE disabled_at IS NULL AND role IN ('admin', 'lead', 'assessor'))
			RETURNING user_id`, s.now(), tokenHash(token)).Scan(&uid)
		if errors.Is(err, sql.ErrNoRows) {
			return ErrNotFound
		}
		if err != nil {
			return err
		}
		u, err = scanUser(tx.QueryRowContext(ctx, `SELECT `+userColumns+` FROM users WHERE id = ?`, uid))
		return err
	})
	if err != nil {
		return User{}, err
	}
	return u, nil
}
