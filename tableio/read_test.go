package tableio

import (
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/arrow/decimal128"
	"github.com/apache/arrow-go/v18/arrow/ipc"
	"github.com/apache/arrow-go/v18/arrow/memory"
	"github.com/apache/arrow-go/v18/parquet"
	"github.com/apache/arrow-go/v18/parquet/pqarrow"

	"trueup/inputerr"
)

var mem = memory.DefaultAllocator

func writeFile(t *testing.T, name, content string) string {
	t.Helper()
	path := filepath.Join(t.TempDir(), name)
	if err := os.WriteFile(path, []byte(content), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

// col is one test column: a name and its Arrow array.
type col struct {
	name string
	arr  arrow.Array
}

func batch(cols ...col) arrow.RecordBatch {
	fields := make([]arrow.Field, len(cols))
	arrs := make([]arrow.Array, len(cols))
	for i, c := range cols {
		fields[i] = arrow.Field{Name: c.name, Type: c.arr.DataType(), Nullable: true}
		arrs[i] = c.arr
	}
	return array.NewRecordBatch(arrow.NewSchema(fields, nil), arrs, int64(arrs[0].Len()))
}

// writeParquetBatches writes batches to a Parquet file with row groups of
// at most rowGroup rows.
func writeParquetBatches(t *testing.T, path string, rowGroup int64, recs ...arrow.RecordBatch) {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	props := parquet.NewWriterProperties(parquet.WithMaxRowGroupLength(rowGroup))
	fw, err := pqarrow.NewFileWriter(recs[0].Schema(), f, props, pqarrow.NewArrowWriterProperties(pqarrow.WithStoreSchema()))
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range recs {
		if err := fw.Write(r); err != nil {
			t.Fatal(err)
		}
	}
	if err := fw.Close(); err != nil {
		t.Fatal(err)
	}
}

func writeIPCBatches(t *testing.T, path string, recs ...arrow.RecordBatch) {
	t.Helper()
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	defer f.Close()
	w, err := ipc.NewFileWriter(f, ipc.WithSchema(recs[0].Schema()))
	if err != nil {
		t.Fatal(err)
	}
	for _, r := range recs {
		if err := w.Write(r); err != nil {
			t.Fatal(err)
		}
	}
	if err := w.Close(); err != nil {
		t.Fatal(err)
	}
}

func strs(v ...string) arrow.Array {
	b := array.NewStringBuilder(mem)
	for _, s := range v {
		if s == "<null>" {
			b.AppendNull()
		} else {
			b.Append(s)
		}
	}
	return b.NewArray()
}

func dictStrs(v ...string) arrow.Array {
	b := array.NewDictionaryBuilder(mem, &arrow.DictionaryType{IndexType: arrow.PrimitiveTypes.Int16, ValueType: arrow.BinaryTypes.String}).(*array.BinaryDictionaryBuilder)
	for _, s := range v {
		if s == "<null>" {
			b.AppendNull()
		} else if err := b.AppendString(s); err != nil {
			panic(err)
		}
	}
	return b.NewArray()
}

func floats(v ...float64) arrow.Array {
	b := array.NewFloat64Builder(mem)
	b.AppendValues(v, nil)
	return b.NewArray()
}

func periodsOf(ps []Period) []string {
	out := make([]string, len(ps))
	for i, p := range ps {
		out[i] = p.String()
	}
	return out
}

// keysOf decodes key column k of r back to text, row by row.
func keysOf(r *Rows, k int) []string {
	out := make([]string, r.N)
	for i, c := range r.KeyCodes[k] {
		out[i] = r.KeyDict[k][c]
	}
	return out
}

func TestReadCSV(t *testing.T) {
	content := "period,store,category,sales,note\n" +
		"2024-01,S2,Food,10,x\n" +
		"2024-01,\"S,1\",Food, 5.5 ,\"multi\nline\"\n" +
		"2024-02,S2,Toys,-3e2,\n" +
		"2024-02,\"S,1\",Food,0,\n"
	path := writeFile(t, "sales.csv", content)
	r, err := Read(path, ReadOptions{Time: "period", Value: "sales", Keys: []string{"store", "category"}})
	if err != nil {
		t.Fatal(err)
	}
	if r.N != 4 || !reflect.DeepEqual(r.Columns, []string{"period", "store", "category", "sales", "note"}) {
		t.Fatalf("N=%d columns %q", r.N, r.Columns)
	}
	if got := periodsOf(r.Periods); !reflect.DeepEqual(got, []string{"2024-01", "2024-01", "2024-02", "2024-02"}) || r.Periods[0].Grain != Month {
		t.Errorf("periods %v", got)
	}
	if !reflect.DeepEqual(r.Values, []float64{10, 5.5, -300, 0}) {
		t.Errorf("values %v", r.Values)
	}
	// Codes in order of first appearance.
	if !reflect.DeepEqual(r.KeyCodes[0], []int32{0, 1, 0, 1}) || !reflect.DeepEqual(r.KeyDict[0], []string{"S2", "S,1"}) {
		t.Errorf("store codes %v dict %q", r.KeyCodes[0], r.KeyDict[0])
	}
	if !reflect.DeepEqual(r.KeyCodes[1], []int32{0, 0, 1, 0}) || !reflect.DeepEqual(r.KeyDict[1], []string{"Food", "Toys"}) {
		t.Errorf("category codes %v dict %q", r.KeyCodes[1], r.KeyDict[1])
	}
	if !reflect.DeepEqual(r.KeyNames, []string{"store", "category"}) || r.Path != path {
		t.Errorf("key names %q path %q", r.KeyNames, r.Path)
	}
	// Reference digest of the exact bytes above, from GNU coreutils
	// sha256sum 9.1: printf '%s' "$content" | sha256sum
	const want = "552c17c2182c1fa154a2f629ae9563a26ab399726f847de9c61fa0584da1f741"
	if r.SHA256 != want {
		t.Errorf("SHA256 %s, want %s", r.SHA256, want)
	}
}

func TestReadCSVByteOrderMarkCRLFAndFormatOverride(t *testing.T) {
	path := writeFile(t, "export.txt", "\xef\xbb\xbfday,v\r\n2024-03-31,1\r\n2024-04-01,2\r\n")
	r, err := Read(path, ReadOptions{Format: CSV, Time: "day", Value: "v"})
	if err != nil {
		t.Fatal(err)
	}
	if got := periodsOf(r.Periods); !reflect.DeepEqual(got, []string{"2024-03-31", "2024-04-01"}) || r.Periods[1].Index != r.Periods[0].Index+1 {
		t.Errorf("periods %v", got)
	}
	if len(r.KeyCodes) != 0 {
		t.Errorf("key columns %v, want none", r.KeyNames)
	}
}

func TestReadParquetTypes(t *testing.T) {
	// 2024-01-01 is day 19723 after 1970-01-01 (19723 = 54 years × 365 + 13
	// leap days). Timestamps are 01:00 on the first two days and one
	// second before 1970-01-01 on the third, which must floor to 1969-12-31.
	day := []int64{19723, 19724, -1}
	stamps := func(unit arrow.TimeUnit, perSec int64, tz string) arrow.Array {
		b := array.NewTimestampBuilder(mem, &arrow.TimestampType{Unit: unit, TimeZone: tz})
		for _, sec := range []int64{day[0]*86400 + 3600, day[1]*86400 + 3600, -1} {
			b.Append(arrow.Timestamp(sec * perSec))
		}
		return b.NewArray()
	}
	date32 := array.NewDate32Builder(mem)
	date64 := array.NewDate64Builder(mem)
	for _, d := range day {
		date32.Append(arrow.Date32(d))
		date64.Append(arrow.Date64(d * 86400000))
	}
	days := []string{"2024-01-01", "2024-01-02", "1969-12-31"}
	cases := []struct {
		name string
		arr  arrow.Array
		want []string
	}{
		{"date32", date32.NewArray(), days},
		{"date64", date64.NewArray(), days},
		{"timestamp[s]", stamps(arrow.Second, 1, ""), days},
		{"timestamp[ms]", stamps(arrow.Millisecond, 1e3, "UTC"), days},
		{"timestamp[us]", stamps(arrow.Microsecond, 1e6, ""), days},
		{"timestamp[ns]", stamps(arrow.Nanosecond, 1e9, ""), days},
		// 01:00 UTC is 20:00 the day before at UTC-05:00.
		{"timestamp[ms, -05:00]", stamps(arrow.Millisecond, 1e3, "-05:00"), []string{"2023-12-31", "2024-01-01", "1969-12-31"}},
		{"text", strs("2024-W01", "2024-W02", "2023-W52"), []string{"2024-W01", "2024-W02", "2023-W52"}},
		{"dictionary text", dictStrs("2024-Q1", "2024-Q1", "2023-Q4"), []string{"2024-Q1", "2024-Q1", "2023-Q4"}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			for _, f := range []Format{Parquet, Arrow} {
				path := filepath.Join(t.TempDir(), "s"+f.Ext())
				rec := batch(col{"when", c.arr}, col{"store", strs("A", "B", "A")}, col{"v", floats(1, 2, 3)})
				if f == Parquet {
					writeParquetBatches(t, path, 1<<20, rec)
				} else {
					writeIPCBatches(t, path, rec)
				}
				r, err := Read(path, ReadOptions{Time: "when", Value: "v", Keys: []string{"store"}})
				if err != nil {
					t.Fatalf("%s: %v", f, err)
				}
				if got := periodsOf(r.Periods); !reflect.DeepEqual(got, c.want) {
					t.Errorf("%s: periods %v, want %v", f, got, c.want)
				}
			}
		})
	}
}

func TestReadParquetValueAndKeyTypes(t *testing.T) {
	values := []struct {
		arr  func() arrow.Array
		want []float64
	}{
		{func() arrow.Array {
			b := array.NewInt32Builder(mem)
			b.AppendValues([]int32{-7, 0, 2147483647}, nil)
			return b.NewArray()
		}, []float64{-7, 0, 2147483647}},
		{func() arrow.Array {
			b := array.NewUint16Builder(mem)
			b.AppendValues([]uint16{1, 2, 65535}, nil)
			return b.NewArray()
		}, []float64{1, 2, 65535}},
		{func() arrow.Array {
			b := array.NewFloat32Builder(mem)
			b.AppendValues([]float32{0.5, -1.25, 3}, nil)
			return b.NewArray()
		}, []float64{0.5, -1.25, 3}},
		{func() arrow.Array {
			b := array.NewDecimal128Builder(mem, &arrow.Decimal128Type{Precision: 10, Scale: 2})
			for _, v := range []int64{1234, -5, 0} {
				b.Append(decimal128.FromI64(v))
			}
			return b.NewArray()
		}, []float64{12.34, -0.05, 0}},
	}
	intKeys := func() arrow.Array {
		b := array.NewInt64Builder(mem)
		b.AppendValues([]int64{-40, 7, -40}, nil)
		return b.NewArray()
	}
	largeKeys := func() arrow.Array {
		b := array.NewLargeStringBuilder(mem)
		b.AppendValues([]string{"x", "y", "y"}, nil)
		return b.NewArray()
	}
	for _, v := range values {
		for _, f := range []Format{Parquet, Arrow} {
			path := filepath.Join(t.TempDir(), "s"+f.Ext())
			va := v.arr()
			rec := batch(col{"p", strs("2024-01", "2024-02", "2024-03")}, col{"store", intKeys()},
				col{"region", largeKeys()}, col{"cat", dictStrs("q", "p", "q")}, col{"v", va})
			if f == Parquet {
				writeParquetBatches(t, path, 1<<20, rec)
			} else {
				writeIPCBatches(t, path, rec)
			}
			r, err := Read(path, ReadOptions{Time: "p", Value: "v", Keys: []string{"store", "region", "cat"}})
			if err != nil {
				t.Fatalf("%s %s: %v", f, va.DataType(), err)
			}
			for i := range v.want {
				if math.Abs(r.Values[i]-v.want[i]) > 1e-12 {
					t.Errorf("%s %s: values %v, want %v", f, va.DataType(), r.Values, v.want)
					break
				}
			}
			if got := keysOf(r, 0); !reflect.DeepEqual(got, []string{"-40", "7", "-40"}) || !reflect.DeepEqual(r.KeyCodes[0], []int32{0, 1, 0}) {
				t.Errorf("%s: integer keys %q codes %v", f, got, r.KeyCodes[0])
			}
			if got := keysOf(r, 1); !reflect.DeepEqual(got, []string{"x", "y", "y"}) {
				t.Errorf("%s: large string keys %q", f, got)
			}
			if got := keysOf(r, 2); !reflect.DeepEqual(got, []string{"q", "p", "q"}) || !reflect.DeepEqual(r.KeyDict[2], []string{"q", "p"}) {
				t.Errorf("%s: dictionary keys %q dict %q", f, got, r.KeyDict[2])
			}
		}
	}
}

// Many row groups, each with its own Parquet dictionary, read in batches
// that do not line up with them: the codes must still follow first
// appearance over the whole file and decode to the written keys.
func TestReadParquetManyRowGroups(t *testing.T) {
	const n = 150_000
	rng := rand.New(rand.NewPCG(3, 4))
	keys := make([]string, n)
	days := array.NewDate32Builder(mem)
	vals := make([]float64, n)
	for i := range keys {
		// Each third of the file draws from a different, overlapping key range.
		keys[i] = fmt.Sprintf("k%03d", i/(n/3)*40+rng.IntN(60))
		days.Append(arrow.Date32(20000 + i/1000))
		vals[i] = float64(i)
	}
	path := filepath.Join(t.TempDir(), "big.parquet")
	writeParquetBatches(t, path, 40_000, batch(col{"d", days.NewArray()}, col{"k", strs(keys...)}, col{"v", floats(vals...)}))
	r, err := Read(path, ReadOptions{Time: "d", Value: "v", Keys: []string{"k"}})
	if err != nil {
		t.Fatal(err)
	}
	if r.N != n || !reflect.DeepEqual(keysOf(r, 0), keys) || !reflect.DeepEqual(r.Values, vals) {
		t.Fatalf("rows differ from what was written (N=%d)", r.N)
	}
	seen := map[string]bool{}
	var order []string
	for _, k := range keys {
		if !seen[k] {
			seen[k] = true
			order = append(order, k)
		}
	}
	if !reflect.DeepEqual(r.KeyDict[0], order) {
		t.Errorf("dictionary not in order of first appearance")
	}
	if r.Periods[n-1] != (Period{Day, 20000 + (n-1)/1000}) {
		t.Errorf("last period %v", r.Periods[n-1])
	}
}

func TestReadBadInput(t *testing.T) {
	opt := ReadOptions{Time: "period", Value: "sales", Keys: []string{"store"}}
	parquetWith := func(t *testing.T, period, store, sales arrow.Array) string {
		path := filepath.Join(t.TempDir(), "x.parquet")
		writeParquetBatches(t, path, 1<<20, batch(col{"period", period}, col{"store", store}, col{"sales", sales}))
		return path
	}
	cases := []struct {
		name string
		path func(t *testing.T) string
		opt  ReadOptions
		want []string
	}{
		{"missing file", func(t *testing.T) string { return filepath.Join(t.TempDir(), "nope.csv") }, opt,
			[]string{"cannot read", "nope.csv", "no such file"}},
		{"garbage parquet", func(t *testing.T) string { return writeFile(t, "g.parquet", "\x00\x01 this is not parquet \xff\xfe") }, opt,
			[]string{"g.parquet", "not a valid Parquet file"}},
		{"csv bytes named parquet", func(t *testing.T) string { return writeFile(t, "c.parquet", "period,store,sales\n2024-01,A,1\n") }, opt,
			[]string{"not a valid Parquet file"}},
		{"garbage arrow", func(t *testing.T) string { return writeFile(t, "g.arrow", "ARROW1 but not really") }, opt,
			[]string{"not a valid Arrow IPC file"}},
		{"binary csv", func(t *testing.T) string { return writeFile(t, "b.csv", "PAR1\x00\x00\x15\x04") }, opt,
			[]string{"not a CSV text file"}},
		{"bad csv quoting", func(t *testing.T) string { return writeFile(t, "q.csv", "period,store,sales\n2024-01,\"A,1\n") }, opt,
			[]string{"not a valid CSV file", "line 2"}},
		{"ragged csv", func(t *testing.T) string { return writeFile(t, "r.csv", "period,store,sales\n2024-01,A,1,9\n") }, opt,
			[]string{"not a valid CSV file", "line 2", "wrong number of fields"}},
		{"unknown extension", func(t *testing.T) string { return writeFile(t, "s.xlsx", "x") }, opt,
			[]string{"s.xlsx", "cannot tell the format"}},
		{"empty csv", func(t *testing.T) string { return writeFile(t, "e.csv", "") }, opt,
			[]string{"e.csv", "no data rows"}},
		{"empty parquet file", func(t *testing.T) string { return writeFile(t, "e.parquet", "") }, opt,
			[]string{"e.parquet", "no data rows"}},
		{"header-only csv", func(t *testing.T) string { return writeFile(t, "h.csv", "period,store,sales\n") }, opt,
			[]string{"h.csv", "no data rows"}},
		{"header-only parquet", func(t *testing.T) string { return parquetWith(t, strs(), strs(), floats()) }, opt,
			[]string{"no data rows"}},
		{"missing column csv", func(t *testing.T) string { return writeFile(t, "m.csv", "period,shop,sales\n2024-01,A,1\n") }, opt,
			[]string{`no key column "store"`, `"period", "shop", "sales"`}},
		{"missing column parquet", func(t *testing.T) string { return parquetWith(t, strs("2024-01"), strs("A"), floats(1)) },
			ReadOptions{Time: "month", Value: "sales", Keys: []string{"store"}},
			[]string{`no period column "month"`, `"period", "store", "sales"`}},
		{"NaN value csv", func(t *testing.T) string {
			return writeFile(t, "n.csv", "period,store,sales\n2024-01,A,1\n2024-02,A,NaN\n")
		}, opt,
			[]string{"line 3", `column "sales"`, `"NaN" is not a finite number`}},
		{"Inf value csv", func(t *testing.T) string { return writeFile(t, "i.csv", "period,store,sales\n2024-01,A,-Inf\n") }, opt,
			[]string{"line 2", `"-Inf" is not a finite number`}},
		{"overflow value csv", func(t *testing.T) string { return writeFile(t, "o.csv", "period,store,sales\n2024-01,A,1e999\n") }, opt,
			[]string{"line 2", "out of range"}},
		{"non-numeric value csv", func(t *testing.T) string {
			return writeFile(t, "t.csv", "period,store,sales\n2024-01,A,1\n2024-02,A,2\n2024-03,A,12 units\n")
		}, opt, []string{"line 4", `column "sales"`, `"12 units" is not a number`}},
		{"empty value csv", func(t *testing.T) string { return writeFile(t, "ev.csv", "period,store,sales\n2024-01,A,\n") }, opt,
			[]string{"line 2", "empty value"}},
		{"empty key csv", func(t *testing.T) string {
			return writeFile(t, "k.csv", "period,store,sales\n2024-01,A,1\n2024-01,,2\n")
		}, opt,
			[]string{"line 3", `key column "store" is empty`}},
		{"line counts quoted newlines", func(t *testing.T) string {
			return writeFile(t, "ql.csv", "period,store,sales,note\n2024-01,A,1,\"two\nlines\"\n2024-01,C,x,\n")
		}, opt, []string{"line 4", `"x" is not a number`}},
		{"unparseable period csv", func(t *testing.T) string {
			return writeFile(t, "p.csv", "period,store,sales\n2024-01,A,1\n2024-13,A,1\n")
		}, opt,
			[]string{"line 3", `column "period"`, `cannot read period "2024-13"`}},
		{"mixed grains csv", func(t *testing.T) string {
			return writeFile(t, "mg.csv", "period,store,sales\n2024-01,A,1\n2024-01-15,A,1\n")
		}, opt,
			[]string{"line 3", "2024-01-15 is a day but earlier periods are months"}},
		{"NaN value parquet", func(t *testing.T) string {
			return parquetWith(t, strs("2024-01", "2024-02"), strs("A", "A"), floats(1, math.NaN()))
		}, opt, []string{"row 2", `value column "sales" is NaN`}},
		{"Inf value parquet", func(t *testing.T) string {
			return parquetWith(t, strs("2024-01", "2024-02"), strs("A", "A"), floats(math.Inf(1), 1))
		}, opt, []string{"row 1", `value column "sales" is +Inf`}},
		{"null value parquet", func(t *testing.T) string {
			b := array.NewFloat64Builder(mem)
			b.AppendValues([]float64{1, 2, 0}, []bool{true, true, false})
			return parquetWith(t, strs("2024-01", "2024-02", "2024-03"), strs("A", "A", "A"), b.NewArray())
		}, opt, []string{"row 3", `value column "sales" is null`}},
		{"null key parquet", func(t *testing.T) string {
			return parquetWith(t, strs("2024-01", "2024-02"), strs("A", "<null>"), floats(1, 2))
		}, opt, []string{"row 2", `key column "store" is null`}},
		{"empty key parquet", func(t *testing.T) string {
			return parquetWith(t, strs("2024-01", "2024-02"), strs("", "A"), floats(1, 2))
		}, opt, []string{"row 1", `key column "store" is empty`}},
		{"null period parquet", func(t *testing.T) string {
			return parquetWith(t, strs("2024-01", "<null>"), strs("A", "A"), floats(1, 2))
		}, opt, []string{"row 2", `period column "period" is null`}},
		{"unparseable period parquet", func(t *testing.T) string {
			return parquetWith(t, strs("2024-01", "2024-01", "Jan 2024"), strs("A", "B", "A"), floats(1, 2, 3))
		}, opt, []string{"row 3", `cannot read period "Jan 2024"`}},
		{"text value parquet", func(t *testing.T) string { return parquetWith(t, strs("2024-01"), strs("A"), strs("1")) }, opt,
			[]string{`value column "sales" has Parquet type BYTE_ARRAY String`, "numbers"}},
		{"float period parquet", func(t *testing.T) string { return parquetWith(t, floats(2024), strs("A"), floats(1)) }, opt,
			[]string{`period column "period" has Parquet type DOUBLE`}},
		{"float key parquet", func(t *testing.T) string { return parquetWith(t, strs("2024-01"), floats(1), floats(1)) }, opt,
			[]string{`key column "store" has Parquet type DOUBLE`}},
		{"key named twice", func(t *testing.T) string { return writeFile(t, "d.csv", "period,store,sales\n2024-01,A,1\n") },
			ReadOptions{Time: "period", Value: "sales", Keys: []string{"store", "period"}},
			[]string{`key column "period" is already named as the period column`}},
		{"duplicate header", func(t *testing.T) string { return writeFile(t, "dh.csv", "period,store,store,sales\n2024-01,A,B,1\n") }, opt,
			[]string{`key column "store" appears more than once`}},
	}
	for _, c := range cases {
		t.Run(c.name, func(t *testing.T) {
			_, err := Read(c.path(t), c.opt)
			if err == nil {
				t.Fatal("Read succeeded, want an input error")
			}
			if !inputerr.Is(err) {
				t.Errorf("error %q is not an input error", err)
			}
			for _, w := range c.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("error %q does not contain %q", err, w)
				}
			}
		})
	}
}

