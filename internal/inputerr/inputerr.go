// Package inputerr marks errors caused by the user's data or options, so the
// command line can exit with status 2 and print the message as it stands.
package inputerr

import (
	"errors"
	"fmt"
)

// Error is a problem with the user's input: a file, a column, a row, a key
// or an option. Its message names the thing at fault.
type Error struct{ Msg string }

func (e *Error) Error() string { return e.Msg }

// New formats a message as an input error.
func New(format string, args ...any) error {
	return &Error{Msg: fmt.Sprintf(format, args...)}
}

// Is reports whether err is, or wraps, an input error.
func Is(err error) bool {
	var e *Error
	return errors.As(err, &e)
}
