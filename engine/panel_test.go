package engine

import (
	"math"
	"slices"
	"strings"
	"testing"

	"trueup/inputerr"
	"trueup/tableio"
)

// rowsOf builds input rows from (period label, store, value) triples.
func rowsOf(t *testing.T, rows [][3]string, values []float64) *tableio.Rows {
	t.Helper()
	r := &tableio.Rows{Path: "test.csv", N: len(rows), KeyNames: []string{"store"},
		KeyCodes: [][]int32{make([]int32, len(rows))}, KeyDict: [][]string{nil}}
	codes := map[string]int32{}
	for i, row := range rows {
		p, err := tableio.ParsePeriod(row[0])
		if err != nil {
			t.Fatal(err)
		}
		r.Periods = append(r.Periods, p)
		c, ok := codes[row[1]]
		if !ok {
			c = int32(len(r.KeyDict[0]))
			codes[row[1]] = c
			r.KeyDict[0] = append(r.KeyDict[0], row[1])
		}
		r.KeyCodes[0][i] = c
		r.Values = append(r.Values, values[i])
	}
	return r
}

func TestPanelSpansGapsAndOpenings(t *testing.T) {
	rows := rowsOf(t, [][3]string{
		{"2024-01", "A", ""}, {"2024-02", "A", ""}, {"2024-04", "A", ""}, // gap in March
		{"2024-03", "B", ""}, {"2024-04", "B", ""}, // opens in March
		{"2024-01", "C", ""}, {"2024-02", "C", ""}, // closes after February
	}, []float64{1, -2, 4, 0, 5, 6, 7})
	pn, err := BuildPanel(rows, PanelOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if pn.T != 4 || pn.Grain != tableio.Month || pn.Period(0).String() != "2024-01" {
		t.Fatalf("T=%d grain=%v first=%v", pn.T, pn.Grain, pn.Period(0))
	}
	want := map[string][]float64{
		"A": {1, -2, 0, 4},
		"B": {math.NaN(), math.NaN(), 0, 5},
		"C": {6, 7, math.NaN(), math.NaN()},
	}
	for s, key := range pn.Keys {
		for t2, w := range want[key[0]] {
			got := pn.Values[s][t2]
			if !(got == w || (math.IsNaN(got) && math.IsNaN(w))) {
				t.Errorf("store %s period %d = %v, want %v", key[0], t2, got, w)
			}
		}
	}
	st := pn.Stats
	if st.Gaps != 1 || st.Negative != 1 || st.Zero != 1 || st.LateStarts != 1 || st.EarlyEnds != 1 {
		t.Errorf("stats %+v", st)
	}
}

func TestPanelDuplicates(t *testing.T) {
	rows := rowsOf(t, [][3]string{{"2024-01", "A", ""}, {"2024-02", "A", ""}, {"2024-02", "A", ""}}, []float64{1, 2, 3})
	_, err := BuildPanel(rows, PanelOptions{})
	if err == nil || !inputerr.Is(err) || !strings.Contains(err.Error(), "store=A") || !strings.Contains(err.Error(), "2024-02") {
		t.Fatalf("got %v, want an input error naming store=A and 2024-02", err)
	}
	pn, err := BuildPanel(rows, PanelOptions{SumDuplicates: true})
	if err != nil {
		t.Fatal(err)
	}
	if pn.Values[0][1] != 5 || pn.Stats.SummedRows != 1 {
		t.Errorf("summed %v, stats %+v", pn.Values[0], pn.Stats)
	}
}

func TestPanelGrainFromDatesAndCoarsening(t *testing.T) {
	// Daily rows summed to ISO weeks: 2024-01-01 is a Monday (ISO 8601 week
	// 2024-W01 runs 1–7 January 2024).
	var rows [][3]string
	var vals []float64
	for d := 1; d <= 14; d++ {
		rows = append(rows, [3]string{"2024-01-" + two(d), "A", ""})
		vals = append(vals, float64(d))
	}
	r := rowsOf(t, rows, vals)
	pn, err := BuildPanel(r, PanelOptions{})
	if err != nil || pn.Grain != tableio.Day || pn.T != 14 {
		t.Fatalf("native: %v %+v", err, pn)
	}
	week := tableio.Week
	pn, err = BuildPanel(r, PanelOptions{Grain: &week})
	if err != nil {
		t.Fatal(err)
	}
	if pn.T != 2 || pn.Period(0).String() != "2024-W01" || pn.Values[0][0] != 28 || pn.Values[0][1] != 77 {
		t.Errorf("weekly %v from %v", pn.Values[0], pn.Period(0))
	}
	// Duplicates are checked at the data's own grain, not after coarsening.
	if pn.Stats.SummedRows != 12 {
		t.Errorf("summed rows %d", pn.Stats.SummedRows)
	}
	if len(pn.Stats.Partial) != 0 {
		t.Errorf("two whole weeks reported partial: %v", pn.Stats.Partial)
	}
	// Ten days of January to months: January has 31 days, so the only
	// month is partial.
	month := tableio.Month
	r10 := rowsOf(t, rows[:10], vals[:10])
	pn, err = BuildPanel(r10, PanelOptions{Grain: &month})
	if err != nil {
		t.Fatal(err)
	}
	if len(pn.Stats.Partial) != 1 || pn.Stats.Partial[0] != "2024-01 has 10 of its 31 days" {
		t.Errorf("partial %v", pn.Stats.Partial)
	}
}

func TestPanelRejectsMixedPeriodForms(t *testing.T) {
	r := rowsOf(t, [][3]string{{"2024-01", "A", ""}, {"2024-Q1", "A", ""}}, []float64{1, 2})
	if _, err := BuildPanel(r, PanelOptions{}); err == nil || !inputerr.Is(err) {
		t.Fatalf("got %v", err)
	}
}

func two(d int) string {
	if d < 10 {
		return "0" + string(rune('0'+d))
	}
	return string(rune('0'+d/10)) + string(rune('0'+d%10))
}

// Analysts export monthly, quarterly and yearly data dated on the first or
// the last day of the period; the gap between dates (28–31, 89–92,
// 365–366 days in the Gregorian calendar of ISO 8601) gives the grain and
// each date maps to the period that contains it. Series start and stop at
// different dates and one has a hole; the grain is found over all of them.
func TestPanelGrainFromPeriodEndDates(t *testing.T) {
	cases := []struct {
		name  string
		rows  [][3]string
		grain tableio.Grain
		first string
		T     int
	}{
		{"month ends across a leap February", [][3]string{
			{"2024-01-31", "A", ""}, {"2024-02-29", "A", ""}, {"2024-03-31", "A", ""}, {"2024-05-31", "A", ""},
			{"2024-02-29", "B", ""}, {"2024-03-31", "B", ""}, {"2024-04-30", "B", ""},
		}, tableio.Month, "2024-01", 5},
		{"month starts", [][3]string{
			{"2023-11-01", "A", ""}, {"2023-12-01", "A", ""}, {"2024-01-01", "B", ""}, {"2024-02-01", "B", ""},
		}, tableio.Month, "2023-11", 4},
		{"quarter ends", [][3]string{
			{"2023-12-31", "A", ""}, {"2024-03-31", "A", ""}, {"2024-06-30", "A", ""}, {"2024-09-30", "B", ""}, {"2024-12-31", "B", ""},
		}, tableio.Quarter, "2023-Q4", 5},
		{"year starts", [][3]string{
			{"2019-01-01", "A", ""}, {"2020-01-01", "A", ""}, {"2021-01-01", "B", ""},
		}, tableio.Year, "2019", 3},
		{"year ends", [][3]string{
			{"2019-12-31", "A", ""}, {"2020-12-31", "A", ""}, {"2022-12-31", "A", ""},
		}, tableio.Year, "2019", 4},
	}
	for _, c := range cases {
		vals := make([]float64, len(c.rows))
		for i := range vals {
			vals[i] = float64(i + 1)
		}
		pn, err := BuildPanel(rowsOf(t, c.rows, vals), PanelOptions{})
		if err != nil {
			t.Errorf("%s: %v", c.name, err)
			continue
		}
		if pn.Grain != c.grain || pn.Period(0).String() != c.first || pn.T != c.T {
			t.Errorf("%s: grain %s first %s T %d, want %s %s %d", c.name, pn.Grain, pn.Period(0), pn.T, c.grain, c.first, c.T)
		}
	}
	// The month-end case in detail: A has no April row inside its span
	// (a zero), B opens in February and closes in April.
	rows := cases[0].rows
	pn, err := BuildPanel(rowsOf(t, rows, []float64{1, 2, 3, 4, 5, 6, 7}), PanelOptions{})
	if err != nil {
		t.Fatal(err)
	}
	want := map[string][]float64{"A": {1, 2, 3, 0, 4}, "B": {math.NaN(), 5, 6, 7, math.NaN()}}
	for s, key := range pn.Keys {
		for k, w := range want[key[0]] {
			if got := pn.Values[s][k]; !(got == w || math.IsNaN(got) && math.IsNaN(w)) {
				t.Errorf("store %s month %d = %v, want %v", key[0], k, got, w)
			}
		}
	}
}

func TestPanelRefusesAmbiguousDates(t *testing.T) {
	// 30 days apart, yet both in January: neither daily nor monthly.
	r := rowsOf(t, [][3]string{{"2024-01-01", "A", ""}, {"2024-01-31", "A", ""}}, []float64{1, 2})
	_, err := BuildPanel(r, PanelOptions{})
	if !inputerr.Is(err) || !strings.Contains(err.Error(), "same month") {
		t.Fatalf("got %v, want an input error about dates in the same month", err)
	}
}

// TestPanelStatedGrainReadsVaryingDays: monthly rows dated on varying
// days (one export dates a month by its first day, another by the 15th)
// cannot tell their grain; with the grain stated each date stands for its
// month, and two rows of a series in one month are duplicates.
func TestPanelStatedGrainReadsVaryingDays(t *testing.T) {
	rows := [][3]string{{"2024-01-01", "A", ""}, {"2024-02-15", "A", ""}, {"2024-03-01", "A", ""},
		{"2024-01-15", "B", ""}, {"2024-02-01", "B", ""}, {"2024-03-31", "B", ""}}
	r := rowsOf(t, rows, []float64{1, 2, 3, 4, 5, 6})
	if _, err := BuildPanel(r, PanelOptions{}); !inputerr.Is(err) || !strings.Contains(err.Error(), "cannot tell the grain") {
		t.Fatalf("without a grain: got %v, want an input error asking for the grain", err)
	}
	month := tableio.Month
	pn, err := BuildPanel(r, PanelOptions{Grain: &month})
	if err != nil {
		t.Fatal(err)
	}
	if pn.T != 3 || pn.Grain != tableio.Month || pn.Period(0).String() != "2024-01" {
		t.Fatalf("T=%d grain=%v first=%v", pn.T, pn.Grain, pn.Period(0))
	}
	for s, want := range map[string][]float64{"A": {1, 2, 3}, "B": {4, 5, 6}} {
		for i, key := range pn.Keys {
			if key[0] == s && !slices.Equal(pn.Values[i], want) {
				t.Errorf("store %s: %v, want %v", s, pn.Values[i], want)
			}
		}
	}
	dup := rowsOf(t, append(rows, [3]string{"2024-02-20", "A", ""}), []float64{1, 2, 3, 4, 5, 6, 7})
	if _, err := BuildPanel(dup, PanelOptions{Grain: &month}); !inputerr.Is(err) || !strings.Contains(err.Error(), "2024-02") {
		t.Fatalf("two rows of A in February: got %v, want an input error naming 2024-02", err)
	}
}

func TestPanelYearsAndSteps(t *testing.T) {
	years := rowsOf(t, [][3]string{{"2022", "A", ""}, {"2023", "A", ""}, {"2024", "A", ""}}, []float64{1, 2, 3})
	pn, err := BuildPanel(years, PanelOptions{})
	if err != nil || pn.Grain != tableio.Year || pn.T != 3 || pn.Period(2).String() != "2024" {
		t.Fatalf("years: %v %+v", err, pn)
	}
	steps := rowsOf(t, [][3]string{{"1", "A", ""}, {"2", "A", ""}, {"4", "A", ""}}, []float64{1, 2, 3})
	pn, err = BuildPanel(steps, PanelOptions{})
	if err != nil || pn.Grain != tableio.Index || pn.T != 4 || pn.Period(3).String() != "4" || pn.Values[0][2] != 0 {
		t.Fatalf("steps: %v %+v", err, pn)
	}
	if pn.Period(0).HasDate() {
		t.Errorf("step %s claims a calendar date", pn.Period(0))
	}
	month := tableio.Month
	if _, err := BuildPanel(steps, PanelOptions{Grain: &month}); !inputerr.Is(err) {
		t.Errorf("steps grouped into months: got %v, want an input error", err)
	}
}
