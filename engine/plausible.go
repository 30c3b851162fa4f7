package engine

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"trueup/inputerr"
	"trueup/tableio"
)

// The plausibility checks run on the input rows before the panel is built
// and anything is fitted: they catch typing errors that would otherwise
// cost minutes of fitting (a period typed 9999-12 stretches the calendar
// over eight thousand years) or give quietly wrong totals (a store name
// with a trailing space becomes a closed store and a new one).

// maxMagnitude bounds the values for a table of n rows: the reconciliation
// squares sums of all rows (variances of the grand total), so n·|v| must
// stay well below √MaxFloat64 ≈ 1.3e154. 1e150/n leaves four orders of
// magnitude for the sums of squares over the history.
func maxMagnitude(n int) float64 { return 1e150 / float64(max(n, 1)) }

// outlierFactor is how many times its series' median magnitude a value
// must exceed to be reported as a likely typing error: a factor chosen to
// catch extra digits (1e12 among values near 1e4) and not seasonal peaks,
// which rarely reach 100 times the median (common practice).
const outlierFactor = 1e4

// checkValues refuses values too large for the computations, naming the
// row and the value.
func checkValues(rows *tableio.Rows) error {
	limit := maxMagnitude(rows.N)
	for i, v := range rows.Values {
		if math.Abs(v) > limit {
			return &inputerr.Error{File: rows.Path, Row: i + 1,
				Msg: fmt.Sprintf("value %g is too large for the computations: with %d rows, values must stay below %.3g in magnitude (sums of squares of the totals would overflow)", v, rows.N, limit)}
		}
	}
	return nil
}

// checkKeySpellings refuses two values of a key column that differ only by
// surrounding spaces or letter case ("Mill Lane" and "mill lane "): they
// would become two series where the data means one.
func checkKeySpellings(rows *tableio.Rows) error {
	for c, dict := range rows.KeyDict {
		seen := make(map[string]string, len(dict))
		for _, v := range dict {
			norm := strings.ToLower(strings.TrimSpace(v))
			if first, ok := seen[norm]; ok {
				return &inputerr.Error{File: rows.Path, Column: rows.KeyNames[c],
					Msg: fmt.Sprintf("%q and %q differ only by surrounding spaces or letter case; write one spelling for both", first, v)}
			}
			seen[norm] = v
		}
	}
	return nil
}

// checkLonePeriods refuses a few rows whose periods lie far beyond the
// rest of the table: the largest stretch without any row is at least
// minLoneGap periods, longer than all the covered stretches together, and
// the rows on its far side are at most 1% of the table. nat holds each row's period index at grain g.
func checkLonePeriods(rows *tableio.Rows, nat []int, g tableio.Grain) error {
	distinct := append([]int(nil), nat...)
	sort.Ints(distinct)
	distinct = compactInts(distinct)
	if len(distinct) < 2 {
		return nil
	}
	gapAt, gap := 0, 0
	for i := 1; i < len(distinct); i++ {
		if d := distinct[i] - distinct[i-1]; d > gap {
			gapAt, gap = i, d
		}
	}
	span := distinct[len(distinct)-1] - distinct[0]
	if gap < minLoneGap || gap <= span-gap {
		return nil
	}
	lo, hi := distinct[gapAt-1], distinct[gapAt]
	var before, after int
	for _, p := range nat {
		if p <= lo {
			before++
		} else {
			after++
		}
	}
	lone := func(p int) bool { return p >= hi }
	rest := [2]int{distinct[0], lo}
	if before < after {
		lone = func(p int) bool { return p <= lo }
		rest = [2]int{hi, distinct[len(distinct)-1]}
	}
	if min(before, after) > max(1, rows.N/100) {
		return nil
	}
	for i, p := range nat {
		if lone(p) {
			period := tableio.Period{Grain: g, Index: p}
			return &inputerr.Error{File: rows.Path, Row: i + 1,
				Msg: fmt.Sprintf("period %s lies %d periods away from the rest of the table (%s to %s); is it mistyped?",
					period, gap, tableio.Period{Grain: g, Index: rest[0]}, tableio.Period{Grain: g, Index: rest[1]})}
		}
	}
	return nil
}

// minLoneGap is the shortest stretch without rows that can set a period
// apart from the rest: 50 periods, over four years of months, so that a
// short table with a pause is not refused.
const minLoneGap = 50

func compactInts(s []int) []int {
	out := s[:0]
	for i, v := range s {
		if i == 0 || v != s[i-1] {
			out = append(out, v)
		}
	}
	return out
}

// outliers names the rows whose value exceeds outlierFactor times the
// median magnitude of its series' values (series with at least 8 rows, so
// that the median means something). sid is each row's series.
func outliers(rows *tableio.Rows, sid []int32, m int) []string {
	bySeries := make([][]float64, m)
	for i, v := range rows.Values {
		bySeries[sid[i]] = append(bySeries[sid[i]], math.Abs(v))
	}
	median := make([]float64, m)
	for s, vs := range bySeries {
		if len(vs) < 8 {
			median[s] = math.Inf(1)
			continue
		}
		sort.Float64s(vs)
		median[s] = vs[len(vs)/2]
	}
	var out []string
	for i, v := range rows.Values {
		if med := median[sid[i]]; med > 0 && math.Abs(v) > outlierFactor*med {
			out = append(out, fmt.Sprintf("%s row %d: value %g is more than %g times its series' median magnitude (%g); is it mistyped?",
				rows.Path, i+1, v, outlierFactor, med))
		}
	}
	return out
}
