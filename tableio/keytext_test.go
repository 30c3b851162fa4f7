package tableio

import (
	"fmt"
	"path/filepath"
	"strings"
	"testing"

	"github.com/apache/arrow-go/v18/arrow"

	"trueup/inputerr"
)

func TestCheckKeyText(t *testing.T) {
	for _, ok := range []string{"Harbour Street", "Café Nord", "N/01", "a,b", "=SUM(A1)", "北区", "\uFFFD"} {
		if err := CheckKeyText(ok); err != nil {
			t.Errorf("%q refused: %v", ok, err)
		}
	}
	for _, c := range []struct{ key, shown string }{
		{"N\x0001", `"N\x0001"`},
		{"a\tb", `"a\tb"`},
		{"\x1b[31mred", `"\x1b[31mred"`},
		{"x\x7f", `"x\x7f"`},
		{"x\u0085", `"x\u0085"`},
		{"line\nbreak", `"line\nbreak"`},
		{"Caf\xe9", `"Caf\xe9"`}, // Latin-1, not UTF-8
		{"\x9b2J", `"\x9b2J"`},   // an 8-bit control sequence introducer
	} {
		err := CheckKeyText(c.key)
		if err == nil || !strings.Contains(err.Error(), c.shown) {
			t.Errorf("%q: got %v, want a refusal showing %s", c.key, err, c.shown)
		}
	}
}

// TestReadRefusesControlCharactersInKeys: a key with a control character
// is refused wherever it sits in the file and whatever the format, with
// the file, column and position named and the key shown escaped. Before,
// CSV looked for NUL only in the first 64 KiB and Parquet and Arrow not
// at all, so "N\x00" and "N" could become different series that a joined
// identity then mixed up.
func TestReadRefusesControlCharactersInKeys(t *testing.T) {
	const bad = "N\x0001"
	const rowsBefore = 4000 // puts the bad key beyond 64 KiB of CSV text
	keys := make([]string, rowsBefore+2)
	periods := make([]string, len(keys))
	values := make([]float64, len(keys))
	var csv strings.Builder
	csv.WriteString("period,store,sales\n")
	for i := range keys {
		keys[i] = fmt.Sprintf("Store %04d", i)
		if i == rowsBefore {
			keys[i] = bad
		}
		periods[i] = "2024-01"
		values[i] = 1
		fmt.Fprintf(&csv, "%s,%s,%g\n", periods[i], keys[i], values[i])
	}
	if strings.Index(csv.String(), bad) < 1<<16 {
		t.Fatal("the bad key is not beyond 64 KiB")
	}
	table := func(store arrow.Array) arrow.RecordBatch {
		return batch(col{"period", strs(periods...)}, col{"store", store}, col{"sales", floats(values...)})
	}
	opt := ReadOptions{Time: "period", Value: "sales", Keys: []string{"store"}}
	for _, c := range []struct {
		name  string
		write func(t *testing.T) string
		where string
	}{
		{"csv", func(t *testing.T) string { return writeFile(t, "s.csv", csv.String()) }, fmt.Sprintf("line %d", rowsBefore+2)},
		{"parquet", func(t *testing.T) string {
			p := filepath.Join(t.TempDir(), "s.parquet")
			writeParquetBatches(t, p, 1000, table(strs(keys...)))
			return p
		}, fmt.Sprintf("row %d", rowsBefore+1)},
		{"parquet dictionary", func(t *testing.T) string {
			p := filepath.Join(t.TempDir(), "s.parquet")
			writeParquetBatches(t, p, 1000, table(dictStrs(keys...)))
			return p
		}, fmt.Sprintf("row %d", rowsBefore+1)},
		{"arrow", func(t *testing.T) string {
			p := filepath.Join(t.TempDir(), "s.arrow")
			writeIPCBatches(t, p, table(strs(keys...)))
			return p
		}, fmt.Sprintf("row %d", rowsBefore+1)},
		{"arrow dictionary", func(t *testing.T) string {
			p := filepath.Join(t.TempDir(), "s.arrow")
			writeIPCBatches(t, p, table(dictStrs(keys...)))
			return p
		}, fmt.Sprintf("row %d", rowsBefore+1)},
	} {
		t.Run(c.name, func(t *testing.T) {
			path := c.write(t)
			_, err := Read(path, opt)
			if err == nil || !inputerr.Is(err) {
				t.Fatalf("got %v, want an input error", err)
			}
			for _, want := range []string{path, c.where, `column "store"`, `"N\x0001"`, "U+0000"} {
				if !strings.Contains(err.Error(), want) {
					t.Errorf("%v\ndoes not say %s", err, want)
				}
			}
		})
	}
}
