package cli

import (
	"fmt"
	"io"
	"math"
	"strconv"
	"strings"
	"unicode/utf8"
)

// textTable prints rows as columns: the first column (names) aligned left,
// every other column (numbers) aligned right, two spaces apart, so that
// digits of the same place line up. Cells are preformatted, numbers by
// grouped or fixedDecimals so that a column shares one format.
func textTable(w io.Writer, header []string, rows [][]string) {
	indentedTable(w, "", header, rows)
}

// indentedTable is textTable with every line indented. Cells that do not
// print as themselves (keys, level names) are shown quoted (shownKey).
func indentedTable(w io.Writer, indent string, header []string, rows [][]string) {
	shownRow := func(r []string) []string {
		out := make([]string, len(r))
		for c, cell := range r {
			out[c] = shownKey(cell)
		}
		return out
	}
	header = shownRow(header)
	shown := make([][]string, len(rows))
	for i, r := range rows {
		shown[i] = shownRow(r)
	}
	rows = shown
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
		fmt.Fprintln(w, indent+strings.TrimRight(b.String(), " "))
	}
	line(header)
	for _, r := range rows {
		line(r)
	}
}

// amountFormat returns a formatter that writes every number of a group read
// together (a forecast and its interval bounds, say) with the same number
// of decimals: enough for four significant digits on the group's largest
// magnitude, none from 1,000 up, with thousands separators.
func amountFormat(groups ...[]float64) func(float64) string {
	largest := 0.0
	for _, g := range groups {
		for _, x := range g {
			if !math.IsNaN(x) && !math.IsInf(x, 0) {
				largest = math.Max(largest, math.Abs(x))
			}
		}
	}
	decimals := 0
	if largest > 0 {
		decimals = min(max(3-int(math.Floor(math.Log10(largest))), 0), 6)
	}
	return func(x float64) string { return groupedDecimals(x, decimals) }
}

// groupedDecimals formats x with the given decimals and thousands
// separators: 3,813,724.5.
func groupedDecimals(x float64, decimals int) string {
	if math.IsNaN(x) || math.IsInf(x, 0) {
		return strconv.FormatFloat(x, 'f', -1, 64)
	}
	p := math.Pow10(decimals)
	s := strconv.FormatFloat(math.Round(math.Abs(x)*p)/p, 'f', decimals, 64) // halves away from zero
	whole, frac, _ := strings.Cut(s, ".")
	var b strings.Builder
	if x < 0 && strings.Trim(s, "0.") != "" {
		b.WriteByte('-')
	}
	for i, c := range whole {
		if i > 0 && (len(whole)-i)%3 == 0 {
			b.WriteByte(',')
		}
		b.WriteRune(c)
	}
	if frac != "" {
		b.WriteString("." + frac)
	}
	return b.String()
}
