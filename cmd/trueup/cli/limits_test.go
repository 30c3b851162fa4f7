package cli

import (
	"errors"
	"fmt"
	"os"
	"path/filepath"
	"runtime"
	"strings"
	"testing"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/apache/arrow-go/v18/parquet"
	"github.com/apache/arrow-go/v18/parquet/compress"
	"github.com/apache/arrow-go/v18/parquet/pqarrow"
	"github.com/spf13/cobra"

	"trueup/engine"
	"trueup/internal/crash"
)

// TestSmallInputsBeyondTheMemoryExit2 gives the run a budget of 64 MB
// (TRUEUP_MEMORY) and small inputs that ask for far more: 16 crossed
// chains (65,536 levels), a chain of 2,000 key columns, one store's
// rows typed in the year 2204 instead of 2024 (a span of 65,872 days,
// 2024-01-01 to 2204-05-08 as Python 3's datetime counts them, whose
// T × T Gram matrix alone is 65,872² × 8 bytes = 34.7 GB), a Parquet file
// whose 16 kilobytes declare ten million rows, and a CSV file
// of more lines than the budget holds. Each exits 2 before allocating,
// saying what was asked and what it would take.
func TestSmallInputsBeyondTheMemoryExit2(t *testing.T) {
	t.Setenv("TRUEUP_MEMORY", "64MB")
	dir := t.TempDir()
	months := func(b *strings.Builder, key func(s int) string, series int) {
		for s := 0; s < series; s++ {
			for m := 0; m < 24; m++ {
				fmt.Fprintf(b, "%d-%02d,%s,%d\n", 2022+m/12, m%12+1, key(s), 10+s+m%3)
			}
		}
	}
	// 16 crossed chains of one column each, 20 series.
	var cross strings.Builder
	var crossCols, crossNest []string
	for i := 0; i < 16; i++ {
		crossCols = append(crossCols, fmt.Sprintf("a%d", i))
		crossNest = append(crossNest, "--hierarchy", fmt.Sprintf("a%d", i))
	}
	cross.WriteString("period," + strings.Join(crossCols, ",") + ",sales\n")
	months(&cross, func(s int) string {
		var k []string
		for i := 0; i < 16; i++ {
			k = append(k, fmt.Sprintf("s%d-%d", s, i))
		}
		return strings.Join(k, ",")
	}, 20)
	// One chain of 2,000 key columns, 4 series.
	var wide strings.Builder
	var wideCols []string
	for i := 0; i < 2000; i++ {
		wideCols = append(wideCols, fmt.Sprintf("c%d", i))
	}
	wide.WriteString("period," + strings.Join(wideCols, ",") + ",sales\n")
	months(&wide, func(s int) string {
		var k []string
		for i := 0; i < 2000; i++ {
			k = append(k, fmt.Sprintf("s%dk%d", s, i))
		}
		return strings.Join(k, ",")
	}, 4)
	// Daily sales of three stores; store C's rows typed in 2204.
	var span strings.Builder
	span.WriteString("day,store,sales\n")
	for d := 0; d < 120; d++ {
		for _, st := range []string{"A", "B", "C"} {
			year := 2024
			if st == "C" {
				year = 2204
			}
			day := 1 + d%28
			fmt.Fprintf(&span, "%d-%02d-%02d,%s,%d\n", year, 1+d/28, day, st, 10+d%7)
		}
	}
	// A CSV of 3 million short lines (one repeated row).
	lines := strings.Repeat("2024-01,A,1\n", 3_000_000)

	cases := []struct {
		name string
		args []string
		want []string
	}{
		{"crossed chains", append([]string{"inspect", "--input", writeFile(t, dir, "cross.csv", cross.String())}, crossNest...),
			[]string{"--hierarchy: ", "16 chains (16 key columns, 65536 levels) over 20 bottom series would need about", "TRUEUP_MEMORY"}},
		{"2,000-column chain", []string{"inspect", "--input", writeFile(t, dir, "wide.csv", wide.String()), "--hierarchy", strings.Join(wideCols, ",")},
			[]string{"1 chains (2000 key columns, 2001 levels) over 4 bottom series"}},
		{"mistyped year", []string{"forecast", "--quiet", "--input", writeFile(t, dir, "span.csv", span.String()), "--time", "day", "--hierarchy", "store", "--out", filepath.Join(dir, "out")},
			[]string{"65872 history periods (2024-01-01 to 2204-05-08)", "would need at least 34.7 GB"}},
		{"Parquet declaring ten million rows", []string{"inspect", "--input", manyRowsParquet(t, dir, 10_000_000), "--hierarchy", "store"},
			[]string{"reading the 10000000 rows the file declares would need at least 280.0 MB"}},
		{"CSV of three million lines", []string{"inspect", "--input", writeFile(t, dir, "lines.csv", "period,store,sales\n"+lines), "--hierarchy", "store"},
			[]string{"reading the 3000001 rows of the file would need at least 84.0 MB"}},
	}
	for _, c := range cases {
		stderr := captureStderr(t, func() {
			if code := run(c.args); code != exitInput {
				t.Errorf("%s: exit %d, want %d", c.name, code, exitInput)
			}
		})
		for _, w := range c.want {
			if !strings.Contains(stderr, w) {
				t.Errorf("%s: message %q does not say %q", c.name, stderr, w)
			}
		}
	}
	t.Setenv("TRUEUP_MEMORY", "lots")
	stderr := captureStderr(t, func() {
		if code := run([]string{"inspect", "--input", writeFile(t, dir, "ok.csv", "period,store,sales\n2024-01,A,1\n"), "--hierarchy", "store"}); code != exitInput {
			t.Errorf("TRUEUP_MEMORY=lots: exit %d, want %d", code, exitInput)
		}
	})
	if !strings.Contains(stderr, `TRUEUP_MEMORY="lots"`) {
		t.Errorf("TRUEUP_MEMORY=lots: %q", stderr)
	}
}

