// Package pertinent holds the domain's plain types shared by every other package: today the
// one error type a user may be shown. It imports nothing of ours, so the pure packages
// (export, rankeval, estimate) can return it without depending on the store.
package pertinent

import (
	"errors"
	"fmt"
)

// Code classifies an error so the web layer chooses a status without reading messages.
type Code int

const (
	Invalid  Code = iota + 1 // the request itself is wrong
	NotFound                 // no such thing, or not visible to this user
	Conflict                 // valid, but the current state refuses it
	Denied                   // the user may not do this
)

// Error is a problem with a code and a message fit to show a user. Source names the package
// that found it ("export", "rankeval", ...): Error() prefixes it, as Go errors read on the
// command line, while pages and the API show Message alone.
type Error struct {
	Code    Code
	Message string
	Source  string
}

func (e *Error) Error() string {
	if e.Source == "" {
		return e.Message
	}
	return e.Source + ": " + e.Message
}

// Errorf makes an Error of a package; the message is formatted as by fmt.Sprintf.
func Errorf(code Code, source, format string, args ...any) *Error {
	return &Error{Code: code, Message: fmt.Sprintf(format, args...), Source: source}
}

// AsError returns the Error inside err, if there is one.
func AsError(err error) (*Error, bool) {
	var e *Error
	ok := errors.As(err, &e)
	return e, ok
}

// CodeOf returns the code of err, or 0 when err carries no Error.
func CodeOf(err error) Code {
	if e, ok := AsError(err); ok {
		return e.Code
	}
	return 0
}
