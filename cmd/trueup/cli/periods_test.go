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

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/apache/arrow-go/v18/parquet/pqarrow"

	"trueup/fixtures"
	"trueup/tableio"
)

// TestReconcileReadsEveryPeriodForm writes a forecast run's base
// forecasts and residuals back in every monthly input form (labels,
// first- and last-day dates, timestamps, zoned timestamps, ';' CSV with
// a byte order mark, Parquet DATE) and checks that reconcile gives the
// labels' result byte for byte: base and residual periods go through the
// reader history goes through.
func TestReconcileReadsEveryPeriodForm(t *testing.T) {
	tb := fixtures.Generate(fixtures.SmallConfig(4)).Table()
	dir := t.TempDir()
	sales := filepath.Join(dir, "sales.csv")
	if err := tableio.WriteTable(sales, tb, tableio.CSV); err != nil {
		t.Fatal(err)
	}
	nest := []string{"--hierarchy", "region,store", "--hierarchy", "category"}
	run := filepath.Join(dir, "run")
	runOK(t, append([]string{"forecast", "--input", sales, "--family", "drift", "--horizon", "3", "--quiet",
		"--format", "csv", "--out", run}, nest...)...)
	read := func(name string) *tableio.Table {
		t.Helper()
		tb, err := tableio.ReadTable(filepath.Join(run, name), tableio.CSV)
		if err != nil {
			t.Fatal(err)
		}
		// Only what another tool would write: keys, period, values.
		var keep tableio.Table
		for _, c := range tb.Columns {
			switch c.Name {
			case "region", "store", "category", "period", "base", "base_variance", "residual":
				keep.Columns = append(keep.Columns, c)
			}
		}
		return &keep
	}
	base, residuals := read("forecasts.csv"), read("residuals.csv")
	var ref string
	for i, f := range monthlyForms {
		fdir := filepath.Join(dir, fmt.Sprintf("form%d", i))
		for _, d := range []string{"base", "res"} {
			if err := os.MkdirAll(filepath.Join(fdir, d), 0o755); err != nil {
				t.Fatal(err)
			}
		}
		b := writeForm(t, filepath.Join(fdir, "base"), f, base)
		r := writeForm(t, filepath.Join(fdir, "res"), f, residuals)
		out := filepath.Join(fdir, "out")
		if _, err := runCapture(append([]string{"reconcile", "--base", b, "--residuals", r, "--method", "mint",
			"--format", "csv", "--out", out}, nest...)...); err != nil {
			t.Errorf("%s: %v", f.name, err)
			continue
		}
		got := readFile(t, filepath.Join(out, "forecasts.csv"))
		if i == 0 {
			ref = got
		} else if got != ref {
			t.Errorf("%s: reconciled forecasts differ from the labels form:\n%s\nwant\n%s", f.name, head(got), head(ref))
		}
	}
}

// partialSales writes the small chain's sales with its last month cut to
// the rows of one store, as an export taken before the month's figures
// are in, and returns the path and that month.
func partialSales(t *testing.T, dir string) (string, string) {
	tb := fixtures.Generate(fixtures.SmallConfig(4)).Table()
	var period, store tableio.Column
	for _, c := range tb.Columns {
		switch c.Name {
		case fixtures.ColPeriod:
			period = c
		case "store":
			store = c
		}
	}
	last := ""
	for _, p := range period.Strings {
		last = max(last, p)
	}
	stores := map[string]bool{}
	var keep []int
	for r, p := range period.Strings {
		if p == last && !stores[store.Strings[r]] && len(stores) == 1 {
			continue
		}
		if p == last {
			stores[store.Strings[r]] = true
		}
		keep = append(keep, r)
	}
	cut := &tableio.Table{}
	for _, c := range tb.Columns {
		k := tableio.Column{Name: c.Name, Type: c.Type}
		for _, r := range keep {
			if c.Type == tableio.Float64 {
				k.Floats = append(k.Floats, c.Floats[r])
			} else {
				k.Strings = append(k.Strings, c.Strings[r])
			}
		}
		cut.Columns = append(cut.Columns, k)
	}
	path := filepath.Join(dir, "partial.csv")
	if err := tableio.WriteTable(path, cut, tableio.CSV); err != nil {
		t.Fatal(err)
	}
	return path, last
}

