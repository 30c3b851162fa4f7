package engine

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"

	"trueup/inputerr"
	"trueup/tableio"
)

// Panel holds the bottom series on one common calendar.
//
// Openings and closures: a bottom series exists from the first to the last
// period it has a row for. Inside that span a period without a row counts
// as zero sales (the cell traded nothing); outside it the value is NaN (the
// store had not opened, or had closed). Aggregates add the members that
// exist, so a store adds nothing to its region before it opens.
type Panel struct {
	Grain   tableio.Grain
	First   tableio.Period // period of column 0
	T       int            // number of periods
	Keys    [][]string     // per bottom series, one value per key column
	Values  [][]float64    // per bottom series, T values (NaN outside its span)
	Stats   PanelStats
	KeyCols []string
}

// PanelStats counts what validation found.
type PanelStats struct {
	Rows       int
	SummedRows int // rows added into another row of the same key and period
	// Duplicates counts the rows repeating an earlier row's key and
	// period at the data's own grain (summed with SumDuplicates; without
	// it the first is an error), whatever grain the panel is built at.
	Duplicates   int
	Negative     int // rows with a negative value (returns)
	Zero         int // rows with a zero value
	Gaps         int // periods inside a series' span with no row (counted as zero)
	LateStarts   int // series whose first period is after the panel's first
	EarlyEnds    int // series whose last period is before the panel's last
	NativeGrain  tableio.Grain
	InferredFrom string // how the grain was found
	// Partial lists the first or last period when it is only partly
	// covered by finer input periods (a week with 3 of its 7 days, say):
	// its total understates a full period.
	Partial []string
	// Outliers names the rows whose value is a huge outlier in its series
	// (likely a typing error), one message each.
	Outliers []string
	// Until says where the input was cut (PanelOptions.Until), "" when
	// it was not.
	Until string
	// SetAside says why the input's last period was left out as partial
	// (see partialLast), "" when it was not.
	SetAside string
	// SetAsideFirst says why the input's first period was left out as
	// partial (an export that starts on the 4th of a month), "" when it
	// was not.
	SetAsideFirst string
	// Notes says how the periods were read where that is not plain from
	// the file (tableio.Rows.Notes).
	Notes []string
}

// InputNotes lists what a user must know about how the input was read:
// the period reader's notes, the cut and the partial last period set
// aside. Commands print them with the input checks and the warnings.
func (s PanelStats) InputNotes() []string {
	out := append([]string{}, s.Notes...)
	if s.Until != "" {
		out = append(out, s.Until)
	}
	if s.SetAsideFirst != "" {
		out = append(out, s.SetAsideFirst)
	}
	if s.SetAside != "" {
		out = append(out, s.SetAside)
	}
	return out
}

// PanelOptions controls BuildPanel.
type PanelOptions struct {
	Grain         *tableio.Grain // nil: the data's own grain
	SumDuplicates bool
	// MemoryBudget, when positive, is the memory in bytes the panel may
	// take; a larger one is an input error before it is allocated.
	MemoryBudget int64
	// Until, when non-nil, cuts the input after this period: rows of
	// later periods are left out before anything else is done with them.
	Until *tableio.Period
	// KeepLastPeriod keeps a last period that looks partial (see
	// partialLast) instead of setting it aside.
	KeepLastPeriod bool
	// KeepFirstPeriod keeps a first period that the input's finer periods
	// cover only in part (see partialEdges) instead of setting it aside.
	KeepFirstPeriod bool
}

