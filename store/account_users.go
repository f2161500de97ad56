package store

import (
	"context"
	"database/sql"
	"errors"
	"strings"
	"unicode"

	"golang.org/x/crypto/bcrypt"
)

// Role is an account's role in the installation, or a member's role in a project.
type Role string

const (
	RoleAdmin    Role = "admin"    // runs the installation
	RoleLead     Role = "lead"     // runs projects, reviews and adjudicates
	RoleAssessor Role = "assessor" // grades pairs
	RoleSource   Role = "source"   // a named external origin of judgments; never signs in
)

// Valid reports whether r is one of the roles a person can hold.
func (r Role) Valid() bool { return r == RoleAdmin || r == RoleLead || r == RoleAssessor }

// User is an account.
type User struct {
	ID          int64
	Username    string
	DisplayName string
	Role        Role
	Disabled    bool
}

// Name is what pages show for the user.
func (u User) Name() string {
	if u.DisplayName != "" {
		return u.DisplayName
	}
	return u.Username
}

// MinPasswordLength is the shortest password accepted.
const MinPasswordLength = 10

// bcryptCost is bcrypt's default; tests may lower it through SetPasswordCost.
var bcryptCost = bcrypt.DefaultCost

// SetPasswordCost changes the bcrypt cost for new hashes; only tests lower it, to stay fast.
func SetPasswordCost(c int) { bcryptCost = c }

func hashPassword(pw string) (string, error) {
	if len(pw) < MinPasswordLength {
		return "", errorf(CodeInvalid, "a password needs at least 10 characters")
	}
	if len(pw) > 72 {
		return "", errorf(CodeInvalid, "a password may have at most 72 bytes")
	}
	h, err := bcrypt.GenerateFromPassword([]byte(pw), bcryptCost)
	return string(h), err
}

func validUsername(name string) error {
	if name == "" || len(name) > 64 {
		return errorf(CodeInvalid, "a username needs 1 to 64 characters")
	}
	for _, r := range name {
		if !(unicode.IsLetter(r) || unicode.IsDigit(r) || strings.ContainsRune("._-", r)) {
			return errorf(CodeInvalid, "a username may hold letters, digits, '.', '_' and '-' only")
		}
	}
	return nil
}

// CreateUser adds an account with a password. It is the command line's way in, so the audit
// row has no actor.
func (s *Store) CreateUser(ctx context.Context, username, displayName string, role Role, password string) (User, error) {
	hash, err := hashPassword(password)
	if err != nil {
		return User{}, err
	}
	var u User
	err = s.write(ctx, func(tx *sql.Tx) error {
		u, err = s.insertUser(ctx, tx, username, displayName, role, hash, 0)
		return err
	})
	return u, err
}

// insertUser adds an account inside tx and records who added it. An empty hash makes an
// account that cannot sign in until a password is set.
func (s *Store) insertUser(ctx context.Context, tx *sql.Tx, username, displayName string, role Role, hash string, by int64) (User, error) {
	username = strings.TrimSpace(username)
	displayName = strings.TrimSpace(displayName)
	if err := validUsername(username); err != nil {
		return User{}, err
	}
	if !role.Valid() {
		return User{}, errorf(CodeInvalid, "role must be admin, lead or assessor")
	}
	if len(displayName) > 120 {
		return User{}, errorf(CodeInvalid, "a display name may have at most 120 characters")
	}
	var id int64
	err := tx.QueryRowContext(ctx, `INSERT INTO users(username, display_name, role, password_hash, created_at)
		VALUES (?, ?, ?, ?, ?) RETURNING id`, username, displayName, string(role), hash, s.now()).Scan(&id)
	if isUniqueViolation(err) {
		return User{}, errorf(CodeConflict, "the username "+username+" is taken")
	}
	if err != nil {
		return User{}, err
	}
	if err := s.audit(ctx, tx, by, 0, "user.create", userRef(id), username+" as "+string(role)); err != nil {
		return User{}, err
	}
	return User{ID: id, Username: username, DisplayName: displayName, Role: role}, nil
}

const userColumns = `id, username, display_name, role, disabled_at IS NOT NULL`

func scanUser(row interface{ Scan(...any) error }) (User, error) {
	var u User
	var role string
	err := row.Scan(&u.ID, &u.Username, &u.DisplayName, &role, &u.Disabled)
	if errors.Is(err, sql.ErrNoRows) {
		return User{}, ErrNotFound
	}
	u.Role = Role(role)
	return u, err
}

// User looks an account up by id.
func (s *Store) User(ctx context.Context, id int64) (User, error) {
	return scanUser(s.r.QueryRowContext(ctx, `SELECT `+userColumns+` FROM users WHERE id = ?`, id))
}

// UserByUsername looks an account up by name, ignoring case.
func (s *Store) UserByUsername(ctx context.Context, username string) (User, error) {
	return scanUser(s.r.QueryRowContext(ctx, `SELECT `+userColumns+` FROM users WHERE username = ?`, username))
}

