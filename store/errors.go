package store

import (
	"errors"

	"modernc.org/sqlite"
	sqlite3 "modernc.org/sqlite/lib"
)

// Code classifies a store error so the web layer can choose a status without reading messages.
type Code int

const (
	CodeInvalid  Code = iota + 1 // the request itself is wrong
	CodeNotFound                 // no such thing, or not visible to this user
	CodeConflict                 // valid, but the current state refuses it
	CodeDenied                   // the user may not do this
)

// Error is an error with a code and a message fit to show a user.
type Error struct {
	Code    Code
	Message string
}

func (e *Error) Error() string { return e.Message }

func errorf(code Code, msg string) error { return &Error{Code: code, Message: msg} }

// ErrorCode returns the code of err, or 0 when err is not a store error.
func ErrorCode(err error) Code {
	var e *Error
	if errors.As(err, &e) {
		return e.Code
	}
	return 0
}

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
// this from its own codes here.
func isUniqueViolation(err error) bool {
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
