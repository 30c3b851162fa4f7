package report

import (
	"fmt"
	"math"
	"sort"
	"strconv"
	"strings"
	"time"

	"gonum.org/v1/gonum/stat/distuv"

	"trueup/engine"
	"trueup/hierarchy"
	"trueup/internal/numeric"
	"trueup/tableio"
)

// failP is the significance level below which a node's residuals are
// listed as failing the Ljung–Box test (5%, common practice).
const failP = 0.05

// Data is what the report embeds: the run's facts and, per node, the
// numbers of its charts. Series are float32, laid out field by field (all
// nodes' histories, then all base forecasts, …) so that the browser can
// view each as one Float32Array; NaN marks a missing value.
type Data struct {
	Meta   Meta
	Series Series
}

// Meta is the part of the report's data encoded as JSON.
type Meta struct {
	Run       map[string]any `json:"run"`       // run.json less its timings and file list
	Attrs     []string       `json:"attrs"`     // key columns, in table order
	History   []string       `json:"history"`   // history period labels
	Forecast  []string       `json:"forecast"`  // forecast period labels
	Intervals []string       `json:"intervals"` // interval labels, e.g. "80", "95"
	// Z, when set, says that the bounds are not embedded but follow
	// from Series.SD: forecast ∓ Z[v][l]·SD for a node of level v and
	// interval l, the lower bound clamped at zero when ClampAtZero (see
	// compactBounds).
	Z           [][]float64 `json:"z,omitempty"`
	ClampAtZero bool        `json:"clamp_at_zero,omitempty"`
	Lags        int         `json:"lags"`               // ACF and PACF lags per node
	Levels      []Level     `json:"levels"`             // in table order, the total first
	Nodes       []Node      `json:"nodes"`              // in table order
	Failing     []int       `json:"failing"`            // nodes whose residuals fail Ljung–Box, by p-value
	FailP       float64     `json:"fail_p"`             // the significance level of Failing
	Accuracy    []Table     `json:"accuracy,omitempty"` // backtest tables, when present
	Plans       *Plans      `json:"plans,omitempty"`    // plan totals, when the run made them
}

// Level is one level of the structure with its nodes, largest first.
type Level struct {
	Name  string `json:"name"`
	Nodes []int  `json:"nodes"`
}

// Node describes one node: its level, key values and label, model and
// residual check. Numbers that JSON cannot carry (NaN) are nil pointers.
type Node struct {
	Level   int      `json:"level"`
	Key     []string `json:"key"`
	Label   string   `json:"label"`  // the node's one name (hierarchy.KeyLabel), as every table and command gives it
	Volume  float64  `json:"volume"` // sum of its history, or of its forecasts without a history table
	Status  string   `json:"status,omitempty"`
	Family  string   `json:"family,omitempty"`
	Spec    string   `json:"spec,omitempty"`
	Params  string   `json:"params,omitempty"` // JSON text, as in the models table
	AICc    *float64 `json:"aicc,omitempty"`
	Sigma2  *float64 `json:"sigma2,omitempty"`
	Scale   string   `json:"variance_scale,omitempty"`
	Warning string   `json:"warning,omitempty"`
	LBLags  int      `json:"lb_lags,omitempty"`
	LBQ     *float64 `json:"lb_q,omitempty"`
	LBP     *float64 `json:"lb_p,omitempty"`
	NResid  int      `json:"n_resid"` // finite residuals behind the ACF bounds
}

// Series holds every node's chart numbers, nodes × length per field.
type Series struct {
	History  []float32   // nodes × len(Meta.History)
	Base     []float32   // nodes × len(Meta.Forecast)
	Forecast []float32   // nodes × len(Meta.Forecast)
	Lower    [][]float32 // per interval: nodes × len(Meta.Forecast); nil when SD is set
	Upper    [][]float32 // per interval
	SD       []float32   // nodes × len(Meta.Forecast): the bounds' standard deviations, or nil
	ACF      []float32   // nodes × Meta.Lags
	PACF     []float32   // nodes × Meta.Lags
}

// Table is a result table carried into the report as it is (the backtest
// tables): column names, and rows of cells as text or numbers.
type Table struct {
	Name    string   `json:"name"`
	Columns []string `json:"columns"`
	Rows    [][]any  `json:"rows"`
}

// nodeIndex finds rows of a table by node: the level and key columns,
// identified by hierarchy.KeyID (which no value can make collide).
type nodeIndex map[string]int

