package cli

import (
	"bytes"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"trueup/fixtures"
	"trueup/tableio"
)

// TestPlanGrainWritesCoherentTotals runs forecast on the demo chain with
// --plan-grain quarter,year and 15 months ahead: plans.csv holds the
// quarters 2026-Q1 to 2027-Q1 and the year 2026 for every node, the
// total's year is the sum of its twelve monthly forecasts in
// forecasts.csv, the year 2027 (three months of twelve) is left out with
// a warning saying why, and the summary shows the total's plan totals.
func TestPlanGrainWritesCoherentTotals(t *testing.T) {
	dir := t.TempDir()
	input := filepath.Join(dir, "sales.parquet")
	if err := os.WriteFile(input, fixtures.DemoMonthlyParquet, 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(dir, "out")
	var stdout bytes.Buffer
	root := newRootCmd()
	root.SetOut(&stdout)
	code := execute(root, []string{"forecast", "--quiet", "--input", input, "--hierarchy", "region,store", "--hierarchy", "category",
		"--family", "drift", "--horizon", "15", "--plan-grain", "quarter,year", "--format", "csv", "--no-report", "--out", out})
	if code != 0 {
		t.Fatalf("exit %d", code)
	}
	read := func(name string) *tableio.Table {
		tb, err := tableio.ReadTable(filepath.Join(out, name), tableio.CSV)
		if err != nil {
			t.Fatal(err)
		}
		return tb
	}
	col := func(tb *tableio.Table, name string) *tableio.Column {
		for i := range tb.Columns {
			if tb.Columns[i].Name == name {
				return &tb.Columns[i]
			}
		}
		t.Fatalf("no column %q", name)
		return nil
	}
	plans, fc := read("plans.csv"), read("forecasts.csv")
	yearSum := 0.0
	for r, p := range col(fc, "period").Strings {
		if col(fc, "level").Strings[r] == "total" && strings.HasPrefix(p, "2026-") {
			yearSum += col(fc, "forecast").Floats[r]
		}
	}
	var periods []string
	for r, p := range col(plans, "period").Strings {
		if col(plans, "level").Strings[r] != "total" {
			continue
		}
		periods = append(periods, p)
		if p == "2026" {
			if got := col(plans, "total").Floats[r]; math.Abs(got-yearSum) > 1e-9*yearSum {
				t.Errorf("total 2026: %v, its months sum to %v", got, yearSum)
			}
			if n := col(plans, "periods_forecast").Floats[r]; n != 12 { // CSV numbers read back as floats
				t.Errorf("total 2026: %v forecast months", n)
			}
		}
	}
	if got := strings.Join(periods, " "); got != "2026-Q1 2026-Q2 2026-Q3 2026-Q4 2027-Q1 2026" {
		t.Errorf("the total's plan periods: %s", got)
	}
	if rows := len(col(plans, "level").Strings); rows != 306*6 {
		t.Errorf("%d plan rows, want 306 nodes × 6", rows)
	}
	text := stdout.String()
	for _, want := range []string{"Total by plan period", "2027-Q1", "plan period left out: 2027: it runs to 2027-12"} {
		if !strings.Contains(text, want) {
			t.Errorf("summary lacks %q:\n%s", want, text)
		}
	}
}
