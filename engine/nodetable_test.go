package engine

import (
	"errors"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"trueup/hierarchy"
	"trueup/inputerr"
	"trueup/tableio"
)

// TestLoadTablesRefusesControlCharactersInKeys: a base table whose key
// holds a control character is refused with file, column and row, the key
// shown escaped. Before, "N\x00" passed and became a node of its own.
func TestLoadTablesRefusesControlCharactersInKeys(t *testing.T) {
	path := filepath.Join(t.TempDir(), "base.csv")
	text := "store,period,base\nN01,2024-01,1\nN\x1b[2J,2024-01,2\n,2024-01,3\n"
	if err := os.WriteFile(path, []byte(text), 0o644); err != nil {
		t.Fatal(err)
	}
	_, err := LoadTables(Tables{Base: path, Chains: []hierarchy.Chain{{"store"}}})
	if err == nil || !inputerr.Is(err) {
		t.Fatalf("got %v, want an input error", err)
	}
	for _, want := range []string{path, "row 2", `column "store"`, `"N\x1b[2J"`} {
		if !strings.Contains(err.Error(), want) {
			t.Errorf("%v\ndoes not say %s", err, want)
		}
	}
}

// TestBaseTableErrorsNameThePosition checks the position fields: each problem placed in the third
// data row of a base forecasts table, written as Parquet and as CSV, is an
// input error whose fields name the file, row 3 (data rows count from 1,
// as for the sales table) and the column at fault.
func TestBaseTableErrorsNameThePosition(t *testing.T) {
	type row struct {
		region, store, period string
		base                  float64
	}
	good := []row{{"", "", "2026-01", 30}, {"R1", "", "2026-01", 30}, {"R1", "S1", "2026-01", 10}, {"R1", "S2", "2026-01", 20}}
	cases := []struct {
		name   string
		third  row
		column string
	}{
		{"empty period", row{"R1", "S1", "", 10}, "period"},
		{"not a node", row{"", "S1", "2026-01", 10}, ""},
		{"second row for a period", row{"R1", "", "2026-01", 30}, "period"},
		{"missing value", row{"R1", "S1", "2026-01", math.NaN()}, "base"},
	}
	for _, c := range cases {
		rows := append([]row{}, good...)
		rows[2] = c.third
		if c.name == "second row for a period" {
			rows = append(rows[:2:2], c.third, good[2], good[3])
		}
		tb := &tableio.Table{Columns: []tableio.Column{
			{Name: "region", Type: tableio.String}, {Name: "store", Type: tableio.String},
			{Name: "period", Type: tableio.String}, {Name: "base", Type: tableio.Float64}}}
		for _, r := range rows {
			tb.Columns[0].Strings = append(tb.Columns[0].Strings, r.region)
			tb.Columns[1].Strings = append(tb.Columns[1].Strings, r.store)
			tb.Columns[2].Strings = append(tb.Columns[2].Strings, r.period)
			tb.Columns[3].Floats = append(tb.Columns[3].Floats, r.base)
		}
		for _, f := range []tableio.Format{tableio.Parquet, tableio.CSV} {
			path := filepath.Join(t.TempDir(), "base"+f.Ext())
			if err := tableio.WriteTable(path, tb, f); err != nil {
				t.Fatal(err)
			}
			_, err := LoadTables(Tables{Base: path, Chains: []hierarchy.Chain{{"region", "store"}}})
			var ie *inputerr.Error
			if !errors.As(err, &ie) {
				t.Errorf("%s, %s: %v, want an input error", c.name, f.Ext(), err)
				continue
			}
			if ie.File != path || ie.Row != 3 || ie.Column != c.column {
				t.Errorf("%s, %s: file %q row %d column %q, want %q row 3 column %q (%v)", c.name, f.Ext(), ie.File, ie.Row, ie.Column, path, c.column, err)
			}
		}
	}
	// A missing column names it.
	path := filepath.Join(t.TempDir(), "base.csv")
	tb := &tableio.Table{Columns: []tableio.Column{{Name: "region", Type: tableio.String, Strings: []string{"R1"}},
		{Name: "store", Type: tableio.String, Strings: []string{"S1"}}, {Name: "period", Type: tableio.String, Strings: []string{"2026-01"}}}}
	if err := tableio.WriteTable(path, tb, tableio.CSV); err != nil {
		t.Fatal(err)
	}
	_, err := LoadTables(Tables{Base: path, Chains: []hierarchy.Chain{{"region", "store"}}})
	var ie *inputerr.Error
	if !errors.As(err, &ie) || ie.File != path || ie.Column != "base" {
		t.Errorf("missing column: %v, want an input error naming %s and column base", err, path)
	}
}
