package output_test

import (
	"context"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"trueup/engine"
	"trueup/engine/output"
	"trueup/models/families"
	"trueup/tableio"
)

// TestPlanTableAddsUpFromTheFiles writes a forecast from an origin in
// May with plan totals by quarter and year as CSV, reads the plans,
// forecasts and history tables back as a finance user would, and checks
// every plan row against them: total = actual + forecast, actual = the
// history values of its months before the origin, forecast = the
// forecasts of its other months, and every total the sum of the totals of
// the bottom rows under it, to 1e-9 relative.
func TestPlanTableAddsUpFromTheFiles(t *testing.T) {
	d := smallChain(t)
	cut, err := d.Cut(d.Panel.T - 8)
	if err != nil {
		t.Fatal(err)
	}
	res, err := engine.Forecast(context.Background(), cut, engine.Options{Model: families.Spec{Family: "drift"},
		Horizon: 12, PlanGrains: []tableio.Grain{tableio.Quarter, tableio.Year}})
	if err != nil {
		t.Fatal(err)
	}
	dir := filepath.Join(t.TempDir(), "out")
	if _, err := output.Write(dir, res, []string{"csv"}); err != nil {
		t.Fatal(err)
	}
	read := func(name string) *tableio.Table {
		tb, err := tableio.ReadTable(filepath.Join(dir, name+".csv"), tableio.CSV)
		if err != nil {
			t.Fatal(err)
		}
		return tb
	}
	plans, forecasts, history := read("plans"), read("forecasts"), read("history")
	attrs := res.Structure.Attrs
	node := func(tb *tableio.Table, r int) string {
		parts := []string{columnOf(t, tb, "level").Strings[r]}
		for _, a := range attrs {
			parts = append(parts, columnOf(t, tb, a).Strings[r])
		}
		return strings.Join(parts, "|")
	}
	// Sums per node and plan period label, from the monthly tables.
	sums := map[string]float64{}
	add := func(tb *tableio.Table, col, part string) {
		for r, v := range columnOf(t, tb, col).Floats {
			p, err := tableio.ParsePeriod(columnOf(t, tb, "period").Strings[r])
			if err != nil {
				t.Fatal(err)
			}
			for _, g := range []tableio.Grain{tableio.Quarter, tableio.Year} {
				q, _ := p.BelongsTo(g)
				if !math.IsNaN(v) {
					sums[node(tb, r)+"|"+q.String()+"|"+part] += v
				}
			}
		}
	}
	add(forecasts, "forecast", "forecast")
	add(history, "value", "actual")

	level := columnOf(t, plans, "level")
	period := columnOf(t, plans, "period")
	actual, forecast, total := columnOf(t, plans, "actual"), columnOf(t, plans, "forecast"), columnOf(t, plans, "total")
	lo, hi := columnOf(t, plans, "pi80_lower"), columnOf(t, plans, "pi80_upper")
	bottomLevel := res.Structure.Levels[len(res.Structure.Levels)-1].Name
	bottomTotals := map[string]float64{}
	if len(level.Strings) != len(res.Structure.Nodes)*len(res.Plans.Periods) {
		t.Fatalf("%d plan rows", len(level.Strings))
	}
	for r := range level.Strings {
		key := node(plans, r) + "|" + period.Strings[r]
		if !closeTo(actual.Floats[r], sums[key+"|actual"]) || !closeTo(forecast.Floats[r], sums[key+"|forecast"]) ||
			!closeTo(total.Floats[r], actual.Floats[r]+forecast.Floats[r]) {
			t.Errorf("%s: actual %v forecast %v total %v; the monthly tables give %v and %v", key,
				actual.Floats[r], forecast.Floats[r], total.Floats[r], sums[key+"|actual"], sums[key+"|forecast"])
		}
		if !(lo.Floats[r] <= total.Floats[r] && total.Floats[r] <= hi.Floats[r]) {
			t.Errorf("%s: total %v outside [%v, %v]", key, total.Floats[r], lo.Floats[r], hi.Floats[r])
		}
		if level.Strings[r] == bottomLevel {
			bottomTotals[period.Strings[r]] += total.Floats[r]
		}
	}
	for r := range level.Strings {
		if level.Strings[r] == "total" && !closeTo(total.Floats[r], bottomTotals[period.Strings[r]]) {
			t.Errorf("%s: the total's plan total %v, its bottom rows sum to %v", period.Strings[r], total.Floats[r], bottomTotals[period.Strings[r]])
		}
	}
}

func closeTo(a, b float64) bool { return math.Abs(a-b) <= 1e-9*math.Max(1, math.Abs(b)) }
