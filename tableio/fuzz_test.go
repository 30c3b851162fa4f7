package tableio

import (
	"bytes"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strconv"
	"testing"

	"trueup/inputerr"
)

// The fuzz targets feed arbitrary bytes and labels to every reader of user
// input. No input may panic, and every failure must be an input error
// (which the command line reports with exit 2), never another kind.
// .ci/run runs each for a bounded time; testdata/fuzz keeps every input
// that once failed.

// readOpts names the columns of the seed tables.
var readOpts = ReadOptions{Time: "period", Value: "sales", Keys: []string{"store"}}

// mustBeInputError fails unless err is nil or an input error.
func mustBeInputError(t *testing.T, what string, err error) {
	t.Helper()
	if err != nil && !inputerr.Is(err) {
		t.Fatalf("%s: a failure that is not an input error: %v", what, err)
	}
}

func FuzzParsePeriod(f *testing.F) {
	for _, s := range []string{"2024-01", "2024-W05", "2024-Q3", "2024", "2024-01-31", "31/01/2024",
		"2024-01-31T10:00:00Z", "9999-12", "0", "-5", " 2024-1 ", "2024-13", "Q3 2024", ""} {
		f.Add(s)
	}
	f.Fuzz(func(t *testing.T, s string) {
		p, err := ParsePeriod(s)
		mustBeInputError(t, "ParsePeriod", err)
		if err != nil {
			return
		}
		// A period read back from its own label is the same period; but a
		// step of an integer index is a bare integer, which one label
		// cannot tell from a year ("02000" is step 2000, "2000" the year:
		// the readers decide by the whole column), so its label is only
		// checked to be its number.
		if p.Grain == Index {
			if p.String() != strconv.Itoa(p.Index) {
				t.Fatalf("%q reads as step %d, labelled %q", s, p.Index, p.String())
			}
			return
		}
		q, err := ParsePeriod(p.String())
		if err != nil || q != p {
			t.Fatalf("%q reads as %v, whose label %q reads as %v (%v)", s, p, p.String(), q, err)
		}
	})
}

func FuzzReadCSV(f *testing.F) {
	for _, s := range []string{
		"period,store,sales\n2024-01,Harbour Street,120.5\n2024-02,Harbour Street,98\n",
		"period;store;sales\n2024-01;Mill Lane;\"1,5\"\n",
		"period\tstore\tsales\n2024-01-31\tMill Lane\t3\n",
		"\"period\",\"store\",\"sales\"\n\"2024\",\"a\"\"b\",1e3\n",
		"period,store,sales\n",
		"period,store,sales\n2024-01,N\x00,1\n2024-01,N,2\n",
		"period,store,sales\n2024-01,\"a\tb\",1\n2024-01,\x1b[2J,2\n",
		"period,store,sales\n2024-01,\"a\rb\",1\n2024-01,\"x\u0085\",2\n",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		r, err := readCSV(data, readOpts)
		mustBeInputError(t, "readCSV", err)
		if err == nil {
			mustHavePrintableKeys(t, r)
		}
		_, err = readTableCSV(data)
		mustBeInputError(t, "readTableCSV", err)
	})
}

// mustHavePrintableKeys fails when a read let through a key that
// CheckKeyText refuses.
func mustHavePrintableKeys(t *testing.T, r *Rows) {
	t.Helper()
	for k, dict := range r.KeyDict {
		for _, s := range dict {
			if err := CheckKeyText(s); err != nil {
				t.Fatalf("column %q: read a key that must be refused: %v", r.KeyNames[k], err)
			}
		}
	}
}