// Users lists every account that can sign in, by username.
func (s *Store) Users(ctx context.Context) ([]User, error) {
	return queryAll(ctx, s.r, `SELECT `+userColumns+` FROM users WHERE role != 'source' ORDER BY username`, scanUser)
}

// dummyHash keeps a failed look-up as slow as a wrong password, so timing does not reveal
// which usernames exist.
var dummyHash, _ = bcrypt.GenerateFromPassword([]byte("not a real password at all"), bcrypt.DefaultCost)

// Authenticate checks a username and password. Any failure, including a disabled account,
// is ErrBadCredentials.
func (s *Store) Authenticate(ctx context.Context, username, password string) (User, error) {
	var hash string
	u, err := scanUser(s.r.QueryRowContext(ctx, `SELECT `+userColumns+` FROM users WHERE username = ?`, username))
	if err == nil {
		err = s.r.QueryRowContext(ctx, `SELECT password_hash FROM users WHERE id = ?`, u.ID).Scan(&hash)
	}
	if err != nil {
		if errors.Is(err, ErrNotFound) {
			bcrypt.CompareHashAndPassword(dummyHash, []byte(password))
			return User{}, ErrBadCredentials
		}
		return User{}, err
	}
	if hash == "" || bcrypt.CompareHashAndPassword([]byte(hash), []byte(password)) != nil {
		return User{}, ErrBadCredentials
	}
	if u.Disabled || !u.Role.Valid() {
		return User{}, ErrBadCredentials
	}
	return u, nil
}

// SetPassword replaces an account's password and ends its sessions. It is the command
// line's way, so the audit row has no actor.
func (s *Store) SetPassword(ctx context.Context, userID int64, password string) error {
	return s.storePassword(ctx, userID, 0, "password.set", password)
}

// storePassword hashes password, stores it (setPasswordHash) and records action by actor.
func (s *Store) storePassword(ctx context.Context, userID, actor int64, action, password string) error {
	hash, err := hashPassword(password)
	if err != nil {
		return err
	}
	return s.write(ctx, func(tx *sql.Tx) error {
		if err := setPasswordHash(ctx, tx, userID, hash); err != nil {
			return err
		}
		return s.audit(ctx, tx, actor, 0, action, userRef(userID), "")
	})
}

// setPasswordHash stores a new hash and ends every session of the account, so whoever held
// the old password is signed out.
func setPasswordHash(ctx context.Context, tx *sql.Tx, userID int64, hash string) error {
	res, err := tx.ExecContext(ctx, `UPDATE users SET password_hash = ? WHERE id = ? AND role != 'source'`, hash, userID)
	if err != nil {
		return err
	}
	if n, _ := res.RowsAffected(); n == 0 {
		return ErrNotFound
	}
	_, err = tx.ExecContext(ctx, `DELETE FROM sessions WHERE user_id = ?`, userID)
	return err
}

// SetUserDisabled disables or re-enables an account on behalf of an admin (by), or from the
// command line (by 0: no actor in the audit row). Disabling ends its sessions and voids its
// open password links at once; its judgments and memberships stay.
func (s *Store) SetUserDisabled(ctx context.Context, userID int64, disabled bool, by int64) error {
	if disabled && userID == by {
		return errorf(CodeConflict, "you cannot disable your own account: ask another admin")
	}
	return s.write(ctx, func(tx *sql.Tx) error {
		var res sql.Result
		var err error
		action := "user.enable"
		if disabled {
			action = "user.disable"
			res, err = tx.ExecContext(ctx, `UPDATE users SET disabled_at = COALESCE(disabled_at, ?) WHERE id = ? AND role != 'source'`, s.now(), userID)
		} else {
			res, err = tx.ExecContext(ctx, `UPDATE users SET disabled_at = NULL WHERE id = ? AND role != 'source'`, userID)
		}
		if err != nil {
			return err
		}
		if n, _ := res.RowsAffected(); n == 0 {
			return ErrNotFound
		}
		if disabled {
			if _, err = tx.ExecContext(ctx, `DELETE FROM sessions WHERE user_id = ?`, userID); err != nil {
				return err
			}
			if _, err = tx.ExecContext(ctx, `DELETE FROM password_links WHERE user_id = ? AND used_at IS NULL`, userID); err != nil {
				return err
			}
		}
		return s.audit(ctx, tx, by, 0, action, userRef(userID), "")
	})
}

// ChangePassword lets a signed-in user replace their own password; the current one is
// required, so an unattended session cannot lock its owner out. Every session of the
// account ends; the caller signs the user in afresh.
func (s *Store) ChangePassword(ctx context.Context, userID int64, current, next string) error {
	var old string
	err := s.r.QueryRowContext(ctx, `SELECT password_hash FROM users WHERE id = ?`, userID).Scan(&old)
	if errors.Is(err, sql.ErrNoRows) {
		return ErrNotFound
	}
	if err != nil {
		return err
	}
	if old == "" || bcrypt.CompareHashAndPassword([]byte(old), []byte(current)) != nil {
		return errorf(CodeDenied, "the current password is not right")
	}
	return s.storePassword(ctx, userID, userID, "password.change", next)
}