func nodeKey(level string, key []string) string {
	return hierarchy.KeyID(append([]string{level}, key...)...)
}

// column finds a column by name.
func column(t *tableio.Table, name string) *tableio.Column {
	for i := range t.Columns {
		if t.Columns[i].Name == name {
			return &t.Columns[i]
		}
	}
	return nil
}

// cell returns entry r of c as text: "" for null, integers without a
// decimal point (a CSV table's numeric key column reads back as floats).
func cell(c *tableio.Column, r int) string {
	if c.Null != nil && c.Null[r] {
		return ""
	}
	switch c.Type {
	case tableio.String:
		return c.Strings[r]
	case tableio.Int64:
		return strconv.FormatInt(c.Ints[r], 10)
	case tableio.Date:
		return time.Unix(c.Ints[r]*86400, 0).UTC().Format("2006-01-02")
	case tableio.Bool:
		return strconv.FormatBool(c.Ints[r] != 0)
	default:
		v := c.Floats[r]
		if math.IsNaN(v) {
			return ""
		}
		return strconv.FormatFloat(v, 'f', -1, 64)
	}
}

// number returns entry r of c as a float, NaN for null, a date or text
// that is not a number.
func number(c *tableio.Column, r int) float64 {
	if c.Null != nil && c.Null[r] {
		return math.NaN()
	}
	switch c.Type {
	case tableio.Float64:
		return c.Floats[r]
	case tableio.Int64:
		return float64(c.Ints[r])
	case tableio.Date, tableio.Bool:
		return math.NaN()
	}
	v, err := strconv.ParseFloat(c.Strings[r], 64)
	if err != nil {
		return math.NaN()
	}
	return v
}

func numRows(t *tableio.Table) int {
	if len(t.Columns) == 0 {
		return 0
	}
	c := t.Columns[0]
	return max(len(c.Strings), len(c.Floats), len(c.Ints))
}

func finitePtr(v float64) *float64 {
	if math.IsNaN(v) || math.IsInf(v, 0) {
		return nil
	}
	return &v
}

// periodsIn returns the distinct labels of a table's period column in
// order of first appearance, and each row's position among them.
func periodsIn(t *tableio.Table, name string) ([]string, []int, error) {
	pc := column(t, "period")
	if pc == nil {
		return nil, nil, fmt.Errorf("the %s table has no period column", name)
	}
	pos := map[string]int{}
	var labels []string
	rows := make([]int, numRows(t))
	for r := range rows {
		s := cell(pc, r)
		p, ok := pos[s]
		if !ok {
			p = len(labels)
			pos[s] = p
			labels = append(labels, s)
		}
		rows[r] = p
	}
	return labels, rows, nil
}

