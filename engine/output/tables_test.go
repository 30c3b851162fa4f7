package output_test

import (
	"context"
	"math"
	"path/filepath"
	"testing"

	"trueup/engine"
	"trueup/engine/output"
	"trueup/internal/numeric"
	"trueup/models/families"
	"trueup/tableio"
)

func columnOf(t *testing.T, tb *tableio.Table, name string) *tableio.Column {
	t.Helper()
	for i := range tb.Columns {
		if tb.Columns[i].Name == name {
			return &tb.Columns[i]
		}
	}
	t.Fatalf("no column %q", name)
	return nil
}

// TestHistoryAndResidualCheck checks the history table's like_for_like
// column against the result's histories (what each node was fitted on), and the models table's Ljung–Box columns against
// numeric.LjungBox run on the residuals table's finite residuals of each
// node (the statistic itself is checked against statsmodels in
// internal/numeric).
func TestHistoryAndResidualCheck(t *testing.T) {
	d := smallChain(t)
	res, err := engine.Forecast(context.Background(), d, engine.Options{Model: families.Spec{Family: "seasonal-naive"}})
	if err != nil {
		t.Fatal(err)
	}
	tables := map[string]*tableio.Table{}
	for _, tb := range output.Tables(res) {
		tables[tb.Name] = tb.Table
	}
	T := res.Calendar.T
	value := columnOf(t, tables["history"], "like_for_like")
	period := columnOf(t, tables["history"], "period")
	for i, h := range res.History {
		for k := 0; k < T; k++ {
			r := i*T + k
			if got := value.Floats[r]; got != h[k] && !(math.IsNaN(got) && math.IsNaN(h[k])) {
				t.Fatalf("history node %d period %d: %v, result %v", i, k, got, h[k])
			}
			if period.Strings[r] != res.Calendar.Period(k).String() {
				t.Fatalf("history row %d: period %s", r, period.Strings[r])
			}
		}
	}
	resid := columnOf(t, tables["residuals"], "residual")
	lags, q, p := columnOf(t, tables["models"], "ljung_box_lags"), columnOf(t, tables["models"], "ljung_box_q"), columnOf(t, tables["models"], "ljung_box_p")
	tested := 0
	for i := range res.Fits {
		var x []float64
		for k := 0; k < T; k++ {
			if v := resid.Floats[i*T+k]; !math.IsNaN(v) {
				x = append(x, v)
			}
		}
		h := int(lags.Ints[i])
		if h == 0 {
			if len(x) >= 10 || !math.IsNaN(p.Floats[i]) {
				t.Fatalf("node %d: no test on %d residuals (p %v)", i, len(x), p.Floats[i])
			}
			continue
		}
		wantQ, wantP := numeric.LjungBox(numeric.ACF(x, h)[1:], len(x), 0)
		if math.Abs(q.Floats[i]-wantQ) > 1e-9*math.Max(1, wantQ) || math.Abs(p.Floats[i]-wantP) > 1e-12 {
			t.Fatalf("node %d: Q %v p %v, from the residuals table %v %v", i, q.Floats[i], p.Floats[i], wantQ, wantP)
		}
		tested++
	}
	if tested == 0 {
		t.Fatal("no node was tested")
	}
}

// TestResultColumnsAreKnown keeps engine.IsResultColumn complete: every
// column that a table with key columns writes beside them (after level and
// the key columns) is one it names, so a key column of that name is
// written under the prefix instead of clashing.
func TestResultColumnsAreKnown(t *testing.T) {
	d := smallChain(t)
	opt := engine.Options{Horizon: 3, Model: families.Spec{Family: "drift"}, Levels: []float64{80, 97.5}}
	withPlans := opt
	withPlans.PlanGrains = []tableio.Grain{tableio.Quarter}
	res, err := engine.Forecast(context.Background(), d, withPlans)
	if err != nil {
		t.Fatal(err)
	}
	bt, err := engine.Backtest(context.Background(), d, engine.BacktestOptions{Options: opt, Origins: 1})
	if err != nil {
		t.Fatal(err)
	}
	attrs := len(res.Structure.Attrs)
	for _, tb := range append(output.Tables(res), output.BacktestTables(bt)...) {
		cols := tb.Table.Columns
		if cols[0].Name != "level" || len(cols) <= attrs || cols[1].Name != res.Structure.Attrs[0] {
			continue // no key columns (scores, drivers, ...)
		}
		for _, c := range cols[1+attrs:] {
			if !engine.IsResultColumn(c.Name) {
				t.Errorf("%s: column %q is not a result column for engine.KeyColumn", tb.Name, c.Name)
			}
		}
	}
}

