package report

import (
	"math"

	"trueup/tableio"
)

// accuracyTables names the backtest's tables the report shows when an
// output folder has them; this is the one place the report knows their
// names and columns. scores has level (null: the mean over levels),
// method, step (null: all steps), mase, rmsse, bias, crps, coverage_L per
// interval level L and energy_score (headline rows only); drivers has method, ancestor_level, ancestor, level,
// node, rank, abs_error, net_error and share. The page draws both (see
// report.js, "Accuracy"); the recommendation comes from the backtest's
// run.json. Any other table named here would be shown as a plain table.
var accuracyTables = []string{"scores", "drivers"}

// keepAccuracyRow says whether a row of an accuracy table is carried
// into the report: scores over all steps only, and the ten largest
// drivers of each group.
func keepAccuracyRow(name string, t *tableio.Table, r int) bool {
	switch name {
	case "scores":
		if c := column(t, "step"); c != nil {
			return math.IsNaN(number(c, r)) // null: the score over all steps
		}
	case "drivers":
		if c := column(t, "rank"); c != nil {
			return number(c, r) <= 10
		}
	}
	return true
}

// maxAccuracyRows caps the rows of one accuracy table carried into the
// report.
const maxAccuracyRows = 5000

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

// asTable carries the kept rows of a table as text and numbers (null as
// nil).
func asTable(name string, t *tableio.Table) Table {
	out := Table{Name: name}
	for _, c := range t.Columns {
		out.Columns = append(out.Columns, c.Name)
	}
	for r := 0; r < numRows(t) && len(out.Rows) < maxAccuracyRows; r++ {
		if !keepAccuracyRow(name, t, r) {
			continue
		}
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
