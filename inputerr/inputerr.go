// Package inputerr is the error type for problems caused by the user's data
// or options rather than by trueup: a missing file, a bad cell, an option
// out of range. Callers tell such errors apart with errors.As, so that a
// command line can exit with status 2 and print the message as it stands,
// and a library user can read the position fields.
//
// The type follows encoding/csv's ParseError: position fields, and the
// underlying cause kept (not flattened into text), so that
// errors.Is(err, fs.ErrNotExist) works on an error about a missing file.
package inputerr

import (
	"errors"
	"fmt"
	"strconv"
	"strings"
)

// Error is a problem with the user's input. Fields that do not apply are
// zero. Messages never name command-line flags: Option names the option by
// its library name, and a command line maps it to its own flag.
type Error struct {
	File   string // path of the input file at fault
	Line   int    // text line of a CSV file, the header being line 1
	Row    int    // data row, counting from 1 (the header of a CSV file is not a row)
	Column string // column at fault
	Option string // library option at fault, e.g. "Horizon"
	Msg    string // what is wrong, in words
	Err    error  // the underlying cause, if any
}

// Error formats the position, then the message, then the cause:
// "sales.csv line 14 column \"units\": not a number: ...".
func (e *Error) Error() string {
	var where []string
	if e.File != "" {
		where = append(where, e.File)
	}
	if e.Line > 0 {
		where = append(where, "line "+strconv.Itoa(e.Line))
	}
	if e.Row > 0 {
		where = append(where, "row "+strconv.Itoa(e.Row))
	}
	if e.Column != "" {
		where = append(where, "column "+strconv.Quote(e.Column))
	}
	var b strings.Builder
	if len(where) > 0 {
		b.WriteString(strings.Join(where, " "))
		if e.Msg != "" || e.Err != nil {
			b.WriteString(": ")
		}
	}
	b.WriteString(e.Msg)
	if e.Err != nil {
		if e.Msg != "" {
			b.WriteString(": ")
		}
		b.WriteString(e.Err.Error())
	}
	return b.String()
}

// Unwrap returns the underlying cause.
func (e *Error) Unwrap() error { return e.Err }

// New formats a message as an input error without position.
func New(format string, args ...any) error {
	return &Error{Msg: fmt.Sprintf(format, args...)}
}

// ForOption is an input error about the library option named opt (for
// example "Horizon"); the message should describe the option in words.
func ForOption(opt, format string, args ...any) error {
	return &Error{Option: opt, Msg: fmt.Sprintf(format, args...)}
}

// Wrap marks cause as an input error about file, keeping the cause for
// errors.Is and errors.As.
func Wrap(file string, cause error) error {
	return &Error{File: file, Err: cause}
}

// Is reports whether err is, or wraps, an input error.
func Is(err error) bool {
	var e *Error
	return errors.As(err, &e)
}

// OptionOf returns the library option an input error is about, or "".
func OptionOf(err error) string {
	var e *Error
	if errors.As(err, &e) {
		return e.Option
	}
	return ""
}
