package main

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"sort"
	"strconv"
	"strings"
	"time"

	"github.com/spf13/cobra"
	"gonum.org/v1/gonum/stat/distuv"

	"trueup/engine"
	"trueup/hierarchy"
	"trueup/inputerr"
	"trueup/reconcile"
	"trueup/tableio"
)

// reconcileConfig holds the flags of trueup reconcile.
type reconcileConfig struct {
	base, residuals, history string
	inputFormat              string
	nest                     []string
	method, cov, at          string
	nonnegative              bool
	paths                    int
	levels                   string
	out, formats             string
}

func newReconcileCmd() *cobra.Command {
	var c reconcileConfig
	cmd := &cobra.Command{
		Use:   "reconcile --base FILE --nest CHAIN [--nest CHAIN ...]",
		Short: "Reconcile base forecasts made elsewhere so that totals equal the sum of their parts",
		Long: `Reads base forecasts for every node of a grouped structure (one row per node
and period) and writes coherent forecasts: every total equals the sum of its
parts.

--base has the key columns named by --nest (empty or null where a node
aggregates over that column), a period column and a base column, and may
have a variance column (the base forecast-error variance of each step).
--residuals has the key columns, period and residual: in-sample one-step
errors of every node, needed by --cov variance, sample and shrink and for
intervals. --history has the key columns, period and value for the bottom
series, needed by top-down-hist and top-down-avg.

Intervals come from one joint Gaussian distribution of the reconciled
errors, so the interval of a total is not the sum of its parts' intervals.
Without a variance column every step uses the one-step residual variance,
so intervals do not widen with the horizon.

Forecasts are estimates. Review them, and their intervals, before they go
into a plan.`,
		Example: `  trueup reconcile --base base.parquet --residuals residuals.parquet \
      --nest state,store --nest category,department,item --method mint --out plan

  # keep store totals, split them by forecast proportions, non-negative mint
  trueup reconcile --base base.csv --nest region,store --nest category \
      --method middle-out --at region+store
  trueup reconcile --base base.csv --residuals res.csv --nest region,store \
      --method mint --cov shrink --nonnegative --format csv,parquet`,
		Args: noArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			if c.base == "" {
				return &usageError{errMissing("--base")}
			}
			return runReconcile(cmd, c)
		},
	}
	fl := cmd.Flags()
	fl.StringVar(&c.base, "base", "", "base forecasts: key columns, period, base [, variance]")
	fl.StringVar(&c.residuals, "residuals", "", "in-sample one-step residuals: key columns, period, residual")
	fl.StringVar(&c.history, "history", "", "bottom-series sales history: key columns, period, value (top-down-hist, top-down-avg)")
	fl.StringVar(&c.inputFormat, "input-format", "", "read the inputs as parquet, csv or arrow whatever their extension")
	fl.StringArrayVar(&c.nest, "nest", nil, "key columns of one chain, coarse to fine, comma-separated (repeatable)")
	fl.StringVar(&c.method, "method", "mint", "bottom-up, top-down-hist, top-down-avg, top-down-fcst, middle-out, mint")
	fl.StringVar(&c.cov, "cov", "", "covariance for mint: identity, structural, variance, sample, shrink (default shrink)")
	fl.StringVar(&c.at, "at", "", "level to reconcile from with middle-out, e.g. region+category")
	fl.BoolVar(&c.nonnegative, "nonnegative", false, "keep reconciled bottom-level forecasts at or above zero (mint)")
	fl.StringVar(&c.levels, "levels", "80,95", "prediction interval levels in percent, comma-separated")
	fl.IntVar(&c.paths, "paths", reconcile.DefaultPaths, fmt.Sprintf("sample paths behind mint's interval widths above %d nodes (more: slower, closer)", reconcile.DenseMaxNodes))
	fl.StringVar(&c.out, "out", "trueup-reconciled", "directory for forecasts and run.json")
	fl.StringVar(&c.formats, "format", "parquet", "output formats, comma-separated: parquet, csv, arrow")
	return cmd
}

