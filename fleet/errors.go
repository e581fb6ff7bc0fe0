// Package fleet holds the domain types, rules and the one error type shared by
// every layer. It does no I/O.
package fleet

import (
	"errors"
	"fmt"
	"time"
)

// Error codes. The API maps each to one HTTP status.
const (
	ECONFLICT      = "conflict"      // a uniqueness or overlap rule refused the change
	EINVALID       = "invalid"       // the input is malformed or breaks a rule
	EUNPROCESSABLE = "unprocessable" // well-formed input that cannot be acted on (e.g. a bad log)
	ENOTFOUND      = "not_found"
	EFORBIDDEN     = "forbidden"
	EUNAUTHORIZED  = "unauthorized"
	EPRECONDITION  = "precondition_failed" // If-Match did not match
	EPRECONDREQ    = "precondition_required"
	ETOOLARGE      = "too_large"
	EUNAVAILABLE   = "unavailable" // the database or another dependency is down
	ETOOMANY       = "too_many_requests"
	ETIMEOUT       = "timeout" // the request body arrived too slowly
	EINTERNAL      = "internal"
)

// Error is the domain error. Message is safe to show to a client; Field names
// the input member at fault (a JSON field, or "line 12, column pack_v").
type Error struct {
	Code    string
	Message string
	Field   string
	// Line and Column locate a fault in an uploaded file (1-based line).
	Line   int
	Column string
	// RetryAfter, when set, is how soon a retry may succeed (a key in use,
	// a rate limit, a full queue).
	RetryAfter time.Duration
}

func (e *Error) Error() string {
	if e.Field != "" {
		return fmt.Sprintf("%s: %s (%s)", e.Code, e.Message, e.Field)
	}
	return fmt.Sprintf("%s: %s", e.Code, e.Message)
}

// Errorf returns a domain error with a formatted message.
func Errorf(code, format string, args ...any) *Error {
	return &Error{Code: code, Message: fmt.Sprintf(format, args...)}
}

// FieldError returns an EINVALID error naming the field at fault.
func FieldError(field, format string, args ...any) *Error {
	return &Error{Code: EINVALID, Field: field, Message: fmt.Sprintf(format, args...)}
}

// ErrorCode returns the code of a domain error, or EINTERNAL for anything else.
func ErrorCode(err error) string {
	var e *Error
	if err == nil {
		return ""
	} else if errors.As(err, &e) {
		return e.Code
	}
	return EINTERNAL
}

// ErrorMessage returns the client-safe message of an error.
func ErrorMessage(err error) string {
	var e *Error
	if errors.As(err, &e) {
		return e.Message
	}
	return "internal error"
}