// manyRowsParquet writes a valid Parquet file of n identical rows
// (period, store, sales) in row groups of 1 Mi rows: dictionary and
// run-length encoding make it about 16 kilobytes.
func manyRowsParquet(t *testing.T, dir string, n int) string {
	t.Helper()
	path := filepath.Join(dir, "many.parquet")
	sc := arrow.NewSchema([]arrow.Field{
		{Name: "period", Type: arrow.BinaryTypes.String},
		{Name: "store", Type: arrow.BinaryTypes.String},
		{Name: "sales", Type: arrow.PrimitiveTypes.Float64},
	}, nil)
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	props := parquet.NewWriterProperties(parquet.WithCompression(compress.Codecs.Snappy), parquet.WithMaxRowGroupLength(1<<20))
	fw, err := pqarrow.NewFileWriter(sc, f, props, pqarrow.DefaultWriterProps())
	if err != nil {
		t.Fatal(err)
	}
	b := array.NewRecordBuilder(memory.DefaultAllocator, sc)
	defer b.Release()
	const chunk = 1 << 20
	for k := 0; k < chunk; k++ {
		b.Field(0).(*array.StringBuilder).Append("2024-01")
		b.Field(1).(*array.StringBuilder).Append("A")
		b.Field(2).(*array.Float64Builder).Append(1)
	}
	rec := b.NewRecordBatch()
	defer rec.Release()
	for done := 0; done < n; done += chunk {
		r := rec
		if n-done < chunk {
			r = rec.NewSlice(0, int64(n-done))
		}
		if err := fw.Write(r); err != nil {
			t.Fatal(err)
		}
	}
	if err := fw.Close(); err != nil {
		t.Fatal(err)
	}
	return path
}

// TestWorkersAreCappedAtTheJobs fits three jobs with a million workers
// asked for: no more goroutines run than there are jobs (a million idle
// goroutines would take gigabytes), and the command line accepts the
// value.
func TestWorkersAreCappedAtTheJobs(t *testing.T) {
	series := []float64{10, 12, 11, 13, 12, 14, 13, 15, 14, 16, 15, 17}
	jobs := make([]engine.FitJob, 3)
	for i := range jobs {
		jobs[i] = engine.FitJob{Node: i, Series: series, Period: 1, Horizon: 2}
		jobs[i].Model.Family = "drift"
	}
	before := runtime.NumGoroutine()
	most := 0
	_, err := engine.Local{Workers: 1_000_000}.Fit(t.Context(), jobs, func(done, total int) {
		most = max(most, runtime.NumGoroutine())
	})
	if err != nil {
		t.Fatal(err)
	}
	if most > before+len(jobs) {
		t.Errorf("%d goroutines ran for %d jobs (%d before)", most, len(jobs), before)
	}
	path := writeFile(t, t.TempDir(), "s.csv", "period,sales\n2024-01,1\n2024-02,2\n2024-03,3\n2024-04,4\n")
	if out, err := runCapture("fit", "--input", path, "--workers", "1000000", "--family", "drift", "--horizon", "2"); err != nil || !strings.Contains(out, "drift") {
		t.Errorf("fit --workers 1000000: %v\n%s", err, out)
	}
}

// TestCrashesExit1WithOneLine: a panic in the command's goroutine, one
// carried from a worker goroutine (crash.Group) and one returned as an
// error (crash.Catch) all exit 1, never 2 (an input error's status), with
// a one-line message and no goroutine dump; TRUEUP_DEBUG=1 adds the stack.
func TestCrashesExit1WithOneLine(t *testing.T) {
	bugs := map[string]func() error{
		"panic": func() error { panic("index out of range") },
		"worker panic": func() error {
			var g crash.Group
			g.Go(func() { panic("index out of range") })
			g.Wait()
			return nil
		},
		"caught panic": func() (err error) {
			defer crash.Catch(&err)
			panic("index out of range")
		},
		"wrapped": func() error {
			err := func() (err error) { defer crash.Catch(&err); panic("index out of range") }()
			return fmt.Errorf("fit: %w", err)
		},
	}
	for name, bug := range bugs {
		root := newRootCmd()
		root.AddCommand(&cobra.Command{Use: "bug", RunE: func(*cobra.Command, []string) error { return bug() }})
		var code int
		stderr := captureStderr(t, func() { code = execute(root, []string{"bug"}) })
		if code != exitOther {
			t.Errorf("%s: exit %d, want %d", name, code, exitOther)
		}
		if strings.Count(stderr, "\n") != 1 || !strings.Contains(stderr, "internal error") || !strings.Contains(stderr, "index out of range") || strings.Contains(stderr, "goroutine ") {
			t.Errorf("%s: message %q, want one line naming the internal error", name, stderr)
		}
	}
	t.Setenv("TRUEUP_DEBUG", "1")
	root := newRootCmd()
	root.AddCommand(&cobra.Command{Use: "bug", RunE: func(*cobra.Command, []string) error { panic(errors.New("boom")) }})
	stderr := captureStderr(t, func() { execute(root, []string{"bug"}) })
	if !strings.Contains(stderr, "limits_test.go") {
		t.Errorf("TRUEUP_DEBUG=1: no stack in %q", stderr)
	}
}
