package tableio

import (
	"errors"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"time"

	"github.com/apache/arrow-go/v18/arrow"
	"github.com/apache/arrow-go/v18/arrow/array"
	"github.com/apache/arrow-go/v18/parquet"
	"github.com/apache/arrow-go/v18/parquet/file"
	"github.com/apache/arrow-go/v18/parquet/schema"

	"trueup/inputerr"
)

// Timestamps in CSV text are dated by the day written in them, in their
// own zone (ISO 8601 time-of-day and zone forms): 2024-03-01T00:30+01:00
// is 1 March, although in UTC it is still February.
func TestReadCSVTimestampsKeepTheirOwnDate(t *testing.T) {
	content := "when,v\n" +
		"2024-03-01T00:00:00,1\n" +
		"2024-04-01 00:00:00,2\n" +
		"2024-05-01T00:30:00+01:00,3\n" +
		"2024-06-01T00:00:00Z,4\n" +
		"2024-07-01T00:00:00.000-05:00,5\n"
	r, err := Read(writeFile(t, "ts.csv", content), ReadOptions{Time: "when", Value: "v"})
	if err != nil {
		t.Fatal(err)
	}
	want := []string{"2024-03-01", "2024-04-01", "2024-05-01", "2024-06-01", "2024-07-01"}
	if got := periodsOf(r.Periods); !reflect.DeepEqual(got, want) {
		t.Errorf("periods %v, want %v", got, want)
	}
}

// An Arrow timestamp with a zone is dated in that zone: 23:30 UTC on
// 29 February 2024 is 00:30 on 1 March at UTC+01:00.
func TestReadZonedTimestampNotShiftedToUTC(t *testing.T) {
	at := time.Date(2024, 2, 29, 23, 30, 0, 0, time.UTC).UnixMilli()
	for _, f := range []Format{Parquet, Arrow} {
		b := array.NewTimestampBuilder(mem, &arrow.TimestampType{Unit: arrow.Millisecond, TimeZone: "+01:00"})
		b.Append(arrow.Timestamp(at))
		path := filepath.Join(t.TempDir(), "z"+f.Ext())
		rec := batch(col{"when", b.NewArray()}, col{"v", floats(1)})
		if f == Parquet {
			writeParquetBatches(t, path, 1<<20, rec)
		} else {
			writeIPCBatches(t, path, rec)
		}
		r, err := Read(path, ReadOptions{Time: "when", Value: "v"})
		if err != nil {
			t.Fatal(err)
		}
		if got := r.Periods[0].String(); got != "2024-03-01" {
			t.Errorf("%s: period %s, want 2024-03-01", f, got)
		}
	}
}

func TestReadYearsAndSteps(t *testing.T) {
	ints := func(v ...int64) arrow.Array {
		b := array.NewInt64Builder(mem)
		b.AppendValues(v, nil)
		return b.NewArray()
	}
	cases := []struct {
		name  string
		csv   string
		arr   arrow.Array
		kind  TimeKind
		grain Grain
		want  []string
	}{
		{"year text", "p,v\n2023,1\n2024,2\n", nil, TimeAuto, Year, []string{"2023", "2024"}},
		{"year integers", "", ints(1999, 2000), TimeAuto, Year, []string{"1999", "2000"}},
		{"step text", "p,v\n1,1\n2,2\n", nil, TimeAuto, Index, []string{"1", "2"}},
		{"step integers", "", ints(0, 1), TimeAuto, Index, []string{"0", "1"}},
		// A step index reaching the year range stays an index as a whole.
		{"steps through 2000", "", ints(1999, 2000, 2201), TimeAuto, Index, []string{"1999", "2000", "2201"}},
		{"forced steps", "p,v\n2023,1\n2024,2\n", nil, TimeSteps, Index, []string{"2023", "2024"}},
		{"forced years", "", ints(1750, 1751), TimeYears, Year, []string{"1750", "1751"}},
	}
	for _, c := range cases {
		var path string
		if c.arr == nil {
			path = writeFile(t, "y.csv", c.csv)
		} else {
			vals := make([]float64, c.arr.Len())
			path = filepath.Join(t.TempDir(), "y.parquet")
			writeParquetBatches(t, path, 1<<20, batch(col{"p", c.arr}, col{"v", floats(vals...)}))
		}
		r, err := Read(path, ReadOptions{Time: "p", Value: "v", TimeKind: c.kind})
		if err != nil {
			t.Errorf("%s: %v", c.name, err)
			continue
		}
		if got := periodsOf(r.Periods); r.Periods[0].Grain != c.grain || !reflect.DeepEqual(got, c.want) {
			t.Errorf("%s: %s %v, want %s %v", c.name, r.Periods[0].Grain, got, c.grain, c.want)
		}
	}
}