func runReconcile(cmd *cobra.Command, c reconcileConfig) error {
	start := time.Now()
	levels, err := parseLevels(c.levels)
	if err != nil {
		return err
	}
	formats, err := tableio.ParseFormats(c.formats)
	if err != nil {
		return err
	}
	method, err := reconcile.ByName(c.method, c.cov, c.at)
	if err != nil {
		return err
	}
	if c.paths < 1 {
		return &usageError{fmt.Errorf("--paths must be at least 1, got %d", c.paths)}
	}
	if c.nonnegative && c.method != "mint" {
		return inputerr.New("--nonnegative applies to --method mint only")
	}
	chains, err := hierarchy.ParseNest(c.nest)
	if err != nil {
		return err
	}
	var attrs []string
	for _, ch := range chains {
		attrs = append(attrs, ch...)
	}
	format := tableio.Format(c.inputFormat)

	timings := map[string]float64{}
	t0 := time.Now()
	baseT, err := tableio.ReadTable(c.base, format)
	if err != nil {
		return err
	}
	base, err := newNodeTable(c.base, baseT, attrs, "base")
	if err != nil {
		return err
	}
	st, err := hierarchy.Build(chains, base.bottomKeys())
	if err != nil {
		return err
	}
	nodes := newNodeIndex(st, base.dicts)
	p := reconcile.Problem{Structure: st, Nonnegative: c.nonnegative, Paths: c.paths}
	var periods []string
	if p.Base, periods, err = base.matrix(nodes, "base", everyPeriod); err != nil {
		return err
	}
	hasVar := base.has("variance")
	if hasVar {
		if p.BaseVar, _, err = base.matrix(nodes, "variance", everyPeriod); err != nil {
			return err
		}
	}
	baseT = nil
	var resPeriods []string
	if c.residuals != "" {
		rt, err := tableio.ReadTable(c.residuals, format)
		if err != nil {
			return err
		}
		res, err := newNodeTable(c.residuals, rt, attrs, "residual")
		if err != nil {
			return err
		}
		if err := res.remap(base.dicts); err != nil {
			return err
		}
		if p.Residuals, resPeriods, err = res.matrix(nodes, "residual", sameEnd); err != nil {
			return err
		}
		if !hasVar {
			p.BaseVar = oneStepVariance(p.Residuals, len(periods))
			fmt.Fprintln(cmd.ErrOrStderr(), "trueup: no variance column in --base: intervals use the one-step residual variance at every step")
		}
	}
	if c.history != "" {
		ht, err := tableio.ReadTable(c.history, format)
		if err != nil {
			return err
		}
		hist, err := newNodeTable(c.history, ht, attrs, "value")
		if err != nil {
			return err
		}
		if err := hist.remap(base.dicts); err != nil {
			return err
		}
		var bottom [][]float64
		if bottom, _, err = hist.matrix(nodes, "value", bottomOnly); err != nil {
			return err
		}
		// Aggregate the bottom rows to every node; missing values count as
		// no sales (hierarchy.SumMatrix.Aggregate).
		p.History = st.S.Aggregate(bottom[st.BottomOffset():])
	}
	timings["read"] = time.Since(t0).Seconds()

	t0 = time.Now()
	sol, err := method.Reconcile(p)
	if err != nil {
		return err
	}
	timings["reconcile"] = time.Since(t0).Seconds()

	t0 = time.Now()
	if err := os.MkdirAll(c.out, 0o755); err != nil {
		return fmt.Errorf("create output directory: %w", err)
	}
	table := reconciledTable(st, periods, p.Base, sol, levels)
	var files []string
	for _, f := range formats {
		path := filepath.Join(c.out, "forecasts"+f.Ext())
		if err := tableio.WriteTable(path, table, f); err != nil {
			return err
		}
		files = append(files, path)
	}
	timings["write"] = time.Since(t0).Seconds()
	timings["total"] = time.Since(start).Seconds()

	cov := c.cov
	if c.method == "mint" && cov == "" {
		cov = string(reconcile.CovShrink)
	}
	run := map[string]any{
		"command": "reconcile", "version": engine.Version,
		"inputs": map[string]string{"base": c.base, "residuals": c.residuals, "history": c.history},
		"method": method.Name(), "cov": cov, "at": c.at, "nonnegative": c.nonnegative,
		"levels": levels, "nodes": len(st.Nodes), "bottom": st.NumBottom(),
		"horizon": len(periods), "residual_periods": len(resPeriods),
		"notes": sol.Notes, "files": files, "timings_seconds": timings,
	}
	data, err := json.MarshalIndent(run, "", "  ")
	if err != nil {
		return err
	}
	if err := tableio.WriteFileAtomic(filepath.Join(c.out, "run.json"), append(data, '\n')); err != nil {
		return err
	}
	w := cmd.OutOrStdout()
	fmt.Fprintf(w, "reconciled %d nodes (%d bottom) × %d periods with %s", len(st.Nodes), st.NumBottom(), len(periods), method.Name())
	if cov != "" {
		fmt.Fprintf(w, " (%s)", cov)
	}
	if l, ok := sol.Notes["lambda"]; ok {
		fmt.Fprintf(w, ", shrinkage λ = %.4f", l)
	}
	fmt.Fprintf(w, " in %.1fs\n", timings["total"])
	for _, f := range files {
		fmt.Fprintln(w, "wrote", f)
	}
	return nil
}

