package cli

import (
	"bytes"
	"encoding/json"
	"fmt"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"trueup/fixtures"
	"trueup/tableio"
)

// An inputForm is one way analysts export the same sales: the period
// written as a label, a date on the first or last day of the period, a
// timestamp with or without a zone, a Parquet DATE, and CSV with a byte
// order mark, CRLF line ends and a ';' separator. Every form must give
// every command the same result as the plain labels (the reference form).
type inputForm struct {
	name string
	// period renders the period that starts on day start.
	period func(start time.Time) string
	// write writes the table; nil writes plain CSV.
	write func(t *testing.T, path string, tb *tableio.Table)
	ext   string
}

// monthEnd is the last day of the month starting at start.
func monthEnd(start time.Time) time.Time { return start.AddDate(0, 1, -1) }

var monthlyForms = []inputForm{
	{name: "labels", period: func(s time.Time) string { return s.Format("2006-01") }},
	{name: "first-day dates", period: func(s time.Time) string { return s.Format("2006-01-02") }},
	{name: "last-day dates", period: func(s time.Time) string { return monthEnd(s).Format("2006-01-02") }},
	{name: "timestamps", period: func(s time.Time) string { return s.Format("2006-01-02T15:04:05") }},
	{name: "zoned timestamps", period: func(s time.Time) string {
		// Midnight in a zone east of UTC is the evening before in UTC:
		// read in its own zone it stays in its month.
		return time.Date(s.Year(), s.Month(), 1, 0, 0, 0, 0, time.FixedZone("", 3600)).Format(time.RFC3339)
	}},
	{name: "semicolon BOM CRLF", period: func(s time.Time) string { return s.Format("2006-01-02") }, write: writeEuropeanCSV},
	{name: "Parquet DATE", period: nil, write: writeDateParquet, ext: ".parquet"},
}