// Exports from spreadsheets set to European conventions: byte order mark,
// CRLF, ';' between fields and decimal commas.
func TestReadCSVSemicolonsAndDecimalCommas(t *testing.T) {
	content := "\xef\xbb\xbfperiod;store;sales\r\n2024-01;\"North; 1\";12,5\r\n2024-02;\"North; 1\";3\r\n"
	r, err := Read(writeFile(t, "eu.csv", content), ReadOptions{Time: "period", Value: "sales", Keys: []string{"store"}})
	if err != nil {
		t.Fatal(err)
	}
	if !reflect.DeepEqual(r.Values, []float64{12.5, 3}) || !reflect.DeepEqual(keysOf(r, 0), []string{"North; 1", "North; 1"}) {
		t.Errorf("values %v keys %q", r.Values, keysOf(r, 0))
	}
	if !reflect.DeepEqual(r.Columns, []string{"period", "store", "sales"}) {
		t.Errorf("columns %q", r.Columns)
	}
	// Tabs, detected; and a separator given explicitly overrides detection.
	tabbed := writeFile(t, "t.csv", "period\tsales\n2024-Q1\t7\n")
	if r, err := Read(tabbed, ReadOptions{Time: "period", Value: "sales"}); err != nil || r.Values[0] != 7 {
		t.Errorf("tab separated: %v", err)
	}
	piped := writeFile(t, "p.csv", "period|sales,x\n2024-Q1|7,5\n")
	if r, err := Read(piped, ReadOptions{Time: "period", Value: "sales,x", Comma: '|'}); err != nil || r.Values[0] != 7.5 {
		t.Errorf("explicit separator: %v", err)
	}
	if _, err := Read(piped, ReadOptions{Time: "period", Value: "sales", Comma: '"'}); inputerr.OptionOf(err) != "Comma" {
		t.Errorf("quote as separator: got %v, want an error about option Comma", err)
	}
}

// Errors carry their position in fields, not only in the text.
func TestReadErrorPositions(t *testing.T) {
	path := writeFile(t, "bad.csv", "period,sales\n2024-01,1\n2024-02,x\n")
	_, err := Read(path, ReadOptions{Time: "period", Value: "sales"})
	var e *inputerr.Error
	if !errors.As(err, &e) || e.File != path || e.Line != 3 || e.Column != "sales" {
		t.Fatalf("got %#v", err)
	}
	p := filepath.Join(t.TempDir(), "bad.parquet")
	writeParquetBatches(t, p, 1<<20, batch(col{"period", strs("2024-01", "2024-02")}, col{"store", strs("A", "")}, col{"sales", floats(1, 2)}))
	_, err = Read(p, ReadOptions{Time: "period", Value: "sales", Keys: []string{"store"}})
	if !errors.As(err, &e) || e.File != p || e.Row != 2 || e.Column != "store" || !strings.Contains(e.Msg, "empty") {
		t.Fatalf("got %#v", err)
	}
}

// Integer keys of Parquet and Arrow files keep their type; CSV keys are
// text.
func TestReadKeyTypes(t *testing.T) {
	ids := array.NewInt32Builder(mem)
	ids.AppendValues([]int32{7, 9}, nil)
	rec := batch(col{"p", strs("2024-01", "2024-02")}, col{"store", ids.NewArray()}, col{"region", strs("N", "S")}, col{"v", floats(1, 2)})
	for _, f := range []Format{Parquet, Arrow} {
		path := filepath.Join(t.TempDir(), "k"+f.Ext())
		if f == Parquet {
			writeParquetBatches(t, path, 1<<20, rec)
		} else {
			writeIPCBatches(t, path, rec)
		}
		r, err := Read(path, ReadOptions{Time: "p", Value: "v", Keys: []string{"store", "region"}})
		if err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(r.KeyTypes, []ColumnType{Int64, String}) {
			t.Errorf("%s: key types %v", f, r.KeyTypes)
		}
	}
	r, err := Read(writeFile(t, "k.csv", "p,store,v\n2024-01,7,1\n"), ReadOptions{Time: "p", Value: "v", Keys: []string{"store"}})
	if err != nil || !reflect.DeepEqual(r.KeyTypes, []ColumnType{String}) {
		t.Errorf("csv key types %v (%v)", r.KeyTypes, err)
	}
}