// build arranges the tables of a run into the report's data. The
// forecasts table is required; models, residuals and history add the
// model, diagnostics and history of each node when present.
func build(in *Input) (*Data, error) {
	// The timings and the file lists (of the set, and of the other kind's
	// set kept beside it) are left out: they are not shown, and without
	// them the report of a run and one rendered later from its folder are
	// the same bytes.
	run := map[string]any{}
	for k, v := range in.Run {
		if k != "timings_seconds" && k != "files" && k != "other_set" {
			run[k] = v
		}
	}
	d := &Data{Meta: Meta{Run: run, FailP: failP, Accuracy: in.Accuracy, Attrs: []string{}, History: []string{},
		Forecast: []string{}, Intervals: []string{}, Levels: []Level{}, Nodes: []Node{}, Failing: []int{}}}
	m := &d.Meta
	fc := in.Tables["forecasts"]
	if fc == nil { // a backtest's folder: accuracy only
		if len(in.Accuracy) == 0 {
			return nil, fmt.Errorf("no forecasts table and no backtest tables")
		}
		return d, nil
	}
	attrs, err := keyAttrs(fc)
	if err != nil {
		return nil, err
	}
	m.Attrs = attrs

	// Nodes, levels and forecast periods from the forecasts table.
	idx := nodeIndex{}
	levelPos := map[string]int{}
	levelCol := column(fc, "level")
	keyCols := make([]*tableio.Column, len(attrs))
	for a, name := range attrs {
		keyCols[a] = column(fc, name)
	}
	named := make([]string, len(attrs)) // the attributes the key columns hold
	for a, name := range attrs {
		named[a] = engine.AttrOf(name)
	}
	rowNode := make([]int, numRows(fc))
	for r := range rowNode {
		lv := cell(levelCol, r)
		key := make([]string, len(attrs))
		for a, c := range keyCols {
			key[a] = cell(c, r)
		}
		k := nodeKey(lv, key)
		i, ok := idx[k]
		if !ok {
			l, ok := levelPos[lv]
			if !ok {
				l = len(m.Levels)
				levelPos[lv] = l
				m.Levels = append(m.Levels, Level{Name: lv})
			}
			i = len(m.Nodes)
			idx[k] = i
			m.Nodes = append(m.Nodes, Node{Level: l, Key: key, Label: hierarchy.KeyLabel(named, key)})
			m.Levels[l].Nodes = append(m.Levels[l].Nodes, i)
		}
		rowNode[r] = i
	}
	n := len(m.Nodes)
	var stepOf []int
	m.Forecast, stepOf, err = periodsIn(fc, "forecasts")
	if err != nil {
		return nil, err
	}
	h := len(m.Forecast)
	s := &d.Series
	s.Base, s.Forecast = nanSlice(n*h), nanSlice(n*h)
	fill := func(dst []float32, c *tableio.Column) {
		if c == nil {
			return
		}
		for r, i := range rowNode {
			dst[i*h+stepOf[r]] = float32(number(c, r))
		}
	}
	fill(s.Base, column(fc, "base"))
	fill(s.Forecast, column(fc, "forecast"))
	for _, c := range fc.Columns {
		label, ok := strings.CutPrefix(c.Name, "pi")
		if label, ok = strings.CutSuffix(label, "_lower"); !ok || column(fc, "pi"+label+"_upper") == nil {
			continue
		}
		lo, hi := nanSlice(n*h), nanSlice(n*h)
		fill(lo, column(fc, "pi"+label+"_lower"))
		fill(hi, column(fc, "pi"+label+"_upper"))
		m.Intervals = append(m.Intervals, label)
		s.Lower, s.Upper = append(s.Lower, lo), append(s.Upper, hi)
	}
	compactBounds(d, fc, rowNode, stepOf)

	if t := in.Tables["history"]; t != nil {
		rows, err := nodeRows(t, "history", attrs, idx)
		if err != nil {
			return nil, err
		}
		var at []int
		m.History, at, err = periodsIn(t, "history")
		if err != nil {
			return nil, err
		}
		T := len(m.History)
		s.History = nanSlice(n * T)
		vc := column(t, "value")
		if vc == nil {
			return nil, fmt.Errorf("the history table has no value column")
		}
		for r, i := range rows {
			v := number(vc, r)
			s.History[i*T+at[r]] = float32(v)
			if !math.IsNaN(v) {
				m.Nodes[i].Volume += v
			}
		}
	}
	if in.Tables["history"] == nil {
		for i := range m.Nodes {
			for _, v := range s.Forecast[i*h : (i+1)*h] {
				if !math.IsNaN(float64(v)) {
					m.Nodes[i].Volume += float64(v)
				}
			}
		}
	}
	if t := in.Tables["models"]; t != nil {
		if err := addModels(m, t, attrs, idx); err != nil {
			return nil, err
		}
	}
	if t := in.Tables["plans"]; t != nil {
		if err := addPlans(m, t, attrs, idx); err != nil {
			return nil, err
		}
	}
	if t := in.Tables["residuals"]; t != nil {
		if err := addCorrelograms(d, t, attrs, idx); err != nil {
			return nil, err
		}
	}
	for l := range m.Levels {
		nodes := m.Levels[l].Nodes
		sort.SliceStable(nodes, func(a, b int) bool { return m.Nodes[nodes[a]].Volume > m.Nodes[nodes[b]].Volume })
	}
	for i, nd := range m.Nodes {
		if nd.LBP != nil && *nd.LBP < failP {
			m.Failing = append(m.Failing, i)
		}
	}
	sort.SliceStable(m.Failing, func(a, b int) bool { return *m.Nodes[m.Failing[a]].LBP < *m.Nodes[m.Failing[b]].LBP })
	return d, nil
}

// keyAttrs returns the key columns of a result table: those between
// "level" and "period".
func keyAttrs(t *tableio.Table) ([]string, error) {
	if len(t.Columns) == 0 || t.Columns[0].Name != "level" {
		return nil, fmt.Errorf("the forecasts table does not start with a level column")
	}
	var attrs []string
	for _, c := range t.Columns[1:] {
		if c.Name == "period" {
			return attrs, nil
		}
		attrs = append(attrs, c.Name)
	}
	return nil, fmt.Errorf("the forecasts table has no period column")
}