// BuildPanel turns input rows into one series per distinct key. Without
// SumDuplicates, two rows with the same key and period (at the data's own
// grain) are an input error naming the first such key and period. With a
// coarser Grain, rows are summed into its periods.
func BuildPanel(rows *tableio.Rows, opt PanelOptions) (*Panel, error) {
	if rows.N == 0 {
		return nil, inputerr.New("%s: no data rows", rows.Path)
	}
	if err := checkValues(rows); err != nil {
		return nil, err
	}
	if err := checkKeySpellings(rows); err != nil {
		return nil, err
	}
	native, how, err := nativeGrain(rows)
	var ambiguous ambiguousGrainError
	if errors.As(err, &ambiguous) && opt.Grain != nil && *opt.Grain > tableio.Day {
		// Dates on varying days (2024-03-01 in one row, 2024-03-15 in the
		// next) with the grain stated: each date stands for the period of
		// that grain it falls in, and two rows of a series in one period
		// are duplicates like any others.
		native, how, err = *opt.Grain, fmt.Sprintf("dates read as the %ss they fall in", *opt.Grain), nil
	}
	if err != nil {
		return nil, err
	}
	target := native
	if opt.Grain != nil {
		target = *opt.Grain
	}
	// Periods at the native grain (dates at a coarser native grain map to
	// their period) and at the target grain.
	nat := make([]int, rows.N)
	tgt := make([]int, rows.N)
	var lastIn tableio.Period
	var lastNat, lastTgt tableio.Period
	for i, p := range rows.Periods {
		if i == 0 || p != lastIn {
			lastIn = p
			lastNat, err = p.Coarsen(native)
			if err != nil {
				return nil, fmt.Errorf("%s: row %d: %w", rows.Path, i+1, err)
			}
			lastTgt, err = lastNat.Coarsen(target)
			if err != nil {
				return nil, err
			}
		}
		nat[i] = lastNat.Index
		tgt[i] = lastTgt.Index
	}
	if opt.Until != nil {
		return buildUntil(rows, opt, nat, native)
	}

	// Combine key codes into one series id per row.
	k := len(rows.KeyCodes)
	radix := make([]int64, k)
	var combined int64 = 1
	for c := k - 1; c >= 0; c-- {
		radix[c] = combined
		combined *= int64(len(rows.KeyDict[c]))
	}
	seriesOf := map[int64]int32{}
	var seriesKey [][]int32
	sid := make([]int32, rows.N)
	var last int64 = -1
	var lastID int32
	for i := 0; i < rows.N; i++ {
		var id int64
		for c := 0; c < k; c++ {
			id += int64(rows.KeyCodes[c][i]) * radix[c]
		}
		if id != last {
			s, ok := seriesOf[id]
			if !ok {
				s = int32(len(seriesKey))
				seriesOf[id] = s
				codes := make([]int32, k)
				for c := 0; c < k; c++ {
					codes[c] = rows.KeyCodes[c][i]
				}
				seriesKey = append(seriesKey, codes)
			}
			last, lastID = id, s
		}
		sid[i] = lastID
	}
	m := len(seriesKey)
	if err := checkLonePeriods(rows, nat, native, sid, m); err != nil {
		return nil, err
	}
	if opt.Grain == nil || *opt.Grain < tableio.Month {
		if err := checkSeriesGrains(rows, sid, seriesKey); err != nil {
			return nil, err
		}
	}
	outlierRows := outliers(rows, sid, m)

	// Duplicates at the native grain: an error, or counted when they are
	// to be summed (whatever grain they are summed into).
	natMin, natMax := minMax(nat)
	if err := checkPanelMemory(opt.MemoryBudget, m, tableio.Period{Grain: native, Index: natMin}, tableio.Period{Grain: native, Index: natMax}); err != nil {
		return nil, err
	}
	duplicates := 0
	{
		span := natMax - natMin + 1
		seen := make([]uint64, (m*span+63)/64)
		for i := 0; i < rows.N; i++ {
			bit := int(sid[i])*span + nat[i] - natMin
			if seen[bit/64]&(1<<(bit%64)) != 0 {
				if opt.SumDuplicates {
					duplicates++
					continue
				}
				p := tableio.Period{Grain: native, Index: nat[i]}
				msg := fmt.Sprintf("repeats key %s and period %s", keyText(rows, seriesKey[sid[i]]), p)
				if len(rows.KeyNames) == 0 {
					msg = fmt.Sprintf("repeats period %s; does the table hold several series? name their key columns", p)
				}
				return nil, &inputerr.Error{File: rows.Path, Row: i + 1, Option: "SumDuplicates", Msg: msg}
			}
			seen[bit/64] |= 1 << (bit % 64)
		}
	}

	tMin, tMax := minMax(tgt)
	T := tMax - tMin + 1
	var partial []string
	if target != native {
		partial = partialEdges(nat, tgt, native, target, tMin, tMax)
	}
	if first := (tableio.Period{Grain: target, Index: tMin}).String() + " "; !opt.KeepFirstPeriod && T > 1 &&
		len(partial) > 0 && strings.HasPrefix(partial[0], first) {
		// A first period the input covers only in part (an export that
		// starts on the 4th) understates its total, and every seasonal
		// model's first error a season later is then an outlier in every
		// series at once: it is set aside like a partial last period.
		return setAsideFirst(rows, opt, tgt, tMin, partial[0])
	}
	pn := &Panel{
		Grain:   target,
		First:   tableio.Period{Grain: target, Index: tMin},
		T:       T,
		KeyCols: rows.KeyNames,
	}
	pn.Stats.Rows = rows.N
	pn.Stats.Duplicates = duplicates
	pn.Stats.NativeGrain = native
	pn.Stats.InferredFrom = how
	pn.Stats.Partial = partial
	pn.Stats.Outliers = outlierRows
	pn.Stats.Notes = rows.Notes
	vals := make([][]float64, m)
	has := make([][]bool, m)
	backing := make([]float64, m*T)
	hasBacking := make([]bool, m*T)
	for s := range vals {
		vals[s] = backing[s*T : (s+1)*T]
		has[s] = hasBacking[s*T : (s+1)*T]
	}
	for i := 0; i < rows.N; i++ {
		s, t := sid[i], tgt[i]-tMin
		v := rows.Values[i]
		if has[s][t] {
			pn.Stats.SummedRows++
		}
		vals[s][t] += v
		has[s][t] = true
		if v < 0 {
			pn.Stats.Negative++
		} else if v == 0 {
			pn.Stats.Zero++
		}
	}
	// Spans: NaN outside, zero-filled gaps inside.
	for s := 0; s < m; s++ {
		first, lastT := -1, -1
		for t := 0; t < T; t++ {
			if has[s][t] {
				if first < 0 {
					first = t
				}
				lastT = t
			}
		}
		for t := 0; t < T; t++ {
			switch {
			case t < first || t > lastT:
				vals[s][t] = math.NaN()
			case !has[s][t]:
				pn.Stats.Gaps++
			}
		}
		if first > 0 {
			pn.Stats.LateStarts++
		}
		if lastT < T-1 {
			pn.Stats.EarlyEnds++
		}
	}
	pn.Keys = make([][]string, m)
	for s, codes := range seriesKey {
		key := make([]string, k)
		for c, code := range codes {
			key[c] = rows.KeyDict[c][code]
		}
		pn.Keys[s] = key
	}
	pn.Values = vals
	if !opt.KeepLastPeriod {
		calendar := ""
		if target != native && len(partial) > 0 && strings.HasPrefix(partial[len(partial)-1], pn.Period(T-1).String()+" ") && T > 1 {
			calendar = partial[len(partial)-1]
		}
		if why := partialLast(has, vals, calendar, target.SeasonalPeriod()); why != "" {
			return setAside(rows, opt, tgt, tMax, why)
		}
	}
	return pn, nil
}

