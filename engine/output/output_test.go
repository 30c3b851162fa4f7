package output_test

import (
	"bytes"
	"context"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"trueup/engine"
	"trueup/engine/output"
	"trueup/fixtures"
	"trueup/hierarchy"
	"trueup/models/families"
	"trueup/tableio"
)

// smallChain writes a small demo-like chain (2 regions, 5 stores, 2
// categories, 4 years of months) and loads it.
func smallChain(t *testing.T) *engine.Data {
	t.Helper()
	input := filepath.Join(t.TempDir(), "small.parquet")
	if err := fixtures.WriteSmall(input, 4); err != nil {
		t.Fatal(err)
	}
	d, err := engine.Load(engine.Source{Path: input, Time: fixtures.DemoTimeColumn, Value: fixtures.DemoValueColumn,
		Chains: fixtures.DemoChains()})
	if err != nil {
		t.Fatal(err)
	}
	return d
}

// TestSameBytesWhateverTheWorkers checks the determinism promise: the same
// input and options give byte-identical tables, residuals included, in
// every format whatever the number of workers.
func TestSameBytesWhateverTheWorkers(t *testing.T) {
	d := smallChain(t)
	var outputs [][]byte
	for _, workers := range []int{1, 3} {
		res, err := engine.Forecast(context.Background(), d, engine.Options{Horizon: 6, Fitter: engine.Local{Workers: workers},
			PlanGrains: []tableio.Grain{tableio.Quarter, tableio.Year}})
		if err != nil {
			t.Fatal(err)
		}
		out := filepath.Join(t.TempDir(), strconv.Itoa(workers))
		if _, err := output.Write(out, res, []string{"parquet", "csv", "arrow"}); err != nil {
			t.Fatal(err)
		}
		var all []byte
		for _, name := range []string{"forecasts", "plans", "models", "residuals"} {
			for _, ext := range []string{".parquet", ".csv", ".arrow"} {
				b, err := os.ReadFile(filepath.Join(out, name+ext))
				if err != nil {
					t.Fatal(err)
				}
				all = append(all, b...)
			}
		}
		outputs = append(outputs, all)
	}
	if !bytes.Equal(outputs[0], outputs[1]) {
		t.Fatal("outputs differ between 1 and 3 workers")
	}
}

// TestUnknownFormatIsAnInputError checks that format names are checked
// against the registry.
func TestUnknownFormatIsAnInputError(t *testing.T) {
	if _, err := output.ParseFormats("parquet,xlsx"); err == nil {
		t.Fatal("xlsx accepted")
	}
	got, err := output.ParseFormats("CSV, parquet,csv")
	if err != nil || len(got) != 2 || got[0] != "csv" || got[1] != "parquet" {
		t.Fatalf("ParseFormats = %v, %v", got, err)
	}
}