// nodeRows maps each row of a per-node table to its node, or fails naming
// the first row whose node the forecasts table does not have.
func nodeRows(t *tableio.Table, name string, attrs []string, idx nodeIndex) ([]int, error) {
	lc := column(t, "level")
	if lc == nil {
		return nil, fmt.Errorf("the %s table has no level column", name)
	}
	cols := make([]*tableio.Column, len(attrs))
	for a, at := range attrs {
		if cols[a] = column(t, at); cols[a] == nil {
			return nil, fmt.Errorf("the %s table has no %s column", name, at)
		}
	}
	rows := make([]int, numRows(t))
	key, prev := make([]string, len(attrs)), make([]string, len(attrs))
	prevLevel, i := "", -1
	for r := range rows {
		same := i >= 0 && cell(lc, r) == prevLevel
		for a, c := range cols {
			key[a] = cell(c, r)
			same = same && key[a] == prev[a]
		}
		if !same { // rows of one node are usually consecutive: look up only when the node changes
			var ok bool
			if i, ok = idx[nodeKey(cell(lc, r), key)]; !ok {
				return nil, fmt.Errorf("%s table row %d: node %s %v is not in the forecasts table", name, r+1, cell(lc, r), key)
			}
			prevLevel = cell(lc, r)
			copy(prev, key)
		}
		rows[r] = i
	}
	return rows, nil
}

// addModels copies each node's model and Ljung–Box columns.
func addModels(m *Meta, t *tableio.Table, attrs []string, idx nodeIndex) error {
	rows, err := nodeRows(t, "models", attrs, idx)
	if err != nil {
		return err
	}
	// A folder written before the models table's columns were renamed
	// has them under their old names (spec, sigma2).
	get := func(names ...string) *tableio.Column {
		for _, name := range names {
			if c := column(t, name); c != nil {
				return c
			}
		}
		return nil
	}
	family, spec, params, warn := get("family"), get("model", "spec"), get("params"), get("warning")
	aicc, sigma2, lags, q, p := get("aicc"), get("innovation_variance", "sigma2"), get("ljung_box_lags"), get("ljung_box_q"), get("ljung_box_p")
	status, scale := get("status"), get("variance_scale")
	for r, i := range rows {
		nd := &m.Nodes[i]
		if status != nil {
			nd.Status = cell(status, r)
		}
		if scale != nil {
			nd.Scale = cell(scale, r)
		}
		if family != nil {
			nd.Family = cell(family, r)
		}
		if spec != nil {
			nd.Spec = cell(spec, r)
		}
		if params != nil {
			nd.Params = cell(params, r)
		}
		if warn != nil {
			nd.Warning = cell(warn, r)
		}
		if aicc != nil {
			nd.AICc = finitePtr(number(aicc, r))
		}
		if sigma2 != nil {
			nd.Sigma2 = finitePtr(number(sigma2, r))
		}
		if lags != nil && q != nil && p != nil {
			if v := number(lags, r); !math.IsNaN(v) {
				nd.LBLags = int(v)
			}
			nd.LBQ, nd.LBP = finitePtr(number(q, r)), finitePtr(number(p, r))
		}
	}
	return nil
}

// addCorrelograms computes each node's residual ACF and PACF (numeric.ACF
// and numeric.PACF on its finite residuals, in period order) up to
// Meta.Lags: twice the seasonal period, at least 10, at most the
// residuals of the node less one (NaN beyond).
func addCorrelograms(d *Data, t *tableio.Table, attrs []string, idx nodeIndex) error {
	rows, err := nodeRows(t, "residuals", attrs, idx)
	if err != nil {
		return err
	}
	rc := column(t, "residual")
	if rc == nil {
		return fmt.Errorf("the residuals table has no residual column")
	}
	period := 1
	if counts, ok := d.Meta.Run["counts"].(map[string]any); ok {
		if v, ok := seasonLength(counts); ok && v >= 1 {
			period = int(v)
		}
	}
	K := max(10, 2*period)
	d.Meta.Lags = K
	n := len(d.Meta.Nodes)
	d.Series.ACF, d.Series.PACF = nanSlice(n*K), nanSlice(n*K)
	// Rows of one node are consecutive and in period order in the tables
	// trueup writes; collect them per node to be safe with any order.
	_, at, err := periodsIn(t, "residuals")
	if err != nil {
		return err
	}
	byNode := make([][]int, n)
	for r, i := range rows {
		byNode[i] = append(byNode[i], r)
	}
	acf, pacf, work := make([]float64, K), make([]float64, K), make([]float64, 2*K)
	for i, rs := range byNode {
		sort.SliceStable(rs, func(a, b int) bool { return at[rs[a]] < at[rs[b]] })
		x := make([]float64, 0, len(rs))
		for _, r := range rs {
			if v := number(rc, r); !math.IsNaN(v) && !math.IsInf(v, 0) {
				x = append(x, v)
			}
		}
		d.Meta.Nodes[i].NResid = len(x)
		k := min(K, len(x)-1)
		if k < 1 {
			continue
		}
		copy(acf, numeric.ACF(x, k)[1:])
		numeric.PACF(pacf[:k], acf[:k], work[:2*k])
		for j := 0; j < k; j++ {
			d.Series.ACF[i*K+j], d.Series.PACF[i*K+j] = float32(acf[j]), float32(pacf[j])
		}
	}
	return nil
}