// buildUntil builds the panel of the rows at or before opt.Until. nat
// holds each row's period at the native grain. A period finer than the
// native grain is first placed in its native period (2024-06-01 in
// monthly data is June); a coarser one keeps the native periods that end
// by its end (2024-06 in daily data keeps the days to 30 June).
func buildUntil(rows *tableio.Rows, opt PanelOptions, nat []int, native tableio.Grain) (*Panel, error) {
	until := *opt.Until
	if (until.Grain == tableio.Index) != (native == tableio.Index) {
		msg := fmt.Sprintf("%s is a step number, but the table's periods are %ss", until, native)
		if native == tableio.Index {
			msg = fmt.Sprintf("%s is a %s, but the table's periods are step numbers", until, until.Grain)
		}
		return nil, &inputerr.Error{File: rows.Path, Option: "Until", Msg: msg}
	}
	var last int
	switch {
	case until.Grain == tableio.Week && native > tableio.Week:
		return nil, &inputerr.Error{File: rows.Path, Option: "Until",
			Msg: fmt.Sprintf("a week cannot end %s periods (it can span two); give a %s", native, native)}
	case until.Grain <= native:
		p, err := until.Coarsen(native)
		if err != nil {
			return nil, &inputerr.Error{File: rows.Path, Option: "Until", Err: err}
		}
		last = p.Index
	default: // a coarser period: native periods ending by its end
		last = tableio.FromDate(until.Next(1).Start(), native).Index - 1
	}
	keep := make([]int, 0, len(nat))
	for i, p := range nat {
		if p <= last {
			keep = append(keep, i)
		}
	}
	if len(keep) == 0 {
		lo, _ := minMax(nat)
		return nil, &inputerr.Error{File: rows.Path, Option: "Until",
			Msg: fmt.Sprintf("no row is at or before %s; the table starts at %s", until, tableio.Period{Grain: native, Index: lo})}
	}
	sub := opt
	sub.Until = nil
	pn, err := BuildPanel(subRows(rows, keep), sub)
	if err != nil {
		return nil, err
	}
	cut := tableio.Period{Grain: native, Index: last}
	pn.Stats.Until = fmt.Sprintf("input cut after %s: %d of %d rows used", cut, len(keep), rows.N)
	if cut.String() != until.String() {
		pn.Stats.Until = fmt.Sprintf("input cut after %s (asked: %s): %d of %d rows used", cut, until, len(keep), rows.N)
	}
	return pn, nil
}