// TestTypedPeriodAndIntegerKeys checks the tables analysts join to their
// actuals: the period is a typed date (the first day of the period) beside
// its text label, and a key column that was integer in the input is
// integer in the output, null where a node aggregates over it.
func TestTypedPeriodAndIntegerKeys(t *testing.T) {
	cfg := fixtures.DefaultConfig("month")
	cfg.Regions, cfg.Stores, cfg.Categories, cfg.Years = 1, 5, 1, 3
	tb := fixtures.Generate(cfg).Table()
	// Number the stores 101, 102, … in an integer column.
	codes := map[string]int64{}
	ids := tableio.Column{Name: "store_id", Type: tableio.Int64}
	var cols []tableio.Column
	for _, c := range tb.Columns {
		if c.Name == fixtures.ColStore {
			for _, s := range c.Strings {
				if _, ok := codes[s]; !ok {
					codes[s] = int64(101 + len(codes))
				}
				ids.Ints = append(ids.Ints, codes[s])
			}
			c = ids
		}
		cols = append(cols, c)
	}
	dir := t.TempDir()
	input := filepath.Join(dir, "ids.parquet")
	if err := tableio.WriteTable(input, &tableio.Table{Columns: cols}, tableio.Parquet); err != nil {
		t.Fatal(err)
	}
	d, err := engine.Load(engine.Source{Path: input, Time: fixtures.DemoTimeColumn, Value: fixtures.DemoValueColumn,
		Chains: []hierarchy.Chain{{"store_id"}}})
	if err != nil {
		t.Fatal(err)
	}
	res, err := engine.Forecast(context.Background(), d, engine.Options{Model: families.Spec{Family: "drift"}, Horizon: 2})
	if err != nil {
		t.Fatal(err)
	}
	if _, err := output.Write(dir, res, []string{"parquet", "arrow"}); err != nil {
		t.Fatal(err)
	}
	for _, name := range []string{"forecasts.parquet", "forecasts.arrow", "residuals.parquet"} {
		back, err := tableio.ReadTable(filepath.Join(dir, name), "")
		if err != nil {
			t.Fatal(err)
		}
		col := map[string]tableio.Column{}
		for _, c := range back.Columns {
			col[c.Name] = c
		}
		id, start, label := col["store_id"], col["period_start"], col["period"]
		if id.Type != tableio.Int64 || start.Type != tableio.Date || label.Type != tableio.String {
			t.Fatalf("%s: store_id, period_start, period have types %v, %v, %v", name, id.Type, start.Type, label.Type)
		}
		sawNull, sawID := false, false
		for r := range label.Strings {
			p, err := tableio.ParsePeriod(label.Strings[r])
			if err != nil {
				t.Fatal(err)
			}
			if got := start.Ints[r]; got != p.Start().Unix()/86400 {
				t.Fatalf("%s row %d: period_start is day %d, period %s starts on day %d", name, r, got, label.Strings[r], p.Start().Unix()/86400)
			}
			if id.Null != nil && id.Null[r] {
				sawNull = true
			} else if id.Ints[r] >= 101 && id.Ints[r] <= 105 {
				sawID = true
			}
		}
		if !sawNull || !sawID {
			t.Errorf("%s: want store ids 101-105 and null for the total (saw id %v, null %v)", name, sawID, sawNull)
		}
	}
}

// tableSpy is a TableWriter that records the tables it was handed.
type tableSpy struct{ got *[]output.Table }

func (s tableSpy) Write(dir string, res *engine.Result) ([]string, error) {
	return s.WriteTables(dir, res, output.Tables(res))
}

func (s tableSpy) WriteTables(_ string, _ *engine.Result, tables []output.Table) ([]string, error) {
	*s.got = tables
	return nil, nil
}

// TestWritersShareOneCopyOfTheTables: the table writers of one set are
// handed the same tables, built once, and write the same files as alone.
func TestWritersShareOneCopyOfTheTables(t *testing.T) {
	var first, second []output.Table
	output.Register("spy-first", tableSpy{&first})
	output.Register("spy-second", tableSpy{&second})
	res, err := engine.Forecast(context.Background(), smallChain(t), engine.Options{Model: families.Spec{Family: "drift"}, Horizon: 3})
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if _, err := output.Write(filepath.Join(dir, "both"), res, []string{"spy-first", "csv", "spy-second"}); err != nil {
		t.Fatal(err)
	}
	if len(first) == 0 || len(first) != len(second) {
		t.Fatalf("spies got %d and %d tables", len(first), len(second))
	}
	for i := range first {
		if first[i].Table != second[i].Table {
			t.Errorf("table %s built twice", first[i].Name)
		}
	}
	if _, err := output.Write(filepath.Join(dir, "alone"), res, []string{"csv"}); err != nil {
		t.Fatal(err)
	}
	for _, tb := range first {
		a, errA := os.ReadFile(filepath.Join(dir, "both", tb.Name+".csv"))
		b, errB := os.ReadFile(filepath.Join(dir, "alone", tb.Name+".csv"))
		if errA != nil || errB != nil || !bytes.Equal(a, b) {
			t.Errorf("%s.csv differs when written beside other writers (%v, %v)", tb.Name, errA, errB)
		}
	}
}