// compactBounds replaces the interval bounds by one standard deviation
// per node and step when every bound in the table is of the form
// engine.Result.Bounds makes Gaussian and error-quantile ones: forecast ∓
// z·sd, z the same for every node of a level and step (the normal
// quantile of the interval, times the level's factor for error
// quantiles), the lower bound clamped at zero when no bound is negative.
// The standard deviation embedded is the widest interval's half width
// over its normal quantile, and each level's z is read off its first
// row; the check runs on the table's float64 numbers to a relative 1e-9,
// and any bound of another form keeps the bounds as they are. This embeds
// one number where there were two per interval.
func compactBounds(d *Data, fc *tableio.Table, rowNode, stepOf []int) {
	m, s := &d.Meta, &d.Series
	if len(m.Intervals) == 0 {
		return
	}
	z := make([]float64, len(m.Intervals))
	widest := 0
	for l, label := range m.Intervals {
		level, err := strconv.ParseFloat(label, 64)
		if err != nil || level <= 0 || level >= 100 {
			return
		}
		z[l] = distuv.UnitNormal.Quantile(0.5 + level/200)
		if z[l] > z[widest] {
			widest = l
		}
	}
	mean := column(fc, "forecast")
	lower := make([]*tableio.Column, len(z))
	upper := make([]*tableio.Column, len(z))
	clamp := true
	for l, label := range m.Intervals {
		lower[l], upper[l] = column(fc, "pi"+label+"_lower"), column(fc, "pi"+label+"_upper")
		for r := range rowNode {
			if number(lower[l], r) < 0 {
				clamp = false
			}
		}
	}
	h := len(m.Forecast)
	sd := nanSlice(len(s.Forecast))
	levelZ := make([][]float64, len(m.Levels))
	for r, i := range rowNode {
		f := number(mean, r)
		sig := (number(upper[widest], r) - f) / z[widest]
		if math.IsNaN(f) || math.IsNaN(sig) {
			continue
		}
		sd[i*h+stepOf[r]] = float32(sig)
		v := m.Nodes[i].Level
		if levelZ[v] == nil && sig > 0 {
			levelZ[v] = make([]float64, len(z))
			for l := range z {
				levelZ[v][l] = (number(upper[l], r) - f) / sig
			}
		}
		zl := levelZ[v]
		if zl == nil {
			zl = z // no width yet: any z gives the bounds
		}
		for l := range z {
			lo, hi := f-zl[l]*sig, f+zl[l]*sig
			if clamp {
				lo = math.Max(0, lo)
			}
			tol := 1e-9 * math.Max(1, math.Abs(f)+zl[l]*math.Abs(sig))
			if math.Abs(lo-number(lower[l], r)) > tol || math.Abs(hi-number(upper[l], r)) > tol {
				return // not of that form: keep the bounds
			}
		}
	}
	for v := range levelZ {
		if levelZ[v] == nil {
			levelZ[v] = z
		}
	}
	m.Z, m.ClampAtZero = levelZ, clamp
	s.SD, s.Lower, s.Upper = sd, nil, nil
}

func nanSlice(n int) []float32 {
	s := make([]float32, n)
	nan := float32(math.NaN())
	for i := range s {
		s[i] = nan
	}
	return s
}

// seasonLength reads the season length from run.json's counts, under its
// name or, in a folder written before the rename, seasonal_period.
func seasonLength(counts map[string]any) (float64, bool) {
	for _, key := range []string{"season_length", "seasonal_period"} {
		if v, ok := counts[key].(float64); ok {
			return v, true
		}
	}
	return 0, false
}