// FuzzKeyText writes a table whose second key is the fuzzed text in every
// format and reads it back: the read fails with an input error exactly
// when CheckKeyText refuses the key (a control character or bytes that
// are not UTF-8), and otherwise Read and ReadTable give the key back
// unchanged (in CSV, through the quote put before formula-like text).
func FuzzKeyText(f *testing.F) {
	for _, s := range []string{"Harbour Street", "N\x00", "\x1b[31m", "a\tb", "x\u0085", "Caf\xe9", "=1+2", "'-3", "\u2028"} {
		f.Add(s)
	}
	dir := f.TempDir()
	f.Fuzz(func(t *testing.T, key string) {
		if key == "" {
			return // refused as an empty key
		}
		refused := CheckKeyText(key) != nil
		tab := &Table{Columns: []Column{
			{Name: "period", Type: String, Strings: []string{"2024-01", "2024-01"}},
			{Name: "store", Type: String, Strings: []string{"Harbour Street", key}},
			{Name: "sales", Type: Float64, Floats: []float64{1, 2}},
		}}
		for _, format := range []Format{CSV, Parquet, Arrow} {
			path := filepath.Join(dir, "t"+format.Ext())
			if err := WriteTable(path, tab, format); err != nil {
				t.Fatal(err)
			}
			r, err := Read(path, readOpts)
			switch {
			case refused && err == nil:
				t.Fatalf("%s: key %q was read", format, key)
			case refused:
				mustBeInputError(t, string(format), err)
			case err != nil:
				t.Fatalf("%s: key %q refused: %v", format, key, err)
			case r.KeyDict[0][r.KeyCodes[0][1]] != key:
				t.Fatalf("%s: key %q read back as %q", format, key, r.KeyDict[0][r.KeyCodes[0][1]])
			}
			if refused {
				continue
			}
			back, err := ReadTable(path, "")
			if err != nil {
				t.Fatalf("%s: ReadTable: %v", format, err)
			}
			if c := back.Columns[1]; c.Type != String || c.Strings[1] != key {
				t.Fatalf("%s: ReadTable read key %q back as %v %q", format, key, c.Type, c.Strings)
			}
		}
	})
}

// seedFile adds a committed table file to the corpus.
func seedFile(f *testing.F, path string) {
	data, err := os.ReadFile(path)
	if err != nil {
		f.Fatal(err)
	}
	f.Add(data)
	f.Add(data[:len(data)/2])
}

func FuzzReadParquet(f *testing.F) {
	seedFile(f, "testdata/small.parquet")
	f.Fuzz(func(t *testing.T, data []byte) {
		r, err := readParquet(data, readOpts)
		mustBeInputError(t, "readParquet", err)
		if err == nil {
			mustHavePrintableKeys(t, r)
		}
		_, err = readTableParquet(data)
		mustBeInputError(t, "readTableParquet", err)
	})
}

func FuzzReadArrow(f *testing.F) {
	seedFile(f, "testdata/small.arrow")
	f.Fuzz(func(t *testing.T, data []byte) {
		r, err := readIPC(data, readOpts)
		mustBeInputError(t, "readIPC", err)
		if err == nil {
			mustHavePrintableKeys(t, r)
		}
		_, err = readTableIPC(data)
		mustBeInputError(t, "readTableIPC", err)
	})
}

// TestIPCBoundsAcceptWrittenFiles checks that the bounds walk accepts what
// the Arrow library itself writes (the committed seed and a file of every
// column type), so that it refuses only damaged files.
func TestIPCBoundsAcceptWrittenFiles(t *testing.T) {
	seed, err := os.ReadFile("testdata/small.arrow")
	if err != nil {
		t.Fatal(err)
	}
	if err := checkIPCBounds(seed); err != nil {
		t.Errorf("testdata/small.arrow: %v", err)
	}
	if err := checkIPCBounds(seed[:len(seed)-1]); err == nil {
		t.Error("a file without its last byte passed")
	}
}

