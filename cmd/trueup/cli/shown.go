package cli

import (
	"strconv"
	"strings"
	"unicode/utf8"
)

// Keys come from the user's files. Control characters are refused when a
// file is read (tableio.CheckKeyText), but other characters that do not
// print as themselves (a right-to-left override, a zero-width space, a
// no-break space) can still make one key look like another on the
// terminal, or reorder the text around it. Keys and texts holding keys
// are therefore printed through shownKey or escapeUnprintable.

// printable reports whether every character of s prints as itself
// (strconv.IsPrint: letters, marks, numbers, punctuation, symbols and
// the ASCII space) and s is UTF-8.
func printable(s string) bool {
	return utf8.ValidString(s) && strings.IndexFunc(s, func(r rune) bool { return !strconv.IsPrint(r) }) < 0
}

// shownKey is s as it is when printable, else quoted in Go syntax
// ("N\u202e01"), so the reader sees the key is not the plain text it
// resembles.
func shownKey(s string) string {
	if printable(s) {
		return s
	}
	return strconv.Quote(s)
}

// escapeUnprintable is a message with each character that does not print
// as itself written as its Go escape (\u202e, \x00); line breaks are kept.
func escapeUnprintable(s string) string {
	if printable(strings.ReplaceAll(s, "\n", "")) {
		return s
	}
	var b strings.Builder
	for len(s) > 0 {
		r, size := utf8.DecodeRuneInString(s)
		switch q := strconv.Quote(s[:size]); {
		case r == '\n' || r != utf8.RuneError && strconv.IsPrint(r):
			b.WriteString(s[:size])
		default:
			b.WriteString(q[1 : len(q)-1])
		}
		s = s[size:]
	}
	return b.String()
}
