package engine

import (
	"bytes"
	"os"
	"path/filepath"
	"testing"

	"trueup/fixtures"
	"trueup/tableio"
)

// TestSameBytesWhateverTheWorkers checks the determinism promise: the same
// input and options give byte-identical forecast and model tables whatever
// the number of workers.
func TestSameBytesWhateverTheWorkers(t *testing.T) {
	cfg := fixtures.DefaultConfig("month")
	cfg.Regions, cfg.Stores, cfg.Categories, cfg.Years = 2, 5, 2, 4
	dir := t.TempDir()
	input := filepath.Join(dir, "small.parquet")
	if err := tableio.WriteTable(input, fixtures.Generate(cfg).Table(), tableio.Parquet); err != nil {
		t.Fatal(err)
	}
	var outputs [][]byte
	for _, workers := range []int{1, 3} {
		out := filepath.Join(dir, "out", string(rune('0'+workers)))
		_, err := Run(Config{Source: Source{Input: input, Time: fixtures.DemoTimeColumn, Value: fixtures.DemoValueColumn,
			Nest: fixtures.DemoNest}, Horizon: 6, Workers: workers, OutDir: out,
			Formats: []tableio.Format{tableio.Parquet, tableio.CSV}})
		if err != nil {
			t.Fatal(err)
		}
		var all []byte
		for _, f := range []string{"forecasts.parquet", "models.parquet", "forecasts.csv", "models.csv"} {
			b, err := os.ReadFile(filepath.Join(out, f))
			if err != nil {
				t.Fatal(err)
			}
			all = append(all, b...)
		}
		outputs = append(outputs, all)
	}
	if !bytes.Equal(outputs[0], outputs[1]) {
		t.Fatal("outputs differ between 1 and 3 workers")
	}
}
