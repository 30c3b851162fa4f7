package report

import (
	"math"

	"trueup/tableio"
)

// accuracyTables names the backtest's tables the report shows, in the
// order it shows them, when an output folder has them. This is the one
// place the report knows their names; each is shown as it is (a table,
// and a bar chart of its last numeric column by its first text columns).
var accuracyTables = []string{"scores", "backtest", "drivers"}

// maxAccuracyRows caps the rows of one accuracy table carried into the
// report.
const maxAccuracyRows = 2000

// readAccuracy reads the accuracy tables present in dir; none present is
// no error.
func readAccuracy(dir string) ([]Table, error) {
	var out []Table
	for _, name := range accuracyTables {
		t, err := readTable(dir, name)
		if err != nil {
			return nil, err
		}
		if t != nil {
			out = append(out, asTable(name, t))
		}
	}
	return out, nil
}

// asTable carries a table as text and numbers (null as nil).
func asTable(name string, t *tableio.Table) Table {
	out := Table{Name: name}
	for _, c := range t.Columns {
		out.Columns = append(out.Columns, c.Name)
	}
	for r := 0; r < min(numRows(t), maxAccuracyRows); r++ {
		row := make([]any, len(t.Columns))
		for j := range t.Columns {
			c := &t.Columns[j]
			switch {
			case c.Null != nil && c.Null[r]:
			case c.Type == tableio.String || c.Type == tableio.Date:
				row[j] = cell(c, r)
			default:
				if v := number(c, r); !math.IsNaN(v) && !math.IsInf(v, 0) {
					row[j] = v
				}
			}
		}
		out.Rows = append(out.Rows, row)
	}
	return out
}
