package engine

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"

	"trueup/hierarchy"
	"trueup/inputerr"
	"trueup/tableio"
)

// nodeTable is an input table reduced to one node key per row (codes into
// per-column dictionaries), the period label and the named value columns.
type nodeTable struct {
	path    string
	t       *tableio.Table
	attrs   []string
	keyCols []string           // the column of each attribute (see keyColumnIn)
	dicts   []map[string]int32 // per attribute: value → code ("" is code 0)
	values  [][]string         // per attribute: code → value
	codes   [][]int32          // per attribute, per row
	// period holds each row's period: as read (days for dates) until
	// atGrain puts them at the tables' grain.
	period  []tableio.Period
	notes   []string // how the periods were read (see tableio.ColumnPeriods)
	rows    int
	columns map[string]int
}

// newNodeTable finds the key columns, period and the value column want.
func newNodeTable(path string, t *tableio.Table, attrs []string, want string) (*nodeTable, error) {
	nt := &nodeTable{path: path, t: t, attrs: attrs, columns: map[string]int{}}
	for i, c := range t.Columns {
		nt.columns[c.Name] = i
	}
	var names []string
	for _, c := range t.Columns {
		names = append(names, c.Name)
	}
	for _, a := range attrs {
		col, err := keyColumnIn(nt.columns, a, want)
		if err != nil {
			return nil, &inputerr.Error{File: path, Column: a, Err: err}
		}
		nt.keyCols = append(nt.keyCols, col)
	}
	for _, need := range append(append([]string(nil), nt.keyCols...), "period", want) {
		if _, ok := nt.columns[need]; !ok {
			return nil, &inputerr.Error{File: path, Column: need, Msg: fmt.Sprintf("no such column (columns: %s)", strings.Join(names, ", "))}
		}
	}
	if len(t.Columns) > 0 {
		nt.rows = columnLen(t.Columns[0])
	}
	if nt.rows == 0 {
		return nil, &inputerr.Error{File: path, Msg: "no rows"}
	}
	for i, a := range attrs {
		col := t.Columns[nt.columns[nt.keyCols[i]]]
		dict := map[string]int32{"": 0}
		vals := []string{""}
		codes := make([]int32, nt.rows)
		for r := 0; r < nt.rows; r++ {
			s := cellString(col, r)
			code, ok := dict[s]
			if !ok {
				if err := tableio.CheckKeyText(s); err != nil {
					return nil, &inputerr.Error{File: path, Row: r + 1, Column: a, Err: err}
				}
				code = int32(len(vals))
				dict[s] = code
				vals = append(vals, s)
			}
			codes[r] = code
		}
		nt.dicts = append(nt.dicts, dict)
		nt.values = append(nt.values, vals)
		nt.codes = append(nt.codes, codes)
	}
	// Periods go through the reader history goes through, so that every
	// form a sales table may use (labels, dates, timestamps) reads here.
	var err error
	if nt.period, nt.notes, err = tableio.ColumnPeriods(t.Columns[nt.columns["period"]], tableio.TimeAuto); err != nil {
		if e, ok := err.(*inputerr.Error); ok {
			e.File = path
		}
		return nil, err
	}
	return nt, nil
}

// atGrain puts the periods at grain g, the grain found over all the
// tables read together (see tablesGrain).
func (nt *nodeTable) atGrain(g tableio.Grain) error {
	for r, p := range nt.period {
		q, err := p.Coarsen(g)
		if err != nil {
			return &inputerr.Error{File: nt.path, Row: r + 1, Column: "period", Err: err}
		}
		nt.period[r] = q
	}
	return nil
}

// tablesGrain finds the grain of the periods of the tables read together
// (base forecasts and residuals) as the grain of a sales table is found
// (see periodGrain): first-of-month dates a month apart are months.
func tablesGrain(tables ...*nodeTable) (tableio.Grain, error) {
	var all []tableio.Period
	for _, nt := range tables {
		if nt != nil {
			all = append(all, nt.period...)
		}
	}
	g, _, err := periodGrain(tables[0].path, all)
	return g, err
}

// keyTypes returns the column type of each key attribute (Int64 for an
// integer column, String otherwise).
func (nt *nodeTable) keyTypes() []tableio.ColumnType {
	out := make([]tableio.ColumnType, len(nt.attrs))
	for a, name := range nt.keyCols {
		if nt.t.Columns[nt.columns[name]].Type == tableio.Int64 {
			out[a] = tableio.Int64
		}
	}
	return out
}

// keyColumnIn names the column of a table (columns: name → position) that
// holds key attribute attr: KeyColumn(attr) as trueup writes it when the
// table has that column, else attr itself, unless attr is a column the
// table is read for (period, the value column want, base_variance).
func keyColumnIn(columns map[string]int, attr, want string) (string, error) {
	prefixed := KeyColumn(attr)
	if _, ok := columns[prefixed]; ok || prefixed == attr {
		return prefixed, nil
	}
	if attr == "period" || attr == want || attr == "base_variance" {
		return "", fmt.Errorf("the key column %q must be named %q here, since %q is read as the %s column", attr, prefixed, attr, attr)
	}
	return attr, nil
}

