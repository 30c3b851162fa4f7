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
	"trueup/tableio"
)

// smallChain writes a small demo-like chain (2 regions, 5 stores, 2
// categories, 4 years of months) and loads it.
func smallChain(t *testing.T) *engine.Data {
	t.Helper()
	cfg := fixtures.DefaultConfig("month")
	cfg.Regions, cfg.Stores, cfg.Categories, cfg.Years = 2, 5, 2, 4
	input := filepath.Join(t.TempDir(), "small.parquet")
	if err := tableio.WriteTable(input, fixtures.Generate(cfg).Table(), tableio.Parquet); err != nil {
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
		res, err := engine.Forecast(context.Background(), d, engine.Options{Horizon: 6, Fitter: engine.Local{Workers: workers}})
		if err != nil {
			t.Fatal(err)
		}
		out := filepath.Join(t.TempDir(), strconv.Itoa(workers))
		if _, err := output.Write(out, res, []string{"parquet", "csv", "arrow"}); err != nil {
			t.Fatal(err)
		}
		var all []byte
		for _, name := range []string{"forecasts", "models", "residuals"} {
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
