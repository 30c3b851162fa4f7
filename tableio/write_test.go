package tableio

import (
	"bytes"
	"errors"
	"io"
	"math"
	"os"
	"path/filepath"
	"reflect"
	"strconv"
	"strings"
	"testing"

	"trueup/inputerr"
)

// sampleTable has every column type, nulls marked in Null, a NaN float
// (written as null), floats that need all 17 digits, int64 extremes and
// text that needs CSV quoting.
func sampleTable() *Table {
	return &Table{Columns: []Column{
		{Name: "node", Type: String, Strings: []string{"Total", "North/Store 1", `say "hi", ok`, "line\nbreak", "ü-Ω"},
			Null: []bool{false, false, false, false, false}},
		{Name: "level", Type: String, Strings: []string{"a", "", "c", "d", "e"}, Null: []bool{false, true, false, false, false}},
		{Name: "mean", Type: Float64, Floats: []float64{0.1 + 0.2, math.NaN(), -1e-300, 1.7976931348623157e308, 12}},
		{Name: "lower", Type: Float64, Floats: []float64{1, 2, 3, 4, 5}, Null: []bool{true, false, false, false, true}},
		{Name: "step", Type: Int64, Ints: []int64{1, -2, math.MaxInt64, math.MinInt64, 0}, Null: []bool{false, false, false, false, true}},
	}}
}

// wantBack is what reading sampleTable back should give: NaN becomes a
// marked null, null floats hold NaN, null strings and ints hold zero
// values, and a column without nulls has Null == nil.
func wantBack(f Format) *Table {
	nan := math.NaN()
	t := &Table{Columns: []Column{
		{Name: "node", Type: String, Strings: []string{"Total", "North/Store 1", `say "hi", ok`, "line\nbreak", "ü-Ω"}},
		{Name: "level", Type: String, Strings: []string{"a", "", "c", "d", "e"}, Null: []bool{false, true, false, false, false}},
		{Name: "mean", Type: Float64, Floats: []float64{0.1 + 0.2, nan, -1e-300, 1.7976931348623157e308, 12}, Null: []bool{false, true, false, false, false}},
		{Name: "lower", Type: Float64, Floats: []float64{nan, 2, 3, 4, nan}, Null: []bool{true, false, false, false, true}},
		{Name: "step", Type: Int64, Ints: []int64{1, -2, math.MaxInt64, math.MinInt64, 0}, Null: []bool{false, false, false, false, true}},
	}}
	if f == CSV {
		// CSV has no integer type, and int64 extremes do not survive
		// float64: ReadTable reads the column as Float64.
		t.Columns[4] = Column{Name: "step", Type: Float64, Floats: []float64{1, -2, math.MaxInt64, math.MinInt64, nan}, Null: []bool{false, false, false, false, true}}
	}
	return t
}

func sameTable(t *testing.T, got, want *Table) {
	t.Helper()
	if len(got.Columns) != len(want.Columns) {
		t.Fatalf("got %d columns, want %d", len(got.Columns), len(want.Columns))
	}
	for j := range want.Columns {
		g, w := got.Columns[j], want.Columns[j]
		if g.Name != w.Name || g.Type != w.Type {
			t.Errorf("column %d: got %q type %d, want %q type %d", j, g.Name, g.Type, w.Name, w.Type)
			continue
		}
		if !reflect.DeepEqual(g.Strings, w.Strings) || !reflect.DeepEqual(g.Ints, w.Ints) || !reflect.DeepEqual(g.Null, w.Null) {
			t.Errorf("column %q: got %q %v null %v, want %q %v null %v", g.Name, g.Strings, g.Ints, g.Null, w.Strings, w.Ints, w.Null)
		}
		if len(g.Floats) != len(w.Floats) {
			t.Errorf("column %q: %d floats, want %d", g.Name, len(g.Floats), len(w.Floats))
			continue
		}
		for i := range w.Floats {
			a, b := g.Floats[i], w.Floats[i]
			if !(a == b || math.IsNaN(a) && math.IsNaN(b)) {
				t.Errorf("column %q row %d: got %v, want %v (exactly)", g.Name, i, a, b)
			}
		}
	}
}

func TestRoundTrip(t *testing.T) {
	dir := t.TempDir()
	for _, f := range []Format{Parquet, CSV, Arrow} {
		path := filepath.Join(dir, "out"+f.Ext())
		if err := WriteTable(path, sampleTable(), f); err != nil {
			t.Fatalf("%s: %v", f, err)
		}
		got, err := ReadTable(path, f)
		if err != nil {
			t.Fatalf("%s: %v", f, err)
		}
		t.Run(string(f), func(t *testing.T) { sameTable(t, got, wantBack(f)) })
		// The extension alone picks the format too.
		if _, err := ReadTable(path, ""); err != nil {
			t.Errorf("%s by extension: %v", f, err)
		}
	}
}

