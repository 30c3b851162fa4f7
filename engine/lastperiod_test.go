package engine

import (
	"fmt"
	"strings"
	"testing"
	"time"

	"trueup/inputerr"
	"trueup/tableio"
)

// chainMonths returns monthly rows of n stores over months months from
// 2020-01, each store selling 100 + its number, with a yearly swing. keep
// says whether store s has a row in month m.
func chainMonths(n, months int, keep func(s, m int) bool) ([][3]string, []float64) {
	var rows [][3]string
	var vals []float64
	for s := 0; s < n; s++ {
		for m := 0; m < months; m++ {
			if keep != nil && !keep(s, m) {
				continue
			}
			rows = append(rows, [3]string{fmt.Sprintf("%d-%02d", 2020+m/12, m%12+1), fmt.Sprintf("Store %03d", s), ""})
			vals = append(vals, 100+float64(s)+20*float64(m%12))
		}
	}
	return rows, vals
}

// A last period in which 3 of 40 stores have a row (an export taken
// before the month's figures are in) is set aside: the panel ends a month
// earlier, no store stops early on its account, and the reason names the
// period and the counts.
func TestPartialLastPeriodIsSetAside(t *testing.T) {
	rows, vals := chainMonths(40, 30, func(s, m int) bool { return m < 29 || s < 3 })
	pn, err := BuildPanel(rowsOf(t, rows, vals), PanelOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if last := pn.Period(pn.T - 1).String(); last != "2022-05" || pn.Stats.EarlyEnds != 0 {
		t.Errorf("panel ends %s with %d early ends, want 2022-05 and none", last, pn.Stats.EarlyEnds)
	}
	for _, w := range []string{"2022-06", "3 of the bottom series", "against 40"} {
		if !strings.Contains(pn.Stats.SetAside, w) {
			t.Errorf("set-aside note %q does not name %q", pn.Stats.SetAside, w)
		}
	}
	// Asked to, the period is kept, and 37 stores end early.
	pn, err = BuildPanel(rowsOf(t, rows, vals), PanelOptions{KeepLastPeriod: true})
	if err != nil {
		t.Fatal(err)
	}
	if pn.T != 30 || pn.Stats.EarlyEnds != 37 || pn.Stats.SetAside != "" {
		t.Errorf("kept: T %d, early ends %d, note %q; want 30, 37, none", pn.T, pn.Stats.EarlyEnds, pn.Stats.SetAside)
	}
}

// Every store reports in the last period, but with a tenth of a month's
// sales (month to date): set aside by its total. A seasonal low (the
// January after a December twice the usual) is not.
func TestPartialLastPeriodByTotal(t *testing.T) {
	rows, vals := chainMonths(10, 30, nil)
	for i, r := range rows {
		if r[0] == "2022-06" {
			vals[i] /= 10
		}
	}
	pn, err := BuildPanel(rowsOf(t, rows, vals), PanelOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if pn.T != 29 || !strings.Contains(pn.Stats.SetAside, "below a quarter") {
		t.Errorf("T %d, note %q; want 29 and a note on the total", pn.T, pn.Stats.SetAside)
	}
	// 25 months end in a January; the data's yearly swing makes it the
	// low of the year, a third of December, and a year earlier alike.
	rows, vals = chainMonths(10, 25, nil)
	pn, err = BuildPanel(rowsOf(t, rows, vals), PanelOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if pn.T != 25 || pn.Stats.SetAside != "" {
		t.Errorf("seasonal low: T %d, note %q; want 25 and no note", pn.T, pn.Stats.SetAside)
	}
}

// A year summed from two months (--grain year on months ending in
// February) is set aside as partial rather than forecast as a year.
func TestYearOfTwoMonthsIsSetAside(t *testing.T) {
	rows, vals := chainMonths(5, 50, nil) // 2020-01 to 2024-02
	year := tableio.Year
	pn, err := BuildPanel(rowsOf(t, rows, vals), PanelOptions{Grain: &year})
	if err != nil {
		t.Fatal(err)
	}
	if last := pn.Period(pn.T - 1).String(); last != "2023" || !strings.Contains(pn.Stats.SetAside, "2024 has 2 of its 12 months") {
		t.Errorf("panel ends %s, note %q; want 2023 and a note on 2024's 2 months", last, pn.Stats.SetAside)
	}
}

// TestPanelSetsAsidePartialFirstPeriod: daily rows from 2021-01-04
// summed to months. January 2021 has 28 of its 31 days, so it is set
// aside with a note naming it and its days, and the panel starts in
// February; with KeepFirstPeriod it stays, named among the partial
// periods. A last month that is whole is kept either way.
func TestPanelSetsAsidePartialFirstPeriod(t *testing.T) {
	var rows [][3]string
	var vals []float64
	for d := time.Date(2021, 1, 4, 0, 0, 0, 0, time.UTC); d.Before(time.Date(2021, 7, 1, 0, 0, 0, 0, time.UTC)); d = d.AddDate(0, 0, 1) {
		for _, s := range []string{"A", "B"} {
			rows = append(rows, [3]string{d.Format("2006-01-02"), s, ""})
			vals = append(vals, 10)
		}
	}
	month := tableio.Month
	pn, err := BuildPanel(rowsOf(t, rows, vals), PanelOptions{Grain: &month})
	if err != nil {
		t.Fatal(err)
	}
	if first := pn.Period(0).String(); first != "2021-02" || pn.T != 5 || pn.Values[0][0] != 280 {
		t.Errorf("panel starts %s with %d months, first value %v; want 2021-02, 5, 280", first, pn.T, pn.Values[0][0])
	}
	for _, w := range []string{"first period 2021-01", "28 of its 31 days", "starts at 2021-02"} {
		if !strings.Contains(pn.Stats.SetAsideFirst, w) {
			t.Errorf("set-aside note %q does not name %q", pn.Stats.SetAsideFirst, w)
		}
	}
	if len(pn.Stats.Partial) != 0 || pn.Stats.SetAside != "" {
		t.Errorf("partial %v, last set aside %q; want none", pn.Stats.Partial, pn.Stats.SetAside)
	}
	pn, err = BuildPanel(rowsOf(t, rows, vals), PanelOptions{Grain: &month, KeepFirstPeriod: true})
	if err != nil {
		t.Fatal(err)
	}
	if first := pn.Period(0).String(); first != "2021-01" || pn.T != 6 || pn.Values[0][0] != 280 || pn.Stats.SetAsideFirst != "" ||
		len(pn.Stats.Partial) != 1 || !strings.HasPrefix(pn.Stats.Partial[0], "2021-01 has 28 of its 31 days") {
		t.Errorf("kept: starts %s, %d months, first value %v, note %q, partial %v", first, pn.T, pn.Values[0][0], pn.Stats.SetAsideFirst, pn.Stats.Partial)
	}
}

// Until cuts the input at a period given in any form the reader takes:
// a month label, a date inside the month in monthly data, a timestamp,
// and a month in daily data (the days to its end).
func TestUntilCutsTheInput(t *testing.T) {
	rows, vals := chainMonths(4, 30, nil)
	for _, until := range []string{"2021-06", "2021-06-01", "2021-06-30", "2021-06-15T10:00:00+02:00"} {
		p, err := tableio.ParsePeriod(until)
		if err != nil {
			t.Fatal(err)
		}
		pn, err := BuildPanel(rowsOf(t, rows, vals), PanelOptions{Until: &p})
		if err != nil {
			t.Fatal(err)
		}
		if last := pn.Period(pn.T - 1).String(); last != "2021-06" || !strings.Contains(pn.Stats.Until, "72 of 120 rows") {
			t.Errorf("until %s: panel ends %s, note %q; want 2021-06 and 72 of 120 rows", until, last, pn.Stats.Until)
		}
	}
	var days [][3]string
	var dv []float64
	for d := 0; d < 90; d++ {
		days = append(days, [3]string{tableio.Period{Grain: tableio.Day, Index: 19723 + d}.String(), "Store 001", ""}) // from 2024-01-01
		dv = append(dv, 5)
	}
	p, _ := tableio.ParsePeriod("2024-02")
	pn, err := BuildPanel(rowsOf(t, days, dv), PanelOptions{Until: &p})
	if err != nil {
		t.Fatal(err)
	}
	if last := pn.Period(pn.T - 1).String(); last != "2024-02-29" {
		t.Errorf("daily until 2024-02: ends %s, want 2024-02-29", last)
	}
	for _, bad := range []string{"2019-12", "7"} {
		p, _ := tableio.ParsePeriod(bad)
		if _, err := BuildPanel(rowsOf(t, rows, vals), PanelOptions{Until: &p}); !inputerr.Is(err) || inputerr.OptionOf(err) != "Until" {
			t.Errorf("until %s: got %v, want an input error about Until", bad, err)
		}
	}
}

// One year typed wrong once in every series (2206 for 2021, 1.7 % of the
// rows, more than the old 1 % allowance) is refused, naming a row and how
// many rows and series lie that far; an older stretch of real history,
// with a row in each of its months per series, is not.
func TestMistypedYearInEverySeriesIsRefused(t *testing.T) {
	rows, vals := chainMonths(30, 60, nil)
	for s := 0; s < 30; s++ {
		r := &rows[s*60+12+s%12] // one month of 2021 per store
		r[0] = "2206" + r[0][4:]
	}
	_, err := BuildPanel(rowsOf(t, rows, vals), PanelOptions{})
	if !inputerr.Is(err) {
		t.Fatalf("got %v, want an input error", err)
	}
	for _, w := range []string{"row 13", "2206-01", "2020-01 to 2024-12", "30 rows of 30 series", "at most 1 per series"} {
		if !strings.Contains(err.Error(), w) {
			t.Errorf("%q does not name %q", err, w)
		}
	}
	// Five years of history, then nothing for five years, then five more.
	rows, vals = chainMonths(30, 180, func(s, m int) bool { return m < 60 || m >= 120 })
	if _, err := BuildPanel(rowsOf(t, rows, vals), PanelOptions{}); err != nil {
		t.Errorf("two stretches of real history refused: %v", err)
	}
}

// One store dated daily among stores dated on the first of each month is
// refused, naming the daily store, instead of turning the table to days.
func TestDailyStoreAmongMonthlyIsRefused(t *testing.T) {
	var rows [][3]string
	var vals []float64
	for s := 0; s < 6; s++ {
		for m := 0; m < 24; m++ {
			rows = append(rows, [3]string{fmt.Sprintf("%d-%02d-01", 2022+m/12, m%12+1), fmt.Sprintf("Store %d", s), ""})
			vals = append(vals, 100)
		}
	}
	for d := 0; d < 60; d++ {
		rows = append(rows, [3]string{tableio.Period{Grain: tableio.Day, Index: 19358 + d}.String(), "Quay Road", ""}) // from 2023-01-01
		vals = append(vals, 3)
	}
	_, err := BuildPanel(rowsOf(t, rows, vals), PanelOptions{})
	if !inputerr.Is(err) || !strings.Contains(err.Error(), "store=Quay Road") || !strings.Contains(err.Error(), "1 series are dated more often than once a month") {
		t.Fatalf("got %v, want an input error naming store=Quay Road as the odd series", err)
	}
	// Summed to months, the table is one grain.
	month := tableio.Month
	if _, err := BuildPanel(rowsOf(t, rows, vals), PanelOptions{Grain: &month}); err != nil {
		t.Errorf("with grain month: %v", err)
	}
}