// writeEuropeanCSV writes tb as CSV with a UTF-8 byte order mark, CRLF
// line ends and ';' between fields.
func writeEuropeanCSV(t *testing.T, path string, tb *tableio.Table) {
	var b bytes.Buffer
	b.WriteString("\xef\xbb\xbf")
	names := make([]string, len(tb.Columns))
	for i, c := range tb.Columns {
		names[i] = c.Name
	}
	b.WriteString(strings.Join(names, ";") + "\r\n")
	for r := range tb.Columns[0].Strings {
		cells := make([]string, len(tb.Columns))
		for i, c := range tb.Columns {
			if c.Type == tableio.Float64 {
				cells[i] = fmt.Sprint(c.Floats[r])
			} else {
				cells[i] = c.Strings[r]
			}
		}
		b.WriteString(strings.Join(cells, ";") + "\r\n")
	}
	if err := os.WriteFile(path, b.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
}

// writeDateParquet writes tb with its period column as a Parquet DATE.
func writeDateParquet(t *testing.T, path string, tb *tableio.Table) {
	out := &tableio.Table{}
	for _, c := range tb.Columns {
		if c.Name == fixtures.ColPeriod {
			d := tableio.Column{Name: c.Name, Type: tableio.Date}
			for _, s := range c.Strings {
				p, err := tableio.ParsePeriod(s)
				if err != nil {
					t.Fatal(err)
				}
				d.Ints = append(d.Ints, p.Start().Unix()/86400)
			}
			c = d
		}
		out.Columns = append(out.Columns, c)
	}
	if err := tableio.WriteTable(path, out, tableio.Parquet); err != nil {
		t.Fatal(err)
	}
}

// writeForm writes the demo-like table tb (periods as month labels) in
// form f and returns the path.
func writeForm(t *testing.T, dir string, f inputForm, tb *tableio.Table) string {
	t.Helper()
	ext := f.ext
	if ext == "" {
		ext = ".csv"
	}
	path := filepath.Join(dir, strings.ReplaceAll(f.name, " ", "-")+ext)
	cp := &tableio.Table{}
	for _, c := range tb.Columns {
		if c.Name == fixtures.ColPeriod && f.period != nil {
			relabelled := tableio.Column{Name: c.Name, Type: tableio.String}
			for _, s := range c.Strings {
				p, err := tableio.ParsePeriod(s)
				if err != nil {
					t.Fatal(err)
				}
				relabelled.Strings = append(relabelled.Strings, f.period(p.Start()))
			}
			c = relabelled
		}
		cp.Columns = append(cp.Columns, c)
	}
	if f.write != nil {
		f.write(t, path, cp)
	} else if err := tableio.WriteTable(path, cp, tableio.CSV); err != nil {
		t.Fatal(err)
	}
	return path
}

// runOK runs the command line and fails the test unless it exits 0.
func runOK(t *testing.T, args ...string) string {
	t.Helper()
	out, err := runCapture(args...)
	if err != nil {
		t.Fatalf("trueup %s: %v", strings.Join(args, " "), err)
	}
	return out
}

func readFile(t *testing.T, path string) string {
	t.Helper()
	b, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	return string(b)
}

// TestEveryInputFormThroughEveryCommand writes one small chain in every
// monthly input form and checks that forecast, fit, inspect and reconcile
// give the reference form's output byte for byte.
func TestEveryInputFormThroughEveryCommand(t *testing.T) {
	cfg := fixtures.SmallConfig(4)
	tb := fixtures.Generate(cfg).Table()
	dir := t.TempDir()
	nest := []string{"--hierarchy", "region,store", "--hierarchy", "category"}
	type outputs struct{ forecast, fit, inspect, reconcile, backtest string }
	var ref outputs
	var refForecasts string
	for i, f := range monthlyForms {
		path := writeForm(t, dir, f, tb)
		out := filepath.Join(dir, fmt.Sprintf("out%d", i))
		var got outputs
		runOK(t, append([]string{"forecast", "--input", path, "--family", "ets", "--horizon", "3", "--quiet",
			"--format", "csv", "--out", out}, nest...)...)
		got.forecast = readFile(t, filepath.Join(out, "forecasts.csv"))
		got.fit = runOK(t, "fit", "--input", path, "--key", "store", "--sum-duplicates", "--family", "ets", "--horizon", "3")
		var ins map[string]any
		if err := json.Unmarshal([]byte(runOK(t, append([]string{"inspect", "--input", path, "--json"}, nest...)...)), &ins); err != nil {
			t.Fatal(err)
		}
		delete(ins, "input")      // names the file and its columns' layout
		delete(ins, "grain_from") // says how the grain was told: labels or dates
		b, _ := json.Marshal(ins)
		got.inspect = string(b)
		if i == 0 {
			refForecasts = filepath.Join(out, "forecasts.csv")
		}
		// Reconcile the reference run's base forecasts with this form's
		// history (top-down by historical proportions reads it).
		rec := filepath.Join(dir, fmt.Sprintf("rec%d", i))
		runOK(t, append([]string{"reconcile", "--base", refForecasts, "--history", path, "--method", "top-down-hist",
			"--format", "csv", "--out", rec}, nest...)...)
		got.reconcile = readFile(t, filepath.Join(rec, "forecasts.csv"))
		bt := filepath.Join(dir, fmt.Sprintf("bt%d", i))
		runOK(t, append([]string{"backtest", "--input", path, "--family", "ets", "--horizon", "3", "--origins", "2",
			"--compare", "base,mint-shrink", "--quiet", "--no-report", "--format", "csv", "--out", bt}, nest...)...)
		got.backtest = readFile(t, filepath.Join(bt, "backtest.csv")) + readFile(t, filepath.Join(bt, "scores.csv"))
		if i == 0 {
			ref = got
			continue
		}
		for _, c := range []struct{ what, got, want string }{
			{"forecast", got.forecast, ref.forecast}, {"fit", got.fit, ref.fit},
			{"inspect", got.inspect, ref.inspect}, {"reconcile", got.reconcile, ref.reconcile},
			{"backtest", got.backtest, ref.backtest},
		} {
			if c.got != c.want {
				t.Errorf("%s: %s output differs from the labels form:\n%s\nwant\n%s", f.name, c.what, head(c.got), head(c.want))
			}
		}
	}
}

// head returns the first lines of s, for messages.
func head(s string) string {
	lines := strings.SplitN(s, "\n", 6)
	return strings.Join(lines[:min(len(lines), 5)], "\n")
}

// TestYearsAndStepsThroughEveryCommand writes yearly totals as year
// labels, dates a year apart (first and last day), an integer column of
// years and a step index, and checks every command reads them alike: the
// year forms give the same bytes, the step index (which has no calendar)
// the same numbers under step labels.
func TestYearsAndStepsThroughEveryCommand(t *testing.T) {
	cfg := fixtures.DefaultConfig("month")
	cfg.Regions, cfg.Stores, cfg.Categories, cfg.Years = 2, 5, 1, 8
	monthly := fixtures.Generate(cfg)
	// Sum months into years per store.
	type key struct{ region, store, year string }
	sums := map[key]float64{}
	var order []key
	for r := range monthly.Sales {
		k := key{monthly.Region[r], monthly.Store[r], monthly.Period[r][:4]}
		if _, ok := sums[k]; !ok {
			order = append(order, k)
		}
		sums[k] += monthly.Sales[r]
	}
	forms := []struct {
		name, text string
		period     func(year string) string
		steps      bool
	}{
		{name: "year labels", period: func(y string) string { return y }},
		{name: "first-day dates", period: func(y string) string { return y + "-01-01" }},
		{name: "last-day dates", period: func(y string) string { return y + "-12-31" }},
		{name: "step index", period: func(y string) string {
			var n int
			fmt.Sscan(y, &n)
			return fmt.Sprint(n - 2019)
		}, steps: true},
	}
	dir := t.TempDir()
	var refForecast, refFit, refScores string
	for i, f := range forms {
		var b strings.Builder
		b.WriteString("year,region,store,sales\n")
		for _, k := range order {
			fmt.Fprintf(&b, "%s,%s,%s,%g\n", f.period(k.year), k.region, k.store, sums[k])
		}
		path := filepath.Join(dir, fmt.Sprintf("form%d.csv", i))
		if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
		common := []string{"--input", path, "--time", "year", "--family", "drift", "--horizon", "2"}
		out := filepath.Join(dir, fmt.Sprintf("out%d", i))
		runOK(t, append([]string{"forecast", "--hierarchy", "region,store", "--quiet", "--format", "csv", "--out", out}, common...)...)
		fc := readFile(t, filepath.Join(out, "forecasts.csv"))
		fit := runOK(t, append([]string{"fit", "--key", "store"}, common...)...)
		ins := runOK(t, "inspect", "--input", path, "--time", "year", "--hierarchy", "region,store")
		wantGrain := "years"
		if f.steps {
			wantGrain = "indexs"
		}
		if !strings.Contains(ins, " "+wantGrain[:len(wantGrain)-1]) {
			t.Errorf("%s: inspect does not report the %s grain:\n%s", f.name, wantGrain, head(ins))
		}
		rec := filepath.Join(dir, fmt.Sprintf("rec%d", i))
		runOK(t, "reconcile", "--base", filepath.Join(out, "forecasts.csv"), "--history", path, "--time", "year",
			"--hierarchy", "region,store", "--method", "top-down-avg", "--format", "csv", "--out", rec)
		bt := filepath.Join(dir, fmt.Sprintf("bt%d", i))
		runOK(t, append([]string{"backtest", "--hierarchy", "region,store", "--origins", "2", "--compare", "base,bottom-up",
			"--quiet", "--no-report", "--format", "csv", "--out", bt}, common...)...)
		scores := readFile(t, filepath.Join(bt, "scores.csv"))
		if i == 0 {
			refForecast, refFit, refScores = fc, fit, scores
			if !strings.Contains(fc, ",2028,") {
				t.Fatalf("yearly forecasts do not start in 2028:\n%s", head(fc))
			}
			continue
		}
		if f.steps {
			// Step 9 follows steps 1..8; the numbers are the years'.
			// Steps have no calendar, so period_start is null.
			fc = strings.ReplaceAll(strings.ReplaceAll(fc, ",9,,", ",2028,2028-01-01,"), ",10,,", ",2029,2029-01-01,")
			if fc != refForecast {
				t.Errorf("%s: forecasts differ from the year labels' beyond the period labels:\n%s\nwant\n%s", f.name, head(fc), head(refForecast))
			}
			continue
		}
		if scores != refScores {
			t.Errorf("%s: backtest scores differ from the year labels form:\n%s\nwant\n%s", f.name, head(scores), head(refScores))
		}
		if fc != refForecast || fit != refFit {
			t.Errorf("%s: output differs from the year labels form:\n%s\nwant\n%s", f.name, head(fc), head(refForecast))
		}
	}
}
