package store

import (
	"errors"

	"github.com/jackc/pgx/v5/pgconn"
	"modernc.org/sqlite"
	sqlite3 "modernc.org/sqlite/lib"

	"github.com/pertinent/pertinent"
)

// The store's error names are the root package's, kept as aliases so callers read
// store.CodeInvalid beside store.ErrNotFound; there is one type.
type (
	Code  = pertinent.Code
	Error = pertinent.Error
)

const (
	CodeInvalid  = pertinent.Invalid
	CodeNotFound = pertinent.NotFound
	CodeConflict = pertinent.Conflict
	CodeDenied   = pertinent.Denied
)

func errorf(code Code, msg string) error { return &Error{Code: code, Message: msg} }

// ErrorCode returns the code of err, or 0 when err carries no Error.
func ErrorCode(err error) Code { return pertinent.CodeOf(err) }

var (
	// ErrNotFound is returned when a looked-up row does not exist.
	ErrNotFound = errorf(CodeNotFound, "not found")
	// ErrBadCredentials is returned by Authenticate for any failed sign-in, whatever the cause.
	ErrBadCredentials = errorf(CodeDenied, "wrong username or password")
	// ErrNoWork is returned by NextPair when nothing is left for this assessor.
	ErrNoWork = errorf(CodeNotFound, "no pairs left to judge")
)

// isUniqueViolation reports whether err is the engine refusing a duplicate key: a UNIQUE
// index or a PRIMARY KEY. It reads the driver's extended result code, not the message, which
// a trigger's RAISE can imitate and a driver update can reword; another engine would answer
// this from its own codes here: PostgreSQL's is SQLSTATE 23505 (unique_violation), which
// covers primary keys too.
func isUniqueViolation(err error) bool {
	var pe *pgconn.PgError
	if errors.As(err, &pe) {
		return pe.Code == "23505"
	}
	var e *sqlite.Error
	if !errors.As(err, &e) {
		return false
	}
	switch e.Code() {
	case sqlite3.SQLITE_CONSTRAINT_UNIQUE, sqlite3.SQLITE_CONSTRAINT_PRIMARYKEY:
		return true
	}
	return false
}
