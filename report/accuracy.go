package report

import (
	"math"

	"trueup/tableio"
)

// accuracyTables names the backtest's tables the report shows when an
// output folder has them; this is the one place the report knows their
// names and columns. scores has level (null: the mean over levels),
// method, step (null: all steps), mase, rmsse, bias, crps, coverage_L per
// interval level L and energy_score (headline rows only); drivers has
// method, parent_level, parent, child_level, child, rank, abs_error,
// net_error and share (a folder written before parent and child named
// them has ancestor_level, ancestor, level and node, read as the new
// names: see oldColumns). The page draws both (see
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

// oldColumns maps, per accuracy table, a column name an earlier release
// wrote to its name now, and the column whose presence marks that
// release's layout (drivers once had level and node for the child's, a
// name the current table does not use in that sense).
var oldColumns = map[string]struct {
	marker string
	names  map[string]string
}{
	"drivers": {marker: "ancestor", names: map[string]string{
		"ancestor_level": "parent_level", "ancestor": "parent", "level": "child_level", "node": "child"}},
}

// currentName returns the name column c of table name has now, given the
// table's columns.
func currentName(name string, t *tableio.Table, c string) string {
	old, ok := oldColumns[name]
	if !ok || column(t, old.marker) == nil {
		return c
	}
	if now, ok := old.names[c]; ok {
		return now
	}
	return c
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
		out.Columns = append(out.Columns, currentName(name, t, c.Name))
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
