package tableio

import (
	"encoding/csv"
	"os"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
)

// formulaCells are texts a spreadsheet would run as formulas (the cell
// starts listed by OWASP's "CSV Injection" page, from memory: = + - @
// tab CR), texts that start with a quote, and texts left alone.
var formulaCells = []string{"=HYPERLINK(\"x\")", "+1", "-5", "@SUM(A1)", "\tx", "\rx", "'=x", "''", "'s-Hertogenbosch", "'", "plain", "a=b"}

// TestCSVTextIsProtectedAndReadBack: CSV cells a spreadsheet would run as
// formulas are written after a single quote, the rest as they are, and
// ReadTable and Read give the original text back. Before, the cells were
// written verbatim.
func TestCSVTextIsProtectedAndReadBack(t *testing.T) {
	n := len(formulaCells)
	tab := &Table{Columns: []Column{
		{Name: "period", Type: String, Strings: repeat("2024-01", n)},
		{Name: "=store", Type: String, Strings: formulaCells},
		{Name: "sales", Type: Float64, Floats: make([]float64, n)},
	}}
	path := filepath.Join(t.TempDir(), "t.csv")
	if err := WriteTable(path, tab, CSV); err != nil {
		t.Fatal(err)
	}
	raw := csvRecords(t, path)
	want := []string{"'=HYPERLINK(\"x\")", "'+1", "'-5", "'@SUM(A1)", "'\tx", "'\rx", "''=x", "'''", "'s-Hertogenbosch", "'", "plain", "a=b"}
	if raw[0][1] != "'=store" {
		t.Errorf("column name written %q", raw[0][1])
	}
	for i, w := range want {
		if got := raw[i+1][1]; got != w {
			t.Errorf("%q written as %q, want %q", formulaCells[i], got, w)
		}
	}
	back, err := ReadTable(path, "")
	if err != nil {
		t.Fatal(err)
	}
	if c := back.Columns[1]; c.Name != "=store" || !reflect.DeepEqual(c.Strings, formulaCells) {
		t.Errorf("ReadTable: %q %q", c.Name, c.Strings)
	}
	// Read refuses the tab and CR keys (control characters); the others
	// come back as they were.
	keep := &Table{Columns: make([]Column, 3)}
	copy(keep.Columns, tab.Columns)
	var keys []string
	for _, s := range formulaCells {
		if CheckKeyText(s) == nil {
			keys = append(keys, s)
		}
	}
	keep.Columns[0].Strings, keep.Columns[1].Strings, keep.Columns[2].Floats = repeat("2024-01", len(keys)), keys, make([]float64, len(keys))
	if err := WriteTable(path, keep, CSV); err != nil {
		t.Fatal(err)
	}
	r, err := Read(path, ReadOptions{Time: "period", Value: "sales", Keys: []string{"=store"}})
	if err != nil {
		t.Fatal(err)
	}
	if got := keysOf(r, 0); !reflect.DeepEqual(got, keys) {
		t.Errorf("Read: %q, want %q", got, keys)
	}
}

// TestVerbatimCSV: with VerbatimCSV every cell is written as it is.
func TestVerbatimCSV(t *testing.T) {
	tab := &Table{Columns: []Column{{Name: "=k", Type: String, Strings: formulaCells}}}
	path := filepath.Join(t.TempDir(), "t.csv")
	if err := WriteTableWith(path, tab, CSV, WriteOptions{VerbatimCSV: true}); err != nil {
		t.Fatal(err)
	}
	raw := csvRecords(t, path)
	if raw[0][0] != "=k" {
		t.Errorf("column name written %q", raw[0][0])
	}
	for i, s := range formulaCells {
		if got := raw[i+1][0]; got != s && !(s == "\rx" && got == "\nx") { // encoding/csv reads a quoted CR as LF
			t.Errorf("%q written as %q", s, got)
		}
	}
}

// csvRecords reads a CSV file with encoding/csv, as it is.
func csvRecords(t *testing.T, path string) [][]string {
	t.Helper()
	data, err := os.ReadFile(path)
	if err != nil {
		t.Fatal(err)
	}
	recs, err := csv.NewReader(strings.NewReader(string(data))).ReadAll()
	if err != nil {
		t.Fatal(err)
	}
	return recs
}

func repeat(s string, n int) []string {
	out := make([]string, n)
	for i := range out {
		out[i] = s
	}
	return out
}
