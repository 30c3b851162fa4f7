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

// checkLonePeriods refuses rows whose periods lie far beyond the rest of
// the table: the distinct periods split into runs wherever minLoneGap or
// more periods have no row at all, the run holding the most rows is the
// table, and another run is lone when no series has more than
// maxLoneRowsPerSeries rows in it. A year typed wrong once in every series
// (2206 for 2026) gives such a run however many series there are, while a
// real stretch of older history gives each series a row in most of its
// periods. nat holds each row's period index at grain g, sid its series
// (m series).
func checkLonePeriods(rows *tableio.Rows, nat []int, g tableio.Grain, sid []int32, m int) error {
	distinct := append([]int(nil), nat...)
	sort.Ints(distinct)
	distinct = compactInts(distinct)
	// runStart[k] is the first period of run k; runs are in time order.
	runStart := []int{distinct[0]}
	runEnd := []int{}
	for i := 1; i < len(distinct); i++ {
		if distinct[i]-distinct[i-1] >= minLoneGap {
			runEnd = append(runEnd, distinct[i-1])
			runStart = append(runStart, distinct[i])
		}
	}
	runEnd = append(runEnd, distinct[len(distinct)-1])
	if len(runStart) == 1 {
		return nil
	}
	runOf := func(p int) int { return sort.Search(len(runStart), func(k int) bool { return runStart[k] > p }) - 1 }
	rowsIn := make([]int, len(runStart))
	for _, p := range nat {
		rowsIn[runOf(p)]++
	}
	main := 0
	for k := range rowsIn {
		if rowsIn[k] > rowsIn[main] {
			main = k
		}
	}
	// Rows per series are counted outside the main run only, which holds
	// nearly all rows of a large table.
	perSeries := make([]map[int32]int, len(runStart))
	for k := range perSeries {
		perSeries[k] = map[int32]int{}
	}
	for i, p := range nat {
		if p < runStart[main] || p > runEnd[main] {
			perSeries[runOf(p)][sid[i]]++
		}
	}
	for k := range runStart {
		if k == main {
			continue
		}
		most := 0
		for _, c := range perSeries[k] {
			most = max(most, c)
		}
		if most > maxLoneRowsPerSeries {
			continue
		}
		gap := runStart[main] - runEnd[k]
		if k > main {
			gap = runStart[k] - runEnd[main]
		}
		for i, p := range nat {
			if runOf(p) != k {
				continue
			}
			what := fmt.Sprintf("%d rows of %d series lie that far, at most %d per series", rowsIn[k], len(perSeries[k]), most)
			if rowsIn[k] == 1 {
				what = "it is the only row that far"
			}
			return &inputerr.Error{File: rows.Path, Row: i + 1,
				Msg: fmt.Sprintf("period %s lies %d periods away from the rest of the table (%s to %s); %s: are their periods mistyped?",
					tableio.Period{Grain: g, Index: p}, gap, tableio.Period{Grain: g, Index: runStart[main]}, tableio.Period{Grain: g, Index: runEnd[main]}, what)}
		}
	}
	return nil
}

// minLoneGap is the shortest stretch without rows that can set periods
// apart from the rest: 50 periods, over four years of months, so that a
// short table with a pause is not refused.
const minLoneGap = 50

// maxLoneRowsPerSeries is the most rows a series may have in a run of
// periods set apart from the table for the run to count as mistyped: a
// typing error touches a row or two of a series, real history many.
const maxLoneRowsPerSeries = 2