// A Date column is written as Parquet DATE, Arrow date32 and ISO 8601
// text, and Parquet and Arrow read it back as Date.
func TestDateColumnRoundTrip(t *testing.T) {
	// 19783 days after 1970-01-01 is 2024-03-01 (Go time package, 1.26).
	d := int64(time.Date(2024, 3, 1, 0, 0, 0, 0, time.UTC).Unix() / 86400)
	tab := &Table{Columns: []Column{
		{Name: "day", Type: Date, Ints: []int64{d, d + 1, 0}, Null: []bool{false, false, true}},
		{Name: "v", Type: Float64, Floats: []float64{1, 2, 3}},
	}}
	for _, f := range []Format{Parquet, Arrow, CSV} {
		path := filepath.Join(t.TempDir(), "d"+f.Ext())
		if err := WriteTable(path, tab, f); err != nil {
			t.Fatal(err)
		}
		got, err := ReadTable(path, "")
		if err != nil {
			t.Fatal(err)
		}
		c := got.Columns[0]
		if f == CSV {
			if c.Type != String || !reflect.DeepEqual(c.Strings[:2], []string{"2024-03-01", "2024-03-02"}) || !c.Null[2] {
				t.Errorf("csv: %+v", c)
			}
			continue
		}
		if c.Type != Date || !reflect.DeepEqual(c.Ints[:2], []int64{d, d + 1}) || c.Null == nil || !c.Null[2] {
			t.Errorf("%s: %+v", f, c)
		}
		// Read takes it as a period column and refuses its null.
		_, err = Read(path, ReadOptions{Time: "day", Value: "v"})
		var e *inputerr.Error
		if !errors.As(err, &e) || e.Row != 3 || !strings.Contains(e.Msg, "null") {
			t.Errorf("%s: reading the null date as a period: %v", f, err)
		}
	}
}

// Parquet timestamps written without Arrow: INT96 (nanosecond of the day,
// then the Julian day; 2460371 is 1 March 2024 in the Julian day count,
// 2440588 being 1970-01-01) and INT64 TIMESTAMP in microseconds, not
// adjusted to UTC, which is dated as written.
func TestReadParquetLegacyAndLocalTimestamps(t *testing.T) {
	i96, err := schema.NewPrimitiveNode("old", parquet.Repetitions.Required, parquet.Types.Int96, -1, -1)
	if err != nil {
		t.Fatal(err)
	}
	local, err := schema.NewPrimitiveNodeLogical("local", parquet.Repetitions.Required,
		schema.NewTimestampLogicalType(false, schema.TimeUnitMicros), parquet.Types.Int64, -1, -1)
	if err != nil {
		t.Fatal(err)
	}
	v, err := schema.NewPrimitiveNode("v", parquet.Repetitions.Required, parquet.Types.Double, -1, -1)
	if err != nil {
		t.Fatal(err)
	}
	root, err := schema.NewGroupNode("schema", parquet.Repetitions.Required, schema.FieldList{i96, local, v}, -1)
	if err != nil {
		t.Fatal(err)
	}
	path := filepath.Join(t.TempDir(), "legacy.parquet")
	f, err := os.Create(path)
	if err != nil {
		t.Fatal(err)
	}
	fw := file.NewParquetWriter(f, root)
	rg := fw.AppendRowGroup()
	stamp := parquet.NewInt96([3]uint32{0, 0, 2460371})
	stamp.SetNanoSeconds(23 * 3600 * 1e9) // 23:00 on 1 March
	// 2024-03-31T23:59:59 local, in microseconds since 1970-01-01T00:00.
	us := time.Date(2024, 3, 31, 23, 59, 59, 0, time.UTC).UnixMicro()
	for _, write := range []func(file.ColumnChunkWriter) error{
		func(w file.ColumnChunkWriter) error {
			_, err := w.(*file.Int96ColumnChunkWriter).WriteBatch([]parquet.Int96{stamp}, nil, nil)
			return err
		},
		func(w file.ColumnChunkWriter) error {
			_, err := w.(*file.Int64ColumnChunkWriter).WriteBatch([]int64{us}, nil, nil)
			return err
		},
		func(w file.ColumnChunkWriter) error {
			_, err := w.(*file.Float64ColumnChunkWriter).WriteBatch([]float64{1}, nil, nil)
			return err
		},
	} {
		cw, err := rg.NextColumn()
		if err != nil {
			t.Fatal(err)
		}
		if err := write(cw); err != nil {
			t.Fatal(err)
		}
		if err := cw.Close(); err != nil {
			t.Fatal(err)
		}
	}
	if err := rg.Close(); err != nil {
		t.Fatal(err)
	}
	if err := fw.Close(); err != nil {
		t.Fatal(err)
	}
	for col, want := range map[string]string{"old": "2024-03-01", "local": "2024-03-31"} {
		r, err := Read(path, ReadOptions{Time: col, Value: "v"})
		if err != nil {
			t.Fatal(err)
		}
		if got := r.Periods[0].String(); got != want {
			t.Errorf("%s: period %s, want %s", col, got, want)
		}
	}
}
