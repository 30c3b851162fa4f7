package engine

import (
	"os"
	"path/filepath"
	"testing"

	"trueup/fixtures"
	"trueup/tableio"
)

// BenchmarkReadAndAggregate reads an item-level sales table and sums it to
// store × category series and every aggregate: the ingest part of a run.
// bench/ingest/run.sh points TRUEUP_INGEST_FILE at a generated 10-million-row
// Parquet file; without it a 1-million-row table is generated here.
func BenchmarkReadAndAggregate(b *testing.B) {
	path := os.Getenv("TRUEUP_INGEST_FILE")
	if path == "" {
		cfg := fixtures.DefaultConfig("month")
		cfg.Items = 30 // 28 stores × 8 categories × 30 items × 72 months ≈ 0.5M rows
		ds := fixtures.Generate(cfg)
		path = filepath.Join(b.TempDir(), "items.parquet")
		if err := tableio.WriteTable(path, ds.Table(), tableio.Parquet); err != nil {
			b.Fatal(err)
		}
	}
	src := Source{Path: path, Time: fixtures.DemoTimeColumn, Value: fixtures.DemoValueColumn,
		Chains: fixtures.DemoChains(), SumDuplicates: true}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		d, err := Load(src)
		if err != nil {
			b.Fatal(err)
		}
		d.Structure.S.Aggregate(d.Bottom)
		b.ReportMetric(float64(d.Input.Rows), "rows")
	}
}
