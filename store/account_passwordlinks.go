package store

import (
	"context"
	"database/sql"
	"errors"
	"time"
)

// PasswordLinkTTL is how long a set-password link stays usable.
const PasswordLinkTTL = 24 * time.Hour

// PasswordLink is a freshly issued one-time link: the token is shown once and only its
// hash is kept.
type PasswordLink struct {
	User    User
	Token   string
	Expires time.Time
}

// errLinkGone is the one answer for a link that is unknown, used, expired or whose account
// is disabled, so the page does not tell which.
var errLinkGone = errorf(CodeNotFound, "this link has expired or has been used already: ask an admin for a new one")

// IssuePasswordLink makes a one-time link with which the account's holder chooses a new
// password. Earlier unused links of the account stop working; the current password and
// sessions stay until the link is used.
func (s *Store) IssuePasswordLink(ctx context.Context, userID, by int64) (PasswordLink, error) {
	var l PasswordLink
	err := s.write(ctx, func(tx *sql.Tx) error {
		var err error
		l, err = s.issueLink(ctx, s.clock(), tx, userID, by)
		return err
	})
	return l, err
}

func (s *Store) issueLink(ctx context.Context, at time.Time, tx *sql.Tx, userID, by int64) (PasswordLink, error) {
	u, err := scanUser(tx.QueryRowContext(ctx, `SELECT `+userColumns+` FROM users WHERE id = ? AND role != 'source'`, userID))
	if err != nil {
		return PasswordLink{}, err
	}
	if u.Disabled {
		return PasswordLink{}, errorf(CodeConflict, "the account of "+u.Username+" is disabled: enable it first")
	}
	if _, err := tx.ExecContext(ctx, `DELETE FROM password_links WHERE user_id = ? AND used_at IS NULL`, userID); err != nil {
		return PasswordLink{}, err
	}
	token, hash := newToken()
	l := PasswordLink{User: u, Token: token, Expires: at.Add(PasswordLinkTTL).UTC().Truncate(time.Millisecond)}
	if _, err := tx.ExecContext(ctx, `INSERT INTO password_links(token_hash, user_id, created_by, created_at, expires_at) VALUES (?, ?, ?, ?, ?)`,
		hash, userID, nullID(by), timeText(at), timeText(l.Expires)); err != nil {
		return PasswordLink{}, err
	}
	return l, s.audit(ctx, tx, by, 0, "password.link", userRef(userID), "expires "+timeText(l.Expires))
}

// InviteUser creates an account without a password together with the link its holder
// uses to choose one, in one transaction.
func (s *Store) InviteUser(ctx context.Context, username, displayName string, role Role, by int64) (PasswordLink, error) {
	var l PasswordLink
	err := s.write(ctx, func(tx *sql.Tx) error {
		u, err := s.insertUser(ctx, tx, username, displayName, role, "", by)
		if err != nil {
			return err
		}
		l, err = s.issueLink(ctx, s.clock(), tx, u.ID, by)
		return err
	})
	return l, err
}

// UserByPasswordLink returns the account a link is for, while the link is still usable.
func (s *Store) UserByPasswordLink(ctx context.Context, token string) (User, error) {
	u, err := scanUser(s.r.QueryRowContext(ctx, `SELECT u.id, u.username, u.display_name, u.role, u.disabled_at IS NOT NULL
		FROM password_links l JOIN users u ON u.id = l.user_id
		WHERE l.token_hash = ? AND l.used_at IS NULL AND l.expires_at > ? AND u.disabled_at IS NULL`, tokenHash(token), timeText(s.clock())))
	if errors.Is(err, ErrNotFound) {
		return User{}, errLinkGone
	}
	return u, err
}

// UsePasswordLink sets the password of the link's account and spends the link, so it works
// once. Every session of the account ends.
func (s *Store) UsePasswordLink(ctx context.Context, token, password string) (User, error) {
	hash, err := hashPassword(password)
	if err != nil {
		return User{}, err
	}
	var u User
	err = s.write(ctx, func(tx *sql.Tx) error {
		at := timeText(s.clock())
		var userID int64
		// Spending the link first, guarded by used_at, makes two racing uses yield one winner.
		err := tx.QueryRowContext(ctx, `UPDATE password_links SET used_at = ?1
			WHERE token_hash = ?2 AND used_at IS NULL AND expires_at > ?1
			AND user_id IN (SELECT id FROM users WHERE disabled_at IS NULL)
			RETURNING user_id`, at, tokenHash(token)).Scan(&userID)
		if errors.Is(err, sql.ErrNoRows) {
			return errLinkGone
		}
		if err != nil {
			return err
		}
		if err := setPasswordHash(ctx, tx, userID, hash); err != nil {
			return err
		}
		if u, err = scanUser(tx.QueryRowContext(ctx, `SELECT `+userColumns+` FROM users WHERE id = ?`, userID)); err != nil {
			return err
		}
		return s.audit(ctx, tx, userID, 0, "password.link_used", userRef(userID), "")
	})
	return u, err
}