func TestCSVLayout(t *testing.T) {
	path := filepath.Join(t.TempDir(), "t.csv")
	tab := &Table{Columns: []Column{
		{Name: "k", Type: String, Strings: []string{"a,b", "c"}},
		{Name: "v", Type: Float64, Floats: []float64{0.1, math.NaN()}},
		{Name: "n", Type: Int64, Ints: []int64{7, 8}, Null: []bool{false, true}},
	}}
	if err := WriteTable(path, tab, CSV); err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(path)
	if want := "k,v,n\n\"a,b\",0.1,7\nc,,\n"; string(b) != want {
		t.Errorf("CSV bytes %q, want %q", b, want)
	}
}

func TestCSVInference(t *testing.T) {
	path := filepath.Join(t.TempDir(), "t.csv")
	os.WriteFile(path, []byte("a,b,c\n1,x,\n2.5,,\n,3,\n"), 0o644)
	got, err := ReadTable(path, CSV)
	if err != nil {
		t.Fatal(err)
	}
	nan := math.NaN()
	sameTable(t, got, &Table{Columns: []Column{
		{Name: "a", Type: Float64, Floats: []float64{1, 2.5, nan}, Null: []bool{false, false, true}},
		{Name: "b", Type: String, Strings: []string{"x", "", "3"}, Null: []bool{false, true, false}},
		{Name: "c", Type: Float64, Floats: []float64{nan, nan, nan}, Null: []bool{true, true, true}},
	}})
}

func TestDeterministicBytes(t *testing.T) {
	dir := t.TempDir()
	for _, f := range []Format{Parquet, CSV, Arrow} {
		a, b := filepath.Join(dir, "a"+f.Ext()), filepath.Join(dir, "b"+f.Ext())
		if err := WriteTable(a, sampleTable(), f); err != nil {
			t.Fatal(err)
		}
		if err := WriteTable(b, sampleTable(), f); err != nil {
			t.Fatal(err)
		}
		x, _ := os.ReadFile(a)
		y, _ := os.ReadFile(b)
		if len(x) == 0 || !bytes.Equal(x, y) {
			t.Errorf("%s: two writes of the same table differ (%d and %d bytes)", f, len(x), len(y))
		}
	}
}

func TestWriteReplacesAndSetsMode(t *testing.T) {
	path := filepath.Join(t.TempDir(), "r.json")
	if err := WriteFileAtomic(path, []byte("old")); err != nil {
		t.Fatal(err)
	}
	if err := WriteFileAtomic(path, []byte(`{"new":true}`)); err != nil {
		t.Fatal(err)
	}
	b, _ := os.ReadFile(path)
	if string(b) != `{"new":true}` {
		t.Errorf("file holds %q", b)
	}
	// A new file's mode is 0666 less the umask (POSIX open(2), common
	// practice for a program's output), not the private 0600 of a
	// temporary file.
	want := 0o666 &^ umask(t)
	if st, _ := os.Stat(path); st.Mode().Perm() != want {
		t.Errorf("mode %v, want %v", st.Mode().Perm(), want)
	}
	noLeftovers(t, filepath.Dir(path), 1)
}

// umask reads the process's umask from /proc/self/status (Linux 4.7 and
// later), which, unlike syscall.Umask, does not change it.
func umask(t *testing.T) os.FileMode {
	t.Helper()
	b, err := os.ReadFile("/proc/self/status")
	if err != nil {
		t.Skip("no /proc/self/status to read the umask from:", err)
	}
	for _, line := range strings.Split(string(b), "\n") {
		if v, ok := strings.CutPrefix(line, "Umask:"); ok {
			m, err := strconv.ParseUint(strings.TrimSpace(v), 8, 32)
			if err != nil {
				t.Fatal(err)
			}
			return os.FileMode(m)
		}
	}
	t.Skip("/proc/self/status gives no umask")
	return 0
}

// noLeftovers fails if dir holds other than want entries or any temp file.
func noLeftovers(t *testing.T, dir string, want int) {
	t.Helper()
	ents, err := os.ReadDir(dir)
	if err != nil {
		t.Fatal(err)
	}
	for _, e := range ents {
		if strings.Contains(e.Name(), ".tmp-") {
			t.Errorf("temporary file %s left behind", e.Name())
		}
	}
	if len(ents) != want {
		t.Errorf("%d entries in %s, want %d", len(ents), dir, want)
	}
}

