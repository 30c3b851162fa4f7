package cli

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"trueup/tableio"
)

// writeRouteCSV writes invented monthly passenger counts by origin and
// cabin "level" (key columns named like result columns), three years,
// and returns the path.
func writeRouteCSV(t *testing.T) string {
	t.Helper()
	var b strings.Builder
	b.WriteString("month,origin,level,passengers\n")
	for m := 0; m < 36; m++ {
		for o, origin := range []string{"Port Alder", "Kestrel Field"} {
			for l, level := range []string{"upper", "main"} {
				v := 100*float64(1+o+2*l) + 10*float64(m) + 15*math.Sin(float64(m)*math.Pi/6)
				fmt.Fprintf(&b, "%d-%02d,%s,%s,%.1f\n", 2022+m/12, 1+m%12, origin, level, v)
			}
		}
	}
	path := filepath.Join(t.TempDir(), "routes.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// header returns the column names of a table file.
func header(t *testing.T, path string) []string {
	t.Helper()
	tb, err := tableio.ReadTable(path, "")
	if err != nil {
		t.Fatal(err)
	}
	var names []string
	for _, c := range tb.Columns {
		names = append(names, c.Name)
	}
	return names
}

// TestKeyColumnsNamedLikeResultColumns: key columns named "origin" (the
// backtest's origin column) and "level" (every result table's) are
// accepted and written as key_origin and key_level by forecast and
// backtest, and reconcile reads forecast's own tables back under those
// names. Before, the run fitted everything and then failed writing a
// table with two columns of one name (exit 1).
func TestKeyColumnsNamedLikeResultColumns(t *testing.T) {
	in := writeRouteCSV(t)
	source := []string{"--input", in, "--time", "month", "--value", "passengers", "--hierarchy", "origin", "--hierarchy", "level",
		"--family", "drift", "--horizon", "3", "--quiet"}
	fc := filepath.Join(t.TempDir(), "fc")
	if code := run(append([]string{"forecast", "--out", fc, "--format", "csv,parquet"}, source...)); code != 0 {
		t.Fatalf("forecast exited %d", code)
	}
	for _, name := range []string{"forecasts.csv", "models.parquet", "residuals.csv", "history.parquet"} {
		got := strings.Join(header(t, filepath.Join(fc, name)), ",")
		if !strings.HasPrefix(got, "level,key_origin,key_level,") {
			t.Errorf("%s: columns %s, want level, key_origin, key_level first", name, got)
		}
	}
	bt := filepath.Join(t.TempDir(), "bt")
	if code := run(append([]string{"backtest", "--out", bt, "--format", "csv", "--origins", "2"}, source...)); code != 0 {
		t.Fatalf("backtest exited %d", code)
	}
	if got := strings.Join(header(t, filepath.Join(bt, "backtest.csv")), ","); !strings.HasPrefix(got, "level,key_origin,key_level,origin,period,") {
		t.Errorf("backtest.csv: columns %s", got)
	}
	rc := filepath.Join(t.TempDir(), "rc")
	code := run([]string{"reconcile", "--base", filepath.Join(fc, "forecasts.csv"), "--residuals", filepath.Join(fc, "residuals.csv"),
		"--hierarchy", "origin", "--hierarchy", "level", "--out", rc, "--format", "csv", "--quiet"})
	if code != 0 {
		t.Fatalf("reconcile of forecast's own tables exited %d", code)
	}
	want, got := forecastColumn(t, filepath.Join(fc, "forecasts.csv")), forecastColumn(t, filepath.Join(rc, "forecasts.csv"))
	if len(got) != len(want) || len(got) != 9*3 {
		t.Fatalf("reconcile wrote %d forecasts, forecast %d (want 27)", len(got), len(want))
	}
	for i := range want {
		if math.Abs(got[i]-want[i]) > 1e-6*math.Abs(want[i]) {
			t.Errorf("row %d: reconcile %v, forecast %v", i+1, got[i], want[i])
		}
	}
}

// forecastColumn reads the forecast column of a forecasts table.
func forecastColumn(t *testing.T, path string) []float64 {
	t.Helper()
	tb, err := tableio.ReadTable(path, "")
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range tb.Columns {
		if c.Name == "forecast" {
			return c.Floats
		}
	}
	t.Fatalf("%s has no forecast column", path)
	return nil
}

// TestKeyColumnsThatCannotBeKeptApart: "origin" is written as key_origin,
// so a second key column already named key_origin is refused with exit
// status 2 before any work.
func TestKeyColumnsThatCannotBeKeptApart(t *testing.T) {
	in := writeRouteCSV(t)
	data := strings.Replace(readFile(t, in), "level", "key_origin", 1)
	if err := os.WriteFile(in, []byte(data), 0o644); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(t.TempDir(), "fc")
	code, stderr := runBin(t, "forecast", "--input", in, "--time", "month", "--value", "passengers", "--hierarchy", "origin",
		"--hierarchy", "key_origin", "--family", "drift", "--horizon", "3", "--quiet", "--out", out)
	if code != 2 || !strings.Contains(stderr, `"key_origin"`) || !strings.Contains(stderr, "--hierarchy") {
		t.Errorf("exit %d, stderr %q; want 2 and a message naming key_origin and --hierarchy", code, stderr)
	}
	if _, err := os.Stat(out); err == nil {
		t.Errorf("wrote %s", out)
	}
}

// TestFormulaLikeKeysInCSV: keys that a spreadsheet would run as formulas
// are written to CSV after a quote (csv) or as they are (csv-verbatim),
// and reconcile reads forecast's protected CSV tables back to the same
// nodes and numbers as its Parquet tables. Before, the keys were written
// verbatim and there was no csv-verbatim.
func TestFormulaLikeKeysInCSV(t *testing.T) {
	var b strings.Builder
	b.WriteString("month,store,sales\n")
	stores := []string{"=1+2", "-Unassigned", "@Harbour", "Mill Lane"}
	for m := 0; m < 30; m++ {
		for s, store := range stores {
			fmt.Fprintf(&b, "%d-%02d,%s,%d\n", 2023+m/12, 1+m%12, store, 50+10*s+m)
		}
	}
	in := filepath.Join(t.TempDir(), "stores.csv")
	if err := os.WriteFile(in, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	source := []string{"--input", in, "--time", "month", "--value", "sales", "--hierarchy", "store", "--family", "drift",
		"--horizon", "2", "--quiet", "--no-report"}
	fc := filepath.Join(t.TempDir(), "fc")
	if code := run(append([]string{"forecast", "--out", fc, "--format", "csv,parquet"}, source...)); code != 0 {
		t.Fatalf("forecast exited %d", code)
	}
	text := readFile(t, filepath.Join(fc, "forecasts.csv"))
	for _, want := range []string{"\nstore,'=1+2,", "\nstore,'-Unassigned,", "\nstore,'@Harbour,", "\nstore,Mill Lane,"} {
		if !strings.Contains(text, want) {
			t.Errorf("forecasts.csv has no line starting %q:\n%s", want[1:], head(text))
		}
	}
	verbatim := filepath.Join(t.TempDir(), "verbatim")
	if code := run(append([]string{"forecast", "--out", verbatim, "--format", "csv-verbatim"}, source...)); code != 0 {
		t.Fatalf("forecast --format csv-verbatim exited %d", code)
	}
	if text := readFile(t, filepath.Join(verbatim, "forecasts.csv")); !strings.Contains(text, ",=1+2,") || strings.Contains(text, "'") {
		t.Errorf("csv-verbatim forecasts.csv:\n%s", head(text))
	}
	if code := run(append([]string{"forecast", "--out", t.TempDir(), "--format", "csv,csv-verbatim"}, source...)); code != 2 {
		t.Errorf("--format csv,csv-verbatim exited %d, want 2", code)
	}
	// Reconciling the CSV tables gives what reconciling the Parquet ones
	// gives, keys and numbers.
	reconcile := func(ext string) (keys []string, values []float64) {
		out := filepath.Join(t.TempDir(), "rc")
		code := run([]string{"reconcile", "--base", filepath.Join(fc, "forecasts"+ext), "--residuals", filepath.Join(fc, "residuals"+ext),
			"--hierarchy", "store", "--out", out, "--format", "parquet", "--quiet", "--no-report"})
		if code != 0 {
			t.Fatalf("reconcile of forecasts%s exited %d", ext, code)
		}
		tb, err := tableio.ReadTable(filepath.Join(out, "forecasts.parquet"), "")
		if err != nil {
			t.Fatal(err)
		}
		for _, c := range tb.Columns {
			switch c.Name {
			case "store":
				keys = c.Strings
			case "forecast":
				values = c.Floats
			}
		}
		return keys, values
	}
	csvKeys, csvValues := reconcile(".csv")
	pqKeys, pqValues := reconcile(".parquet")
	if strings.Join(csvKeys, "|") != strings.Join(pqKeys, "|") || fmt.Sprint(csvValues) != fmt.Sprint(pqValues) {
		t.Errorf("reconciled from CSV: %q %v\nfrom Parquet: %q %v", csvKeys, csvValues, pqKeys, pqValues)
	}
	for _, s := range stores {
		if !strings.Contains(strings.Join(csvKeys, "|"), s) {
			t.Errorf("store %q is not among the reconciled keys %q", s, csvKeys)
		}
	}
}

// TestUnprintableKeysAreShownEscaped: a key holding a character that does
// not print as itself (here a right-to-left override, which reorders the
// text after it on a terminal) is printed quoted with the character
// escaped, in fit's headings and backtest's tables, never raw. Before,
// keys were printed as they were.
func TestUnprintableKeysAreShownEscaped(t *testing.T) {
	const odd = "Mill\u202eLane"
	var b strings.Builder
	b.WriteString("month,store,sales\n")
	for m := 0; m < 36; m++ {
		for s, store := range []string{"Harbour Street", odd, "Quay Road"} {
			fmt.Fprintf(&b, "%d-%02d,%s,%d\n", 2022+m/12, 1+m%12, store, 40+25*s+m%7)
		}
	}
	in := filepath.Join(t.TempDir(), "stores.csv")
	if err := os.WriteFile(in, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	fit := runOK(t, "fit", "--input", in, "--time", "month", "--value", "sales", "--key", "store", "--family", "drift", "--horizon", "2")
	bt := runOK(t, "backtest", "--input", in, "--time", "month", "--value", "sales", "--hierarchy", "store", "--family", "drift",
		"--horizon", "2", "--origins", "2", "--quiet", "--no-report", "--format", "csv", "--out", filepath.Join(t.TempDir(), "bt"))
	for name, out := range map[string]string{"fit": fit, "backtest": bt} {
		if strings.Contains(out, "\u202e") {
			t.Errorf("%s printed the override raw:\n%s", name, out)
		}
		if !strings.Contains(out, `Mill\u202eLane"`) {
			t.Errorf("%s does not show the key escaped:\n%s", name, out)
		}
	}
	// fit names a series as every command names a node: store=….
	if !strings.Contains(fit, `series "store=Mill\u202eLane": `) || !strings.Contains(fit, "series store=Harbour Street: ") {
		t.Errorf("fit headings:\n%s", fit)
	}
}

// TestKeysThatWouldCollideAreRefused: the bottom series ("a\x00b", "c")
// and ("a", "b\x00c") are two series, but joined with NUL they read as
// one. Such keys are refused with exit status 2, naming file, column and
// row and showing the key escaped. Before, Parquet keys were not checked
// and the run went on with the two series confused.
func TestKeysThatWouldCollideAreRefused(t *testing.T) {
	var period, region, store []string
	var sales []float64
	for m := 0; m < 30; m++ {
		for s, key := range [][2]string{{"a\x00b", "c"}, {"a", "b\x00c"}, {"d", "e"}} {
			period = append(period, fmt.Sprintf("%d-%02d", 2023+m/12, 1+m%12))
			region, store = append(region, key[0]), append(store, key[1])
			sales = append(sales, float64(10+10*s+m))
		}
	}
	in := filepath.Join(t.TempDir(), "sales.parquet")
	tb := &tableio.Table{Columns: []tableio.Column{
		{Name: "month", Type: tableio.String, Strings: period},
		{Name: "region", Type: tableio.String, Strings: region},
		{Name: "store", Type: tableio.String, Strings: store},
		{Name: "sales", Type: tableio.Float64, Floats: sales},
	}}
	if err := tableio.WriteTable(in, tb, tableio.Parquet); err != nil {
		t.Fatal(err)
	}
	out := filepath.Join(t.TempDir(), "fc")
	code, stderr := runBin(t, "forecast", "--input", in, "--time", "month", "--value", "sales", "--hierarchy", "region,store",
		"--family", "drift", "--horizon", "2", "--quiet", "--out", out)
	if code != 2 {
		t.Fatalf("exit %d, want 2; stderr %q", code, stderr)
	}
	for _, want := range []string{in, "row 1", `column "region"`, `"a\x00b"`} {
		if !strings.Contains(stderr, want) {
			t.Errorf("stderr %q does not say %s", stderr, want)
		}
	}
}