// A partial last month is set aside with a loud warning naming it, so the
// forecast starts at that month and no store is closed on its account;
// --until cuts the input at a period given as a label, a date or a
// timestamp, with the same forecasts; --keep-partial-periods keeps the month.
func TestPartialLastPeriodAndUntil(t *testing.T) {
	dir := t.TempDir()
	sales, last := partialSales(t, dir)
	p, _ := tableio.ParsePeriod(last)
	prev := p.Next(-1)
	nest := []string{"--hierarchy", "region,store", "--hierarchy", "category"}
	forecast := func(name string, extra ...string) (map[string]any, string) {
		out := filepath.Join(dir, name)
		runOK(t, append(append([]string{"forecast", "--input", sales, "--family", "drift", "--horizon", "2", "--quiet",
			"--format", "csv", "--out", out}, nest...), extra...)...)
		var rep map[string]any
		if err := json.Unmarshal([]byte(readFile(t, filepath.Join(out, "run.json"))), &rep); err != nil {
			t.Fatal(err)
		}
		return rep, readFile(t, filepath.Join(out, "forecasts.csv"))
	}
	rep, set := forecast("default")
	warnings := fmt.Sprint(rep["warnings"])
	if !strings.Contains(warnings, "last period "+last+" looks partial") || strings.Contains(warnings, "closed before "+last) {
		t.Errorf("warnings %s: want the partial month %s named and no store stopping early", warnings, last)
	}
	if !strings.Contains(set, ","+last+",") {
		t.Errorf("forecasts do not start at %s:\n%s", last, head(set))
	}
	start := prev.Start()
	for _, until := range []string{prev.String(), start.Format("2006-01-02"), start.AddDate(0, 1, -1).Format("2006-01-02"),
		start.Format(time.RFC3339)} {
		_, got := forecast("until-"+strings.NewReplacer(":", "", "+", "").Replace(until), "--until", until)
		if got != set {
			t.Errorf("--until %s: forecasts differ from the default run", until)
		}
	}
	rep, _ = forecast("keep", "--keep-partial-periods")
	if w := fmt.Sprint(rep["warnings"]); strings.Contains(w, "looks partial") || !strings.Contains(w, "8 bottom series closed before "+last) {
		t.Errorf("--keep-partial-periods: warnings %s, want the stores stopping early and no partial month set aside", w)
	}
	// inspect lists the partial month among its input notes.
	if out := runOK(t, append([]string{"inspect", "--input", sales}, nest...)...); !strings.Contains(out, "input note: last period "+last) {
		t.Errorf("inspect does not name the partial month:\n%s", out)
	}
}

// A Parquet TIMESTAMP adjusted to UTC holding local midnights of a
// session at UTC+01:00 (Europe/Berlin, offsets from Go's time zone
// database) reads as the months written, not a month early, and inspect
// says so among its input checks.
func TestLocalMidnightTimestampsThroughInspect(t *testing.T) {
	berlin, err := time.LoadLocation("Europe/Berlin")
	if err != nil {
		t.Skip("no time zone database:", err)
	}
	mem := memory.DefaultAllocator
	tb := array.NewTimestampBuilder(mem, &arrow.TimestampType{Unit: arrow.Microsecond, TimeZone: "UTC"})
	sb := array.NewStringBuilder(mem)
	vb := array.NewFloat64Builder(mem)
	for _, store := range []string{"Harbour Street", "Mill Lane"} {
		for m := 0; m < 30; m++ {
			tb.Append(arrow.Timestamp(time.Date(2022, time.Month(m+1), 1, 0, 0, 0, 0, berlin).UnixMicro()))
			sb.Append(store)
			vb.Append(100 + float64(m%12))
		}
	}
	sc := arrow.NewSchema([]arrow.Field{{Name: "period", Type: tb.Type()}, {Name: "store", Type: arrow.BinaryTypes.String},
		{Name: "sales", Type: arrow.PrimitiveTypes.Float64}}, nil)
	rec := array.NewRecordBatch(sc, []arrow.Array{tb.NewArray(), sb.NewArray(), vb.NewArray()}, 60)
	var buf bytes.Buffer
	w, err := pqarrow.NewFileWriter(sc, &buf, nil, pqarrow.NewArrowWriterProperties(pqarrow.WithStoreSchema()))
	if err != nil {
		t.Fatal(err)
	}
	if err := w.Write(rec); err != nil {
		t.Fatal(err)
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "berlin.parquet")
	if err := os.WriteFile(path, buf.Bytes(), 0o644); err != nil {
		t.Fatal(err)
	}
	out := runOK(t, "inspect", "--input", path, "--hierarchy", "store")
	for _, want := range []string{"periods: 2022-01 to 2024-06", "input note: every period is a UTC timestamp at 22:00 and 23:00"} {
		if !strings.Contains(out, want) {
			t.Errorf("inspect output lacks %q:\n%s", want, out)
		}
	}
}

// Input errors of the period reader exit 2 with a message naming what to
// fix: spreadsheet serial dates, and a daily store among monthly ones.
func TestPeriodRefusalsExitTwo(t *testing.T) {
	dir := t.TempDir()
	var serial, mixed strings.Builder
	serial.WriteString("period,store,sales\n")
	mixed.WriteString("period,store,sales\n")
	for m := 0; m < 24; m++ {
		d := time.Date(2022, time.Month(m+1), 1, 0, 0, 0, 0, time.UTC)
		for _, s := range []string{"Harbour Street", "Mill Lane"} {
			fmt.Fprintf(&serial, "%d,%s,10\n", int(d.Sub(time.Date(1899, 12, 30, 0, 0, 0, 0, time.UTC)).Hours()/24), s)
			fmt.Fprintf(&mixed, "%s,%s,10\n", d.Format("2006-01-02"), s)
		}
	}
	for d := 0; d < 40; d++ {
		fmt.Fprintf(&mixed, "%s,Quay Road,1\n", time.Date(2023, 1, 1+d, 0, 0, 0, 0, time.UTC).Format("2006-01-02"))
	}
	for _, c := range []struct{ name, body, want string }{
		{"serial.csv", serial.String(), "spreadsheet serial dates"},
		{"mixed.csv", mixed.String(), "store=Quay Road"},
	} {
		path := writeFile(t, dir, c.name, c.body)
		args := []string{"inspect", "--input", path, "--hierarchy", "store"}
		_, err := runCapture(args...)
		if code := run(args); code != exitInput || err == nil || !strings.Contains(err.Error(), c.want) {
			t.Errorf("%s: exit %d, %v; want exit 2 naming %q", c.name, code, err, c.want)
		}
	}
}