// setAside builds the panel again without the last period tMax (at the
// target grain; tgt holds each row's target period), why being the reason.
func setAside(rows *tableio.Rows, opt PanelOptions, tgt []int, tMax int, why string) (*Panel, error) {
	keep := make([]int, 0, len(tgt))
	for i, t := range tgt {
		if t < tMax {
			keep = append(keep, i)
		}
	}
	sub := opt
	sub.KeepLastPeriod = true
	pn, err := BuildPanel(subRows(rows, keep), sub)
	if err != nil {
		return nil, err
	}
	last := tableio.Period{Grain: pn.Grain, Index: tMax}
	pn.Stats.SetAside = fmt.Sprintf("last period %s looks partial: %s; it was set aside, so the forecast starts at %s and no series is taken as closed on its account",
		last, why, last)
	return pn, nil
}

// setAsideFirst builds the panel again without the first period tMin (at
// the target grain; tgt holds each row's target period), why being the
// reason.
func setAsideFirst(rows *tableio.Rows, opt PanelOptions, tgt []int, tMin int, why string) (*Panel, error) {
	keep := make([]int, 0, len(tgt))
	for i, t := range tgt {
		if t > tMin {
			keep = append(keep, i)
		}
	}
	sub := opt
	sub.KeepFirstPeriod = true
	pn, err := BuildPanel(subRows(rows, keep), sub)
	if err != nil {
		return nil, err
	}
	first := tableio.Period{Grain: pn.Grain, Index: tMin}
	pn.Stats.SetAsideFirst = fmt.Sprintf("first period %s looks partial: %s; it was set aside, so the history starts at %s", first, why, first.Next(1))
	return pn, nil
}

// subRows returns the rows of rows at the positions keep, in order.
func subRows(rows *tableio.Rows, keep []int) *tableio.Rows {
	sub := &tableio.Rows{Path: rows.Path, SHA256: rows.SHA256, Columns: rows.Columns, Notes: rows.Notes, N: len(keep),
		Periods: make([]tableio.Period, len(keep)), Values: make([]float64, len(keep)),
		KeyNames: rows.KeyNames, KeyCodes: make([][]int32, len(rows.KeyCodes)), KeyDict: rows.KeyDict, KeyTypes: rows.KeyTypes}
	for c := range sub.KeyCodes {
		sub.KeyCodes[c] = make([]int32, len(keep))
	}
	for r, i := range keep {
		sub.Periods[r], sub.Values[r] = rows.Periods[i], rows.Values[i]
		for c := range sub.KeyCodes {
			sub.KeyCodes[c][r] = rows.KeyCodes[c][i]
		}
	}
	return sub
}

// partialEdges reports the first and last target periods that the input's
// own periods cover only in part.
func partialEdges(nat, tgt []int, native, target tableio.Grain, tMin, tMax int) []string {
	var out []string
	for _, edge := range []int{tMin, tMax} {
		p := tableio.Period{Grain: target, Index: edge}
		first := tableio.FromDate(p.Start(), native).Index
		want := tableio.FromDate(p.Next(1).Start(), native).Index - first
		seen := map[int]bool{}
		for i, t := range tgt {
			if t == edge {
				seen[nat[i]] = true
			}
		}
		if len(seen) < want {
			out = append(out, fmt.Sprintf("%s has %d of its %d %ss", p, len(seen), want, native))
		}
		if tMin == tMax {
			break
		}
	}
	return out
}