// A table trueup wrote (text periods and keys, float values) reads back
// as input in each format.
func TestReadWhatWriteTableWrote(t *testing.T) {
	tab := &Table{Columns: []Column{
		{Name: "period", Type: String, Strings: []string{"2024-Q1", "2024-Q2", "2024-Q1"}},
		{Name: "store", Type: String, Strings: []string{"North 1", "North 1", "South 2"}},
		{Name: "units", Type: Int64, Ints: []int64{3, 4, 5}},
		{Name: "sales", Type: Float64, Floats: []float64{1.5, 2.25, 1e6}},
	}}
	for _, f := range []Format{Parquet, CSV, Arrow} {
		path := filepath.Join(t.TempDir(), "in"+f.Ext())
		if err := WriteTable(path, tab, f); err != nil {
			t.Fatal(err)
		}
		for _, value := range []string{"sales", "units"} {
			r, err := Read(path, ReadOptions{Time: "period", Value: value, Keys: []string{"store"}})
			if err != nil {
				t.Fatalf("%s: %v", f, err)
			}
			want := map[string][]float64{"sales": {1.5, 2.25, 1e6}, "units": {3, 4, 5}}[value]
			if !reflect.DeepEqual(r.Values, want) || !reflect.DeepEqual(periodsOf(r.Periods), []string{"2024-Q1", "2024-Q2", "2024-Q1"}) ||
				!reflect.DeepEqual(keysOf(r, 0), []string{"North 1", "North 1", "South 2"}) {
				t.Errorf("%s %s: values %v periods %v keys %q", f, value, r.Values, periodsOf(r.Periods), keysOf(r, 0))
			}
		}
	}
}

func TestReadTableBadInput(t *testing.T) {
	cases := []struct {
		path func(t *testing.T) string
		want string
	}{
		{func(t *testing.T) string { return filepath.Join(t.TempDir(), "gone.parquet") }, "no such file"},
		{func(t *testing.T) string { return writeFile(t, "g.parquet", "not parquet at all") }, "not a valid Parquet file"},
		{func(t *testing.T) string { return writeFile(t, "g.arrow", "not arrow at all") }, "not a valid Arrow IPC file"},
		{func(t *testing.T) string { return writeFile(t, "e.csv", "") }, "the file is empty"},
		{func(t *testing.T) string { return writeFile(t, "r.csv", "a,b\n1\n") }, "wrong number of fields"},
		{func(t *testing.T) string { return writeFile(t, "x.json", "{}") }, "cannot tell the format"},
	}
	for _, c := range cases {
		path := c.path(t)
		_, err := ReadTable(path, "")
		if !inputerr.Is(err) || !strings.Contains(err.Error(), c.want) || !strings.Contains(err.Error(), filepath.Base(path)) {
			t.Errorf("ReadTable(%s) error %v, want an input error naming the file and saying %q", filepath.Base(path), err, c.want)
		}
	}
}
