package engine

import (
	"math"
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