func (nt *nodeTable) has(col string) bool { _, ok := nt.columns[col]; return ok }

// remap re-expresses the key codes in the dictionaries of another table,
// so that both index the same node map. Values unknown there get codes
// past its dictionary and match no node.
func (nt *nodeTable) remap(dicts []map[string]int32) error {
	for a := range nt.attrs {
		to := make([]int32, len(nt.values[a]))
		next := int32(len(dicts[a]))
		for code, v := range nt.values[a] {
			c, ok := dicts[a][v]
			if !ok {
				c = next
				next++
			}
			to[code] = c
		}
		for r, c := range nt.codes[a] {
			nt.codes[a][r] = to[c]
		}
		// Keep values indexable by the new codes for messages.
		vals := make([]string, next)
		for code, v := range nt.values[a] {
			vals[to[code]] = v
		}
		nt.values[a] = vals
	}
	return nil
}

// bottomKeys lists the distinct keys with every attribute set, in first
// appearance order.
func (nt *nodeTable) bottomKeys() [][]string {
	seen := map[string]bool{}
	var out [][]string
	buf := make([]byte, 4*len(nt.attrs))
	for r := 0; r < nt.rows; r++ {
		full := true
		for a := range nt.attrs {
			full = full && nt.codes[a][r] != 0
		}
		if !full || seen[string(nt.rowKey(buf, r))] {
			continue
		}
		seen[string(nt.rowKey(buf, r))] = true
		key := make([]string, len(nt.attrs))
		for a := range nt.attrs {
			key[a] = nt.values[a][nt.codes[a][r]]
		}
		out = append(out, key)
	}
	return out
}

// rowKey packs row r's key codes into buf.
func (nt *nodeTable) rowKey(buf []byte, r int) []byte {
	for a := range nt.attrs {
		c := nt.codes[a][r]
		buf[4*a], buf[4*a+1], buf[4*a+2], buf[4*a+3] = byte(c), byte(c>>8), byte(c>>16), byte(c>>24)
	}
	return buf
}

// rowError is an input error about data row r (0-based) of the table,
// with its position fields set: File, Row (data rows count from 1, the
// header of a CSV file not being a row) and Column when one is at fault.
func (nt *nodeTable) rowError(r int, column, format string, args ...any) error {
	return &inputerr.Error{File: nt.path, Row: r + 1, Column: column, Msg: fmt.Sprintf(format, args...)}
}

// rowLabel names row r's node for messages, by its one label.
func (nt *nodeTable) rowLabel(r int) string {
	key := make([]string, len(nt.attrs))
	for a := range nt.attrs {
		key[a] = nt.values[a][nt.codes[a][r]]
	}
	return hierarchy.KeyLabel(nt.attrs, key)
}

// nodeIndex maps packed key codes (in the base table's dictionaries) to
// node indices, −1 for a key that is not a node.
type nodeIndex struct {
	st *hierarchy.Structure
	m  map[string]int
}

// newNodeIndex looks up each distinct key of table nt in the structure.
func newNodeIndex(st *hierarchy.Structure, nt *nodeTable) nodeIndex {
	idx := nodeIndex{st: st, m: make(map[string]int, len(st.Nodes))}
	buf := make([]byte, 4*len(nt.attrs))
	key := make([]string, len(nt.attrs))
	for r := 0; r < nt.rows; r++ {
		packed := nt.rowKey(buf, r)
		if _, done := idx.m[string(packed)]; done {
			continue
		}
		for a := range nt.attrs {
			key[a] = nt.values[a][nt.codes[a][r]]
		}
		i, ok := st.Lookup(key)
		if !ok {
			i = -1
		}
		idx.m[string(packed)] = i
	}
	return idx
}

// sortPeriods returns the distinct periods in time order. Every period
// is of one grain (see atGrain).
func sortPeriods(all []tableio.Period) []tableio.Period {
	seen := map[tableio.Period]bool{}
	var out []tableio.Period
	for _, p := range all {
		if !seen[p] {
			seen[p] = true
			out = append(out, p)
		}
	}
	sort.Slice(out, func(a, b int) bool { return out[a].Index < out[b].Index })
	return out
}

// fillMode says which rows a table must have.
type fillMode int

const (
	// everyPeriod: every node has a finite value for every period (base
	// forecasts, variances).
	everyPeriod fillMode = iota
	// sameEnd: every node has values, missing (absent or null) ones count
	// as NaN, and every node's last period is the last period of the file
	// (residuals: a node may start late, all end at the forecast origin).
	sameEnd
)

