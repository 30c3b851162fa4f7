package cli

import (
	"encoding/json"
	"fmt"
	"io"
	"strings"
	"time"

	"trueup/tableio"
)

// smoothingStates names, for exponential smoothing and Theta, the state
// each smoothing weight updates, so that fit prints the weights in words.
// The textbook's level ℓ is "underlying" (the smoothed sales without the
// season), as in the families' parameters: "level" means a level of the
// structure only.
var smoothingStates = map[string]map[string]string{
	"ets":   {"α": "underlying", "β": "trend", "γ": "season"},
	"theta": {"α": "underlying"},
}

// smoothingWeights splits a fit's estimates into the smoothing weights
// of its family, each as a row (state, weight, what it means), and the
// other estimates.
func smoothingWeights(family string, est []estimate) (rows [][]string, rest []estimate) {
	states := smoothingStates[family]
	for _, e := range est {
		if state, ok := states[e.Name]; ok && e.Value != nil {
			rows = append(rows, []string{state, number(e.Value), weightWords(*e.Value)})
			continue
		}
		rest = append(rest, e)
	}
	return rows, rest
}

// weightWords says what a smoothing weight between 0 and 1 does: near 0
// the state keeps its starting value, near 1 it follows each new period
// (the bands are common practice for reading the weights, not a test).
func weightWords(w float64) string {
	switch {
	case w < 0.001:
		return "held almost fixed"
	case w < 0.1:
		return "moves slowly"
	case w < 0.5:
		return "moves with recent periods"
	default:
		return "follows the latest periods closely"
	}
}

// seasonLabels names the m positions of a season by the period each
// first applies to, starting at first: month names for months, Q1…Q4
// for quarters, ISO weeks for weeks, weekdays for days, the period's own
// label otherwise.
func seasonLabels(first tableio.Period, m int) []string {
	out := make([]string, m)
	for j := range out {
		s := first.Next(j).String()
		switch first.Grain {
		case tableio.Month:
			if t, err := time.Parse("2006-01", s); err == nil {
				s = t.Format("Jan")
			}
		case tableio.Quarter, tableio.Week:
			if i := strings.IndexByte(s, '-'); i >= 0 {
				s = s[i+1:]
			}
		case tableio.Day:
			if t, err := time.Parse("2006-01-02", s); err == nil {
				s = t.Format("Mon")
			}
		}
		out[j] = s
	}
	return out
}

// writeSeason writes seasonal factors or terms labelled by the period
// each belongs to, six to a line.
func writeSeason(w io.Writer, indent, title string, values []float64, labels []string) {
	fmt.Fprintf(w, "%s%s\n", indent, title)
	for j := 0; j < len(values); j += 6 {
		var cells []string
		for k := j; k < min(j+6, len(values)); k++ {
			v := values[k]
			cells = append(cells, fmt.Sprintf("%-4s %-10s", labels[k], number(&v)))
		}
		fmt.Fprintf(w, "%s  %s\n", indent, strings.TrimRight(strings.Join(cells, " "), " "))
	}
}

// seasonTitle describes seasonal values as factors (multiplicative) or
// terms (additive).
func seasonTitle(multiplicative bool) string {
	if multiplicative {
		return "seasonal factors (× the underlying value: 1.10 is 10% above it), by the period each applies to"
	}
	return "seasonal terms (added to the underlying value), by the period each applies to"
}

// floats reads a JSON array of numbers.
func floats(raw json.RawMessage) ([]float64, bool) {
	var out []float64
	if err := json.Unmarshal(raw, &out); err != nil {
		return nil, false
	}
	return out, true
}