// TestHistoryTotalsAreTheSumOfTheirParts writes a forecast of a chain
// whose stores close inside the history, reads history.parquet back and
// checks that every aggregate row's value is the sum of the values of
// the bottom rows under it (null where none existed), to 1e-9 relative:
// the history a finance user reads adds up, as the forecasts do
// (coherence, Hyndman & Athanasopoulos, Forecasting: Principles and
// Practice, 3rd ed., §11.1).
func TestHistoryTotalsAreTheSumOfTheirParts(t *testing.T) {
	d := smallChain(t)
	if d.Panel.Stats.EarlyEnds == 0 {
		t.Fatal("the test chain has no closed store")
	}
	res, err := engine.Forecast(context.Background(), d, engine.Options{Model: families.Spec{Family: "seasonal-naive"}})
	if err != nil {
		t.Fatal(err)
	}
	dir := filepath.Join(t.TempDir(), "out")
	if _, err := output.Write(dir, res, []string{"parquet"}); err != nil {
		t.Fatal(err)
	}
	tb, err := tableio.ReadTable(filepath.Join(dir, "history.parquet"), tableio.Parquet)
	if err != nil {
		t.Fatal(err)
	}
	level, value, period := columnOf(t, tb, "level"), columnOf(t, tb, "value"), columnOf(t, tb, "period")
	attrs := res.Structure.Attrs
	keys := make([]*tableio.Column, len(attrs))
	for a, name := range attrs {
		keys[a] = columnOf(t, tb, name)
	}
	bottomLevel := res.Structure.LevelNames()[len(res.Structure.Levels)-1]
	type cell struct{ key, period string }
	under := func(r int, bottom int) bool { // bottom row r2 lies under aggregate row r
		for a := range keys {
			if !null(keys[a], r) && keys[a].Strings[r] != keys[a].Strings[bottom] {
				return false
			}
		}
		return true
	}
	var bottoms []int
	for r := range level.Strings {
		if level.Strings[r] == bottomLevel {
			bottoms = append(bottoms, r)
		}
	}
	checked, differs := 0, 0
	lfl := columnOf(t, tb, "like_for_like")
	for r := range level.Strings {
		if level.Strings[r] == bottomLevel {
			continue
		}
		sum, any := 0.0, false
		for _, b := range bottoms {
			if period.Strings[b] == period.Strings[r] && under(r, b) && !null(value, b) {
				sum += value.Floats[b]
				any = true
			}
		}
		if got := value.Floats[r]; !any && !null(value, r) || any && (null(value, r) || math.Abs(got-sum) > 1e-9*math.Max(1, math.Abs(sum))) {
			t.Fatalf("%s row %d, period %s: value %v (null %v), its bottom rows sum to %v", level.Strings[r], r, period.Strings[r], got, null(value, r), sum)
		}
		if !null(lfl, r) && lfl.Floats[r] != value.Floats[r] {
			differs++
		}
		checked++
	}
	if checked == 0 || differs == 0 {
		t.Fatalf("%d aggregate rows checked, %d where like-for-like differs: the closure rule is not exercised", checked, differs)
	}
}

// null reports whether cell r of c is null (a NaN read back counts).
func null(c *tableio.Column, r int) bool {
	return c.Null != nil && c.Null[r] || c.Type == tableio.Float64 && math.IsNaN(c.Floats[r])
}

// TestCoverageHasOneName: the backtest table's coverage_L (1 when the
// actual lies in the L% interval, per row) and the scores table's
// coverage_L (the share of actuals inside it) are one measure under one
// name: the mean of the first over a level's scored rows of a method is
// the second. (The per-row column was once inside_L.)
func TestCoverageHasOneName(t *testing.T) {
	d := smallChain(t)
	opt := engine.Options{Horizon: 3, Model: families.Spec{Family: "drift"}, Levels: []float64{80, 97.5}}
	bt, err := engine.Backtest(context.Background(), d, engine.BacktestOptions{Options: opt, Origins: 2})
	if err != nil {
		t.Fatal(err)
	}
	tables := map[string]*tableio.Table{}
	for _, tb := range output.BacktestTables(bt) {
		tables[tb.Name] = tb.Table
	}
	rows, scores := tables["backtest"], tables["scores"]
	for _, name := range []string{"coverage_80", "coverage_97_5"} {
		sum, n := map[[2]string]float64{}, map[[2]string]int{}
		level, method, cov := columnOf(t, rows, "level"), columnOf(t, rows, "method"), columnOf(t, rows, name)
		for r := range cov.Ints {
			if !cov.Null[r] {
				k := [2]string{level.Strings[r], method.Strings[r]}
				sum[k] += float64(cov.Ints[r])
				n[k]++
			}
		}
		slevel, smethod, step, share := columnOf(t, scores, "level"), columnOf(t, scores, "method"), columnOf(t, scores, "step"), columnOf(t, scores, name)
		checked := 0
		for r := range share.Floats {
			if step.Null[r] && !slevel.Null[r] {
				k := [2]string{slevel.Strings[r], smethod.Strings[r]}
				if want := sum[k] / float64(n[k]); math.Abs(share.Floats[r]-want) > 1e-12 {
					t.Errorf("%s %s %s: scores %v, mean of the backtest rows %v", name, k[0], k[1], share.Floats[r], want)
				}
				checked++
			}
		}
		if checked == 0 {
			t.Errorf("%s: no score over all steps checked", name)
		}
	}
}
