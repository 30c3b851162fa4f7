package tableio

import (
	"fmt"
	"strconv"
	"unicode"
	"unicode/utf8"

	"trueup/inputerr"
)

// CheckKeyText refuses a key that a person could not read back or that
// could be mistaken for another: one holding a control character (C0,
// DEL or C1: NUL, tab, line breaks, the escape that starts a terminal
// sequence) or bytes that are not UTF-8 text. Such keys print
// unreadably, open terminal escape sequences and, once joined or
// re-encoded, can make two different series look like one. The error
// shows the key escaped (strconv.Quote) and names the first bad
// character; callers add the file, column and row.
func CheckKeyText(s string) error {
	for i, r := range s {
		switch {
		case r == utf8.RuneError && !validAt(s, i):
			return fmt.Errorf("key %s is not UTF-8 text (byte %d is 0x%02x); save the file as UTF-8", strconv.Quote(s), i+1, s[i])
		case unicode.IsControl(r):
			return fmt.Errorf("key %s contains the control character %U at byte %d; keys must be printable text", strconv.Quote(s), r, i+1)
		}
	}
	return nil
}

// validAt reports whether the rune at byte i of s is a well-formed
// encoding (of U+FFFD itself), not an invalid byte.
func validAt(s string, i int) bool {
	_, size := utf8.DecodeRuneInString(s[i:])
	return size == 3
}

// checkKeyDicts applies CheckKeyText to every distinct key of r and
// places the first refusal at the first data row (from 1) holding it.
// Each distinct key is checked once, so the cost is that of the
// dictionaries, not of the rows.
func checkKeyDicts(r *Rows) error {
	for k, dict := range r.KeyDict {
		for code, s := range dict {
			err := CheckKeyText(s)
			if err == nil {
				continue
			}
			row := 0
			for i, c := range r.KeyCodes[k] {
				if c == int32(code) {
					row = i + 1
					break
				}
			}
			return &inputerr.Error{Row: row, Column: r.KeyNames[k], Err: err}
		}
	}
	return nil
}
