// Package words writes counts in plain English for messages and
// summaries: "1 node", "3,857 nodes".
package words

import (
	"strconv"
)

// Count writes n with thousands separators followed by the singular or
// the plural noun, as n is one or not: Count(1, "node", "nodes") is
// "1 node", Count(3857, "node", "nodes") "3,857 nodes".
func Count(n int, singular, plural string) string {
	noun := plural
	if n == 1 {
		noun = singular
	}
	return Thousands(n) + " " + noun
}

// Agree returns the singular or the plural form, as n is one or not:
// Agree(n, "has", "have").
func Agree(n int, singular, plural string) string {
	if n == 1 {
		return singular
	}
	return plural
}

// Thousands writes n with a comma between groups of three digits.
func Thousands(n int) string {
	s := strconv.Itoa(n)
	neg := ""
	if n < 0 {
		neg, s = "-", s[1:]
	}
	for i := len(s) - 3; i > 0; i -= 3 {
		s = s[:i] + "," + s[i:]
	}
	return neg + s
}
