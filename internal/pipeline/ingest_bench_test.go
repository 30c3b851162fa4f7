package pipeline

import (
	"os"
	"path/filepath"
	"testing"

	"trueup/fixtures"
	"trueup/hierarchy"
	tableio "trueup/io"
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
	chains, err := hierarchy.ParseNest(fixtures.DemoNest)
	if err != nil {
		b.Fatal(err)
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		rows, err := tableio.Read(path, tableio.ReadOptions{Time: fixtures.DemoTimeColumn, Value: fixtures.DemoValueColumn, Keys: fixtures.DemoKeys})
		if err != nil {
			b.Fatal(err)
		}
		pn, err := BuildPanel(rows, PanelOptions{SumDuplicates: true})
		if err != nil {
			b.Fatal(err)
		}
		st, err := hierarchy.Build(chains, pn.Keys)
		if err != nil {
			b.Fatal(err)
		}
		bottom := make([][]float64, len(pn.Keys))
		for s, key := range pn.Keys {
			j, _ := st.BottomIndex(key)
			bottom[j] = pn.Values[s]
		}
		st.S.Aggregate(bottom)
		b.ReportMetric(float64(rows.N), "rows")
	}
}