// TestDamagedFilesAreInputErrors changes one to four bytes of the
// committed Parquet and Arrow seeds at random (a fixed seed, so the run is
// repeatable), 3000 times each, and requires every read to succeed or
// fail with an input error, never panic. It found the damaged-file panics
// kept under testdata/fuzz before the fuzzer did (see .ci/run on
// minimizing time), and keeps checking them in every "go test".
func TestDamagedFilesAreInputErrors(t *testing.T) {
	for _, c := range []struct {
		seed string
		read func([]byte) error
	}{
		{"testdata/small.parquet", func(d []byte) error {
			if _, err := readParquet(d, readOpts); err != nil {
				return err
			}
			_, err := readTableParquet(d)
			return err
		}},
		{"testdata/small.arrow", func(d []byte) error {
			if _, err := readIPC(d, readOpts); err != nil {
				return err
			}
			_, err := readTableIPC(d)
			return err
		}},
	} {
		seed, err := os.ReadFile(c.seed)
		if err != nil {
			t.Fatal(err)
		}
		r := rand.New(rand.NewPCG(1, 2))
		for n := 0; n < 3000; n++ {
			data := append([]byte(nil), seed...)
			for k := 0; k < 1+r.IntN(4); k++ {
				data[r.IntN(len(data))] = byte(r.IntN(256))
			}
			func() {
				defer func() {
					if p := recover(); p != nil {
						t.Fatalf("%s damaged (case %d): panic %v", c.seed, n, p)
					}
				}()
				mustBeInputError(t, c.seed, c.read(data))
			}()
		}
	}
}

// FuzzReadTablePlainCSV: wherever the one-pass reader of plain CSV files
// takes a file, it reads the same table as encoding/csv does.
func FuzzReadTablePlainCSV(f *testing.F) {
	for _, s := range []string{
		"store,period,sales\nA,2024-01,120.5\nA,2024-02,\n",
		"store;period;sales\r\nA;2024-01;1\r\n\r\nB;2024-01;x\r\n",
		"a\tb\n1\t2\n3\tNaN\n1e400\t4\n",
		"a,b\n1,2\n\n3\n",
		"a,b\n1,2,3\n",
		"a,b\n,\n,2\n7,\r",
		"k,v\n12,1\n13,2\nA1,3\n",
		"k,v\n",
	} {
		f.Add([]byte(s))
	}
	f.Fuzz(func(t *testing.T, data []byte) {
		if bytes.IndexByte(data, 0) >= 0 {
			return
		}
		fast, ok := readTablePlainCSV(data)
		if !ok {
			return
		}
		slow, err := readTableCSVRecords(data)
		if err != nil {
			t.Fatalf("plain reader read %q, encoding/csv refuses it: %v", data, err)
		}
		if len(fast.Columns) != len(slow.Columns) {
			t.Fatalf("%q: %d columns, encoding/csv %d", data, len(fast.Columns), len(slow.Columns))
		}
		for j, a := range fast.Columns {
			b := slow.Columns[j]
			if a.Name != b.Name || a.Type != b.Type || len(a.Strings) != len(b.Strings) || len(a.Floats) != len(b.Floats) {
				t.Fatalf("%q column %d: %q %v (%d, %d), encoding/csv %q %v (%d, %d)", data, j,
					a.Name, a.Type, len(a.Strings), len(a.Floats), b.Name, b.Type, len(b.Strings), len(b.Floats))
			}
			for i := range a.Strings {
				if a.Strings[i] != b.Strings[i] {
					t.Fatalf("%q column %d row %d: %q, encoding/csv %q", data, j, i, a.Strings[i], b.Strings[i])
				}
			}
			for i := range a.Floats {
				if x, y := a.Floats[i], b.Floats[i]; x != y && !(x != x && y != y) {
					t.Fatalf("%q column %d row %d: %v, encoding/csv %v", data, j, i, x, y)
				}
			}
			rows := len(a.Strings) + len(a.Floats)
			for i := 0; i < rows; i++ {
				if (a.Null != nil && a.Null[i]) != (b.Null != nil && b.Null[i]) {
					t.Fatalf("%q column %d row %d: null %v, encoding/csv %v", data, j, i, a.Null, b.Null)
				}
			}
		}
	})
}
