package main

import (
	"fmt"
	"io"
	"strings"
	"unicode/utf8"
)

// textTable prints rows as columns: the first column (names) aligned left,
// every other column (numbers) aligned right, two spaces apart, so that
// digits of the same place line up. Cells are preformatted, numbers by
// grouped or fixedDecimals so that a column shares one format.
func textTable(w io.Writer, header []string, rows [][]string) {
	width := make([]int, len(header))
	for _, r := range append([][]string{header}, rows...) {
		for c, cell := range r {
			width[c] = max(width[c], utf8.RuneCountInString(cell))
		}
	}
	line := func(r []string) {
		var b strings.Builder
		for c, cell := range r {
			pad := strings.Repeat(" ", width[c]-utf8.RuneCountInString(cell))
			switch {
			case c == 0:
				b.WriteString(cell + pad)
			default:
				b.WriteString("  " + pad + cell)
			}
		}
		fmt.Fprintln(w, strings.TrimRight(b.String(), " "))
	}
	line(header)
	for _, r := range rows {
		line(r)
	}
}