// matrix arranges column col as nodes × periods (sorted) under mode.
func (nt *nodeTable) matrix(nodes nodeIndex, col string, mode fillMode) ([][]float64, []tableio.Period, error) {
	st := nodes.st
	periods := sortPeriods(nt.period)
	pos := make(map[tableio.Period]int, len(periods))
	for k, p := range periods {
		pos[p] = k
	}
	n, h := len(st.Nodes), len(periods)
	out := make([][]float64, n)
	buf := make([]float64, n*h)
	for i := range buf {
		buf[i] = math.NaN()
	}
	for i := range out {
		out[i] = buf[i*h : (i+1)*h]
	}
	seen := make([]bool, n*h)
	vc := nt.t.Columns[nt.columns[col]]
	key := make([]byte, 4*len(nt.attrs))
	for r := 0; r < nt.rows; r++ {
		i, ok := nodes.m[string(nt.rowKey(key, r))]
		if !ok || i < 0 {
			return nil, nil, nt.rowError(r, "", "%s is not a node of the structure built from the bottom series of the base forecasts (a key is set below an aggregated one, or the bottom series is not in the base forecasts)", nt.rowLabel(r))
		}
		k := pos[nt.period[r]]
		if seen[i*h+k] {
			return nil, nil, nt.rowError(r, "period", "%s has a second row for period %s", nt.rowLabel(r), nt.period[r])
		}
		seen[i*h+k] = true
		v, null, err := cellFloat(vc, r)
		if err != nil {
			return nil, nil, nt.rowError(r, col, "%v", err)
		}
		if null && mode != everyPeriod {
			continue
		}
		if null || math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, nil, nt.rowError(r, col, "%s %s at %s is %s", nt.rowLabel(r), col, nt.period[r], describe(v, null))
		}
		out[i][k] = v
	}
	for k := 1; k < len(periods); k++ {
		if periods[k].Index != periods[k-1].Index+1 {
			return nil, nil, &inputerr.Error{File: nt.path, Column: "period", Msg: fmt.Sprintf("periods %s to %s are missing", periods[k-1].Next(1), periods[k].Next(-1))}
		}
	}
	var missing []string
	for i := 0; i < n; i++ {
		last, count := -1, 0
		for k, ok := range seen[i*h : (i+1)*h] {
			if ok {
				last = k
				count++
			}
		}
		switch {
		case count == 0 || mode == everyPeriod && count < h:
			missing = append(missing, st.Label(i))
		case mode == sameEnd && last != h-1:
			return nil, nil, &inputerr.Error{File: nt.path, Column: "period", Msg: fmt.Sprintf("residual periods differ between nodes: %s ends at %s, others at %s (residuals must all end at the forecast origin)", st.Label(i), periods[last], periods[h-1])}
		}
	}
	if len(missing) > 0 {
		what := "a row for every period"
		if mode == sameEnd {
			what = "residuals"
		}
		return nil, nil, &inputerr.Error{File: nt.path, Msg: fmt.Sprintf("%d nodes of the structure lack %s, e.g. %s", len(missing), what, strings.Join(missing[:min(5, len(missing))], "; "))}
	}
	return out, periods, nil
}

func describe(v float64, null bool) string {
	if null {
		return "missing (empty, null or NaN)"
	}
	return strconv.FormatFloat(v, 'g', -1, 64)
}

func columnLen(c tableio.Column) int {
	switch c.Type {
	case tableio.String:
		return len(c.Strings)
	case tableio.Float64:
		return len(c.Floats)
	default:
		return len(c.Ints)
	}
}

// cellString reads a key or period cell as text; null is "".
func cellString(c tableio.Column, r int) string {
	if c.Null != nil && c.Null[r] {
		return ""
	}
	switch c.Type {
	case tableio.String:
		return strings.TrimSpace(c.Strings[r])
	case tableio.Int64:
		return strconv.FormatInt(c.Ints[r], 10)
	case tableio.Date: // days since 1970-01-01
		return tableio.Period{Grain: tableio.Day, Index: int(c.Ints[r])}.String()
	default:
		return strconv.FormatFloat(c.Floats[r], 'g', -1, 64)
	}
}

// cellFloat reads a numeric cell.
func cellFloat(c tableio.Column, r int) (float64, bool, error) {
	if c.Null != nil && c.Null[r] {
		return math.NaN(), true, nil
	}
	switch c.Type {
	case tableio.Float64:
		return c.Floats[r], false, nil
	case tableio.Int64:
		return float64(c.Ints[r]), false, nil
	default:
		return 0, false, fmt.Errorf("%q is not a number", c.Strings[r])
	}
}

// oneStepVariance is each node's mean squared residual, used at every step
// when the base file has no variance column.
func oneStepVariance(res [][]float64, h int) [][]float64 {
	out := make([][]float64, len(res))
	for i, r := range res {
		var ss float64
		var c int
		for _, e := range r {
			if e == e {
				ss += e * e
				c++
			}
		}
		v := 0.0
		if c > 0 {
			v = ss / float64(c)
		}
		out[i] = make([]float64, h)
		for k := range out[i] {
			out[i][k] = v
		}
	}
	return out
}