// nodeTable is an input table reduced to one node key per row (codes into
// per-column dictionaries), the period label and the named value columns.
type nodeTable struct {
	path    string
	t       *tableio.Table
	attrs   []string
	dicts   []map[string]int32 // per attribute: value → code ("" is code 0)
	values  [][]string         // per attribute: code → value
	codes   [][]int32          // per attribute, per row
	period  []string
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
	for _, need := range append(append([]string(nil), attrs...), "period", want) {
		if _, ok := nt.columns[need]; !ok {
			return nil, inputerr.New("%s has no column %q (columns: %s)", path, need, strings.Join(names, ", "))
		}
	}
	if len(t.Columns) > 0 {
		nt.rows = columnLen(t.Columns[0])
	}
	if nt.rows == 0 {
		return nil, inputerr.New("%s has no rows", path)
	}
	for _, a := range attrs {
		col := t.Columns[nt.columns[a]]
		dict := map[string]int32{"": 0}
		vals := []string{""}
		codes := make([]int32, nt.rows)
		for r := 0; r < nt.rows; r++ {
			s := cellString(col, r)
			code, ok := dict[s]
			if !ok {
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
	pc := t.Columns[nt.columns["period"]]
	nt.period = make([]string, nt.rows)
	for r := range nt.period {
		nt.period[r] = cellString(pc, r)
		if nt.period[r] == "" {
			return nil, inputerr.New("%s row %d: empty period", path, r+2)
		}
	}
	return nt, nil
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

// rowLabel names row r's node for messages.
func (nt *nodeTable) rowLabel(r int) string {
	var parts []string
	for a, name := range nt.attrs {
		if v := nt.values[a][nt.codes[a][r]]; v != "" {
			parts = append(parts, name+"="+v)
		}
	}
	if len(parts) == 0 {
		return "total"
	}
	return strings.Join(parts, " ")
}

// nodeIndex maps packed key codes (in the base table's dictionaries) to
// node indices.
type nodeIndex struct {
	st *hierarchy.Structure
	m  map[string]int
}

func newNodeIndex(st *hierarchy.Structure, dicts []map[string]int32) nodeIndex {
	idx := nodeIndex{st: st, m: make(map[string]int, len(st.Nodes))}
	buf := make([]byte, 4*len(st.Attrs))
	for i, node := range st.Nodes {
		for a, v := range node.Key {
			c := dicts[a][v]
			buf[4*a], buf[4*a+1], buf[4*a+2], buf[4*a+3] = byte(c), byte(c>>8), byte(c>>16), byte(c>>24)
		}
		idx.m[string(buf)] = i
	}
	return idx
}

// sortPeriods orders period labels: by time when every label is a
// period trueup reads (2024-03, 2024-Q1, 2024-W07, 2024-03-31), else by
// number when every label is one, else it is an input error.
func sortPeriods(path string, labels []string) error {
	keys := make(map[string][2]float64, len(labels))
	for _, l := range labels {
		if p, err := tableio.ParsePeriod(l); err == nil {
			keys[l] = [2]float64{float64(p.Grain), float64(p.Index)}
		} else if v, err := strconv.ParseFloat(l, 64); err == nil {
			keys[l] = [2]float64{-1, v}
		} else {
			return inputerr.New("%s: cannot read period %q (use 2024-03-31, 2024-W07, 2024-03, 2024-Q1 or a step number)", path, l)
		}
	}
	for _, l := range labels[1:] {
		if keys[l][0] != keys[labels[0]][0] {
			return inputerr.New("%s: periods %q and %q are of different kinds", path, labels[0], l)
		}
	}
	sort.Slice(labels, func(a, b int) bool { return keys[labels[a]][1] < keys[labels[b]][1] })
	return nil
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
	// bottomOnly: only rows of bottom series are used; missing values are
	// NaN (sales history).
	bottomOnly
)

// matrix arranges column col as nodes × periods (sorted) under mode.
func (nt *nodeTable) matrix(nodes nodeIndex, col string, mode fillMode) ([][]float64, []string, error) {
	st := nodes.st
	use := func(r int) bool { return mode != bottomOnly || nt.isBottom(r) }
	pos := map[string]int{}
	var labels []string
	for r, l := range nt.period {
		if _, ok := pos[l]; !ok && use(r) {
			pos[l] = 0
			labels = append(labels, l)
		}
	}
	if len(labels) == 0 {
		return nil, nil, inputerr.New("%s has no rows for the bottom series", nt.path)
	}
	if err := sortPeriods(nt.path, labels); err != nil {
		return nil, nil, err
	}
	for k, l := range labels {
		pos[l] = k
	}
	n, h := len(st.Nodes), len(labels)
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
		if !use(r) {
			continue
		}
		i, ok := nodes.m[string(nt.rowKey(key, r))]
		if !ok {
			return nil, nil, inputerr.New("%s row %d: %s is not a node of the structure built from the bottom series of --base (a key is set below an aggregated one, or the bottom series is unknown)", nt.path, r+2, nt.rowLabel(r))
		}
		k := pos[nt.period[r]]
		if seen[i*h+k] {
			return nil, nil, inputerr.New("%s row %d: %s has a second row for period %s", nt.path, r+2, nt.rowLabel(r), nt.period[r])
		}
		seen[i*h+k] = true
		v, null, err := cellFloat(vc, r)
		if err != nil {
			return nil, nil, inputerr.New("%s row %d column %s: %v", nt.path, r+2, col, err)
		}
		if null && mode != everyPeriod {
			continue
		}
		if null || math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, nil, inputerr.New("%s row %d: %s %s at %s is %s", nt.path, r+2, nt.rowLabel(r), col, nt.period[r], describe(v, null))
		}
		out[i][k] = v
	}
	if mode == bottomOnly {
		return out, labels, nil
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
			return nil, nil, inputerr.New("%s: residual periods differ between nodes: %s ends at %s, others at %s (residuals must all end at the forecast origin)", nt.path, st.Label(i), labels[last], labels[h-1])
		}
	}
	if len(missing) > 0 {
		what := "a row for every period"
		if mode == sameEnd {
			what = "residuals"
		}
		return nil, nil, inputerr.New("%s: %d nodes of the structure lack %s, e.g. %s", nt.path, len(missing), what, strings.Join(missing[:min(5, len(missing))], "; "))
	}
	return out, labels, nil
}

// isBottom reports whether row r sets every key attribute.
func (nt *nodeTable) isBottom(r int) bool {
	for a := range nt.attrs {
		if nt.codes[a][r] == 0 {
			return false
		}
	}
	return true
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

// reconciledTable has one row per node and period: level, key columns,
// period, step, base, forecast and, with variances, lo_L and hi_L.
func reconciledTable(st *hierarchy.Structure, periods []string, base [][]float64, sol reconcile.Solution, levels []float64) *tableio.Table {
	n, h := len(st.Nodes), len(periods)
	rows := n * h
	cols := []tableio.Column{{Name: "level", Type: tableio.String, Strings: make([]string, 0, rows)}}
	for _, a := range st.Attrs {
		cols = append(cols, tableio.Column{Name: a, Type: tableio.String, Strings: make([]string, 0, rows), Null: make([]bool, 0, rows)})
	}
	period := tableio.Column{Name: "period", Type: tableio.String, Strings: make([]string, 0, rows)}
	step := tableio.Column{Name: "step", Type: tableio.Int64, Ints: make([]int64, 0, rows)}
	bc := tableio.Column{Name: "base", Type: tableio.Float64, Floats: make([]float64, 0, rows)}
	fc := tableio.Column{Name: "forecast", Type: tableio.Float64, Floats: make([]float64, 0, rows)}
	var bounds []tableio.Column
	var z []float64
	if sol.Variance != nil {
		for _, l := range levels {
			z = append(z, distuv.UnitNormal.Quantile(0.5+l/200))
			lab := strconv.FormatFloat(l, 'f', -1, 64)
			bounds = append(bounds,
				tableio.Column{Name: "lo_" + lab, Type: tableio.Float64, Floats: make([]float64, 0, rows)},
				tableio.Column{Name: "hi_" + lab, Type: tableio.Float64, Floats: make([]float64, 0, rows)})
		}
	}
	for i, node := range st.Nodes {
		lv := st.Levels[node.Level].Name
		for k := 0; k < h; k++ {
			cols[0].Strings = append(cols[0].Strings, lv)
			for a, v := range node.Key {
				cols[a+1].Strings = append(cols[a+1].Strings, v)
				cols[a+1].Null = append(cols[a+1].Null, v == "")
			}
			period.Strings = append(period.Strings, periods[k])
			step.Ints = append(step.Ints, int64(k+1))
			bc.Floats = append(bc.Floats, base[i][k])
			f := sol.Forecast[i][k]
			fc.Floats = append(fc.Floats, f)
			if sol.Variance != nil {
				sd := math.Sqrt(math.Max(sol.Variance[i][k], 0))
				for l := range z {
					bounds[2*l].Floats = append(bounds[2*l].Floats, f-z[l]*sd)
					bounds[2*l+1].Floats = append(bounds[2*l+1].Floats, f+z[l]*sd)
				}
			}
		}
	}
	cols = append(cols, period, step, bc, fc)
	return &tableio.Table{Columns: append(cols, bounds...)}
}