// checkSeriesGrains refuses a table of dates in which some series are
// dated once a month and others more often: one daily store among monthly
// ones would turn the whole table to days, and the monthly stores would
// then have one row a month, read as gaps of zero sales. A series is
// dated monthly when it has at least three distinct dates, all on the
// first day of their months or all on the last; finer when it has at least
// three, not all so. The fewer kind is named. sid holds each row's series.
func checkSeriesGrains(rows *tableio.Rows, sid []int32, keys [][]int32) error {
	if rows.Periods[0].Grain != tableio.Day {
		return nil
	}
	// Per series: its first two distinct dates, whether it has a third,
	// and whether some date is not the first (last) of its month.
	type seen struct {
		d1, d2, n         int
		notFirst, notLast bool
	}
	per := make([]seen, len(keys))
	edge := map[int][2]bool{} // day → first of month, last of month
	var lastDay int
	var lastEdge [2]bool
	for i, p := range rows.Periods {
		s := &per[sid[i]]
		switch {
		case s.n == 0:
			s.d1, s.n = p.Index, 1
		case s.n == 1 && p.Index != s.d1:
			s.d2, s.n = p.Index, 2
		case s.n == 2 && p.Index != s.d1 && p.Index != s.d2:
			s.n = 3
		}
		if i == 0 || p.Index != lastDay {
			e, ok := edge[p.Index]
			if !ok {
				d := p.Start()
				e = [2]bool{d.Day() == 1, d.AddDate(0, 0, 1).Day() == 1}
				edge[p.Index] = e
			}
			lastDay, lastEdge = p.Index, e
		}
		s.notFirst = s.notFirst || !lastEdge[0]
		s.notLast = s.notLast || !lastEdge[1]
	}
	var monthly, finer []int
	for k, s := range per {
		switch {
		case s.n < 3:
		case !s.notFirst || !s.notLast:
			monthly = append(monthly, k)
		default:
			finer = append(finer, k)
		}
	}
	if len(monthly) == 0 || len(finer) == 0 {
		return nil
	}
	name := func(ks []int) string {
		var out []string
		for _, k := range ks[:min(3, len(ks))] {
			out = append(out, keyText(rows, keys[k]))
		}
		if len(ks) > 3 {
			out = append(out, fmt.Sprintf("and %d more", len(ks)-3))
		}
		return strings.Join(out, "; ")
	}
	odd, oddKind, usual, usualKind := finer, "dated more often than once a month", monthly, "dated once a month"
	if len(monthly) < len(finer) {
		odd, oddKind, usual, usualKind = monthly, "dated once a month", finer, "dated more often"
	}
	if len(rows.KeyNames) == 0 {
		return nil // one series: the grain check of the dates applies
	}
	return &inputerr.Error{File: rows.Path, Option: "Grain",
		Msg: fmt.Sprintf("series of different grains: %d series are %s (%s), %d are %s (%s); one table holds one grain: sum the finer ones to months, or split the table",
			len(odd), oddKind, name(odd), len(usual), usualKind, name(usual))}
}

func compactInts(s []int) []int {
	out := s[:0]
	for i, v := range s {
		if i == 0 || v != s[i-1] {
			out = append(out, v)
		}
	}
	return out
}

// partialLast says why the last period of a panel looks partial, or ""
// when it does not. has marks the series × period cells with a row and
// vals holds their values; calendar, when not "", says the last period has
// fewer days or months than its grain (see partialEdges). The period is
// partial by count when fewer than half as many series report in it as
// the median over up to six periods before it (at least three needed): a
// chain does not lose half its series in one period, while an export
// taken before the month's figures are in shows only the few that are
// (common practice). It is partial by total when its total is below a
// quarter of that median and below a quarter of the same period one
// season earlier: the second test keeps a seasonal low, such as January
// after December, from counting (common practice).
func partialLast(has [][]bool, vals [][]float64, calendar string, season int) string {
	if calendar != "" {
		return calendar
	}
	T := len(vals[0])
	const window, needed = 6, 3
	if T-1 < needed {
		return ""
	}
	count := make([]float64, T)
	total := make([]float64, T)
	for s := range has {
		for t, ok := range has[s] {
			if ok {
				count[t]++
				total[t] += vals[s][t]
			}
		}
	}
	prev := func(x []float64) float64 {
		w := append([]float64(nil), x[max(0, T-1-window):T-1]...)
		sort.Float64s(w)
		if len(w)%2 == 1 {
			return w[len(w)/2]
		}
		return (w[len(w)/2-1] + w[len(w)/2]) / 2
	}
	if usual := prev(count); count[T-1] < usual/2 {
		return fmt.Sprintf("%g of the bottom series have a row in it, against %g in the periods before (median of the last %d)", count[T-1], usual, min(window, T-1))
	}
	usual := prev(total)
	if usual > 0 && total[T-1] >= 0 && total[T-1] < usual/4 && (season <= 1 || T-1-season >= 0 && total[T-1] < total[T-1-season]/4) {
		return fmt.Sprintf("its total %.6g is below a quarter of the usual %.6g (median of the last %d periods)", total[T-1], usual, min(window, T-1))
	}
	return ""
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
