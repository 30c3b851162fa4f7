package tableio

import (
	"fmt"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/apache/arrow-go/v18/parquet"
	"github.com/apache/arrow-go/v18/parquet/compress"
	"github.com/apache/arrow-go/v18/parquet/pqarrow"
)

// Benchmark shape: 50 stores × 8 categories × 25 items = 10 000 series,
// written period-major (every series for a day, then the next day), so
// consecutive rows never share a key and the last-key cache cannot help.
const (
	benchStores     = 50
	benchCategories = 8
	benchItems      = 25
	benchSeries     = benchStores * benchCategories * benchItems
)

var benchOpt = ReadOptions{Time: "period", Value: "sales", Keys: []string{"store", "category", "item"}}

// writeBenchParquet writes n rows of invented sales in row groups of 1Mi
// rows: date32 period, text store, category and item, float64 sales. With
// dict false the text columns are stored plainly, not dictionary-encoded.
func writeBenchParquet(tb testing.TB, path string, n int, dict bool) {
	tb.Helper()
	mem := memory.DefaultAllocator
	sc := arrow.NewSchema([]arrow.Field{
		{Name: "period", Type: arrow.FixedWidthTypes.Date32},
		{Name: "store", Type: arrow.BinaryTypes.String},
		{Name: "category", Type: arrow.BinaryTypes.String},
		{Name: "item", Type: arrow.BinaryTypes.String},
		{Name: "sales", Type: arrow.PrimitiveTypes.Float64},
	}, nil)
	f, err := os.Create(path)
	if err != nil {
		tb.Fatal(err)
	}
	defer f.Close()
	props := parquet.NewWriterProperties(parquet.WithCompression(compress.Codecs.Snappy),
		parquet.WithMaxRowGroupLength(1<<20), parquet.WithDictionaryDefault(dict))
	fw, err := pqarrow.NewFileWriter(sc, f, props, pqarrow.DefaultWriterProps())
	if err != nil {
		tb.Fatal(err)
	}
	stores, cats, items := names("store-", benchStores), names("cat-", benchCategories), names("item-", benchItems)
	rng := rand.New(rand.NewPCG(1, 2))
	b := array.NewRecordBuilder(mem, sc)
	defer b.Release()
	const chunk = 1 << 18
	for row := 0; row < n; {
		for k := 0; k < chunk && row < n; k++ {
			s := row % benchSeries
			b.Field(0).(*array.Date32Builder).Append(arrow.Date32(19000 + row/benchSeries))
			b.Field(1).(*array.StringBuilder).Append(stores[s/(benchCategories*benchItems)])
			b.Field(2).(*array.StringBuilder).Append(cats[s/benchItems%benchCategories])
			b.Field(3).(*array.StringBuilder).Append(items[s%benchItems])
			b.Field(4).(*array.Float64Builder).Append(float64(rng.IntN(50000)) / 100)
			row++
		}
		rec := b.NewRecordBatch()
		if err := fw.Write(rec); err != nil {
			tb.Fatal(err)
		}
		rec.Release()
	}
	if err := fw.Close(); err != nil {
		tb.Fatal(err)
	}
}

func names(prefix string, n int) []string {
	out := make([]string, n)
	for i := range out {
		out[i] = prefix + strconv.Itoa(i)
	}
	return out
}

func BenchmarkReadParquet10M(b *testing.B) { benchReadParquet(b, true) }

// BenchmarkReadParquet10MPlain is the same read when the writer did not
// dictionary-encode the text columns, so the reader must hash every key.
func BenchmarkReadParquet10MPlain(b *testing.B) { benchReadParquet(b, false) }

func benchReadParquet(b *testing.B, dict bool) {
	const n = 10_000_000
	path := filepath.Join(b.TempDir(), "sales.parquet")
	writeBenchParquet(b, path, n, dict)
	timeReads(b, path, n)
}

func BenchmarkReadCSV1M(b *testing.B) {
	const n = 1_000_000
	path := filepath.Join(b.TempDir(), "sales.csv")
	f, err := os.Create(path)
	if err != nil {
		b.Fatal(err)
	}
	fmt.Fprintln(f, "period,store,category,item,sales")
	rng := rand.New(rand.NewPCG(1, 2))
	for row := 0; row < n; row++ {
		s := row % benchSeries
		fmt.Fprintf(f, "%s,store-%d,cat-%d,item-%d,%g\n", Period{Day, 19000 + row/benchSeries},
			s/(benchCategories*benchItems), s/benchItems%benchCategories, s%benchItems, float64(rng.IntN(50000))/100)
	}
	if err := f.Close(); err != nil {
		b.Fatal(err)
	}
	timeReads(b, path, n)
}

// timeReads times Read of the n-row file at path and reports ns per row.
func timeReads(b *testing.B, path string, n int) {
	b.ResetTimer()
	for b.Loop() {
		r, err := Read(path, benchOpt)
		if err != nil {
			b.Fatal(err)
		}
		if r.N != n {
			b.Fatalf("read %d rows, want %d", r.N, n)
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/float64(n), "ns/row")
}