// Period returns the calendar period of column t.
func (p *Panel) Period(t int) tableio.Period { return p.First.Next(t) }

// nativeGrain is the grain the data carries: the grain of its period
// labels (including years and step numbers), or, for calendar dates, the
// grain implied by the smallest gap between distinct dates over all
// series: 1 day, 7 days, 28–31 days (a month, whether dated on its first
// or its last day), 89–92 days (a quarter) or 365–366 days (a year). The
// dates must then fall in distinct periods of that grain; otherwise (say
// 2024-01-01 and 2024-01-31 in one file) the grain is ambiguous and the
// caller is asked to state it.
func nativeGrain(rows *tableio.Rows) (tableio.Grain, string, error) {
	return periodGrain(rows.Path, rows.Periods)
}

// periodGrain is nativeGrain for the periods of any table (path names it
// in messages): sales history, base forecasts and residuals alike.
func periodGrain(path string, periods []tableio.Period) (tableio.Grain, string, error) {
	g := periods[0].Grain
	for i, p := range periods {
		if p.Grain != g {
			return 0, "", &inputerr.Error{File: path, Row: i + 1,
				Msg: fmt.Sprintf("period %s is a %s but row 1's is a %s; use one form throughout", p, p.Grain, g)}
		}
	}
	if g != tableio.Day {
		return g, "period labels", nil
	}
	seen := map[int]bool{}
	for _, p := range periods {
		seen[p.Index] = true
	}
	days := make([]int, 0, len(seen))
	for d := range seen {
		days = append(days, d)
	}
	if len(days) < 2 {
		return tableio.Day, "a single date", nil
	}
	sort.Ints(days)
	gap := math.MaxInt
	for i := 1; i < len(days); i++ {
		gap = min(gap, days[i]-days[i-1])
	}
	var grain tableio.Grain
	var how string
	switch {
	case gap == 1:
		return tableio.Day, "dates one day apart", nil
	case gap == 7:
		grain, how = tableio.Week, "dates seven days apart"
	case gap >= 28 && gap <= 31:
		grain, how = tableio.Month, "dates about a month apart"
	case gap >= 89 && gap <= 92:
		grain, how = tableio.Quarter, "dates about a quarter apart"
	case gap >= 365 && gap <= 366:
		grain, how = tableio.Year, "dates about a year apart"
	default:
		return 0, "", ambiguousGrainError{&inputerr.Error{File: path, Option: "Grain",
			Msg: fmt.Sprintf("dates are %d days apart at the closest; cannot tell the grain, state it", gap)}}
	}
	// Distinct dates must be distinct periods: 2024-01-01 and 2024-01-31
	// are a month apart by gap yet both in January.
	prev := tableio.FromDate(tableio.Period{Grain: tableio.Day, Index: days[0]}.Start(), grain)
	for i := 1; i < len(days); i++ {
		p := tableio.FromDate(tableio.Period{Grain: tableio.Day, Index: days[i]}.Start(), grain)
		if p == prev {
			return 0, "", ambiguousGrainError{&inputerr.Error{File: path, Option: "Grain",
				Msg: fmt.Sprintf("dates %s and %s are %s apart at the closest but fall in the same %s (%s); cannot tell the grain, state it",
					tableio.Period{Grain: tableio.Day, Index: days[i-1]}, tableio.Period{Grain: tableio.Day, Index: days[i]}, grain, grain, p)}}
		}
		prev = p
	}
	return grain, how, nil
}

// ambiguousGrainError is periodGrain's input error for dates whose gaps
// do not tell the grain; BuildPanel takes a stated grain instead.
type ambiguousGrainError struct{ err *inputerr.Error }

func (e ambiguousGrainError) Error() string { return e.err.Error() }
func (e ambiguousGrainError) Unwrap() error { return e.err }

func minMax(xs []int) (lo, hi int) {
	lo, hi = xs[0], xs[0]
	for _, x := range xs {
		lo, hi = min(lo, x), max(hi, x)
	}
	return lo, hi
}

func keyText(rows *tableio.Rows, codes []int32) string {
	parts := make([]string, len(codes))
	for c, code := range codes {
		parts[c] = rows.KeyNames[c] + "=" + rows.KeyDict[c][code]
	}
	return strings.Join(parts, " ")
}
