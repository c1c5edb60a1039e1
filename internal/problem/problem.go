// Package problem holds typed errors whose message is safe to show a user.
//
// Domain and store code return a *problem.Error when the cause is something
// the user did or can fix (bad input, a missing dataset, a name already
// taken). Any other error is internal: callers show a reference code and log
// the whole chain.
package problem

import (
	"errors"
	"fmt"
)

// Kind says what sort of problem it is; web maps kinds to status codes.
type Kind int

const (
	Invalid   Kind = iota + 1 // the input is wrong (400/422)
	NotFound                  // the thing asked for does not exist (404)
	Conflict                  // the request clashes with current state (409)
	Forbidden                 // the user may not do this (403)
)

func (k Kind) String() string {
	switch k {
	case Invalid:
		return "invalid"
	case NotFound:
		return "not found"
	case Conflict:
		return "conflict"
	case Forbidden:
		return "forbidden"
	}
	return fmt.Sprintf("kind(%d)", int(k))
}

// Error is a problem a user can understand. Message is shown as is; Err, if
// set, is the underlying cause for logs only.
type Error struct {
	Kind    Kind
	Message string
	Err     error
}

func (e *Error) Error() string {
	if e.Err != nil {
		return e.Message + ": " + e.Err.Error()
	}
	return e.Message
}

func (e *Error) Unwrap() error { return e.Err }

// New returns a problem of the given kind with a formatted message.
func New(kind Kind, format string, args ...any) *Error {
	return &Error{Kind: kind, Message: fmt.Sprintf(format, args...)}
}

// Wrap returns a problem whose message is shown to users and whose cause is
// kept for logs.
func Wrap(kind Kind, err error, format string, args ...any) *Error {
	return &Error{Kind: kind, Message: fmt.Sprintf(format, args...), Err: err}
}

// As returns the first *Error in err's chain, or nil.
func As(err error) *Error {
	var p *Error
	if errors.As(err, &p) {
		return p
	}
	return nil
}

// Message returns the user-safe message of err when it is a problem, and
// ok=false otherwise (then the caller must not show err's text).
func Message(err error) (msg string, ok bool) {
	if p := As(err); p != nil {
		return p.Message, true
	}
	return "", false
}

// Is reports whether err is a problem of the given kind.
func Is(err error, kind Kind) bool {
	p := As(err)
	return p != nil && p.Kind == kind
}