func TestAtomicWriteFailures(t *testing.T) {
	dir := t.TempDir()
	// The directory does not exist.
	if err := WriteTable(filepath.Join(dir, "missing", "x.parquet"), sampleTable(), Parquet); err == nil {
		t.Error("writing into a missing directory succeeded")
	}
	// A column with the wrong length: refused, nothing written.
	bad := sampleTable()
	bad.Columns[2].Floats = bad.Columns[2].Floats[:3]
	for _, f := range []Format{Parquet, CSV, Arrow} {
		path := filepath.Join(dir, "bad"+f.Ext())
		err := WriteTable(path, bad, f)
		if err == nil || !strings.Contains(err.Error(), `column "mean" has 3 entries`) {
			t.Errorf("%s: error %v, want a length mismatch", f, err)
		}
	}
	badNull := sampleTable()
	badNull.Columns[0].Null = []bool{true}
	if err := WriteTable(filepath.Join(dir, "n.csv"), badNull, CSV); err == nil {
		t.Error("short Null slice accepted")
	}
	// A failure after part of the file is written: the temporary file
	// goes and an existing file at path stays as it was.
	path := filepath.Join(dir, "keep.csv")
	os.WriteFile(path, []byte("old"), 0o644)
	boom := errors.New("disk on fire")
	err := writeAtomic(path, func(w io.Writer) error {
		w.Write(bytes.Repeat([]byte("x"), 3<<20)) // more than the buffer: reaches the file
		return boom
	})
	if !errors.Is(err, boom) {
		t.Errorf("error %v, want the writer's error", err)
	}
	if b, _ := os.ReadFile(path); string(b) != "old" {
		t.Errorf("existing file changed to %d bytes", len(b))
	}
	noLeftovers(t, dir, 1)
}

func TestParseFormats(t *testing.T) {
	got, err := ParseFormats("parquet, CSV,arrow,csv,parquet")
	if err != nil || !reflect.DeepEqual(got, []Format{Parquet, CSV, Arrow}) {
		t.Errorf("got %v, %v", got, err)
	}
	got, err = ParseFormats("arrow,parquet")
	if err != nil || !reflect.DeepEqual(got, []Format{Arrow, Parquet}) {
		t.Errorf("order not kept: %v, %v", got, err)
	}
	for _, s := range []string{"xlsx", "parquet,json", "", " , "} {
		_, err := ParseFormats(s)
		if !inputerr.Is(err) || !strings.Contains(err.Error(), "parquet, csv, arrow") {
			t.Errorf("ParseFormats(%q) error %v, want an input error listing the valid formats", s, err)
		}
	}
	for f, ext := range map[Format]string{Parquet: ".parquet", CSV: ".csv", Arrow: ".arrow"} {
		if f.Ext() != ext {
			t.Errorf("%s.Ext() = %q", f, f.Ext())
		}
	}
}

func TestCSVFloatsInPlainNotation(t *testing.T) {
	for _, c := range []struct {
		x    float64
		want string
	}{{3783451.2383758635, "3783451.2383758635"}, {0.3, "0.3"}, {-12, "-12"}, {0, "0"}, {1e21, "1e+21"}, {1e-7, "1e-07"}} {
		if got := string(appendCSVFloat(nil, c.x)); got != c.want {
			t.Errorf("%v written as %q, want %q", c.x, got, c.want)
		}
	}
}

func TestRemovePendingDeletesTempFiles(t *testing.T) {
	dir := t.TempDir()
	path := filepath.Join(dir, "out.json")
	err := writeAtomic(path, func(w io.Writer) error {
		RemovePending() // as the interrupt handler would, mid-write
		entries, _ := os.ReadDir(dir)
		if len(entries) != 0 {
			t.Errorf("temporary files left after RemovePending: %v", entries)
		}
		return errors.New("interrupted")
	})
	if err == nil {
		t.Fatal("write succeeded after its temp file was removed")
	}
	if _, err := os.Stat(path); !os.IsNotExist(err) {
		t.Errorf("%s exists after an interrupted write", path)
	}
}

// TestParquetBytesRepeatWhenADictionaryWouldOverflow writes a table whose
// float column has more distinct values than one dictionary page holds
// (200,000 × 8 bytes against parquet.DefaultDictionaryPageSizeLimit, 1 MiB)
// eight times: every file must be the same bytes. arrow-go v18.8.0 falls
// back from a full dictionary to plain pages and writes the chunk's page
// encodings in Go map order (file/page_writer.go), which differed between
// runs at 40,005 nodes; such columns are now written without a dictionary.
func TestParquetBytesRepeatWhenADictionaryWouldOverflow(t *testing.T) {
	const n = 200_000
	col := Column{Name: "forecast", Type: Float64, Floats: make([]float64, n)}
	key := Column{Name: "store", Type: String, Strings: make([]string, n)}
	for i := range col.Floats {
		col.Floats[i] = float64(i) * 1.25
		key.Strings[i] = "S" + strconv.Itoa(i%40)
	}
	tb := &Table{Columns: []Column{key, col}}
	dir := t.TempDir()
	var first []byte
	for run := range 8 {
		path := filepath.Join(dir, "t"+strconv.Itoa(run)+".parquet")
		if err := WriteTable(path, tb, Parquet); err != nil {
			t.Fatal(err)
		}
		b, err := os.ReadFile(path)
		if err != nil {
			t.Fatal(err)
		}
		if run == 0 {
			first = b
		} else if !bytes.Equal(b, first) {
			t.Fatalf("write %d gave other bytes than the first", run+1)
		}
	}
	back, err := ReadTable(filepath.Join(dir, "t0.parquet"), Parquet)
	if err != nil {
		t.Fatal(err)
	}
	for i, v := range back.Columns[1].Floats {
		if v != col.Floats[i] {
			t.Fatalf("row %d read back as %v, want %v", i, v, col.Floats[i])
		}
	}
}
