package engine

import (
	"context"
	"crypto/sha256"
	"encoding/hex"
	"fmt"
	"io"
	"os"
	"time"
	"trueup/internal/words"

	"trueup/hierarchy"
	"trueup/inputerr"
	"trueup/internal/crash"
	"trueup/reconcile"
	"trueup/tableio"
)

// Tables names forecast tables made elsewhere, or by an earlier forecast
// run, to be reconciled: forecast's own forecasts.parquet and
// residuals.parquet read back unchanged.
type Tables struct {
	// Base is the base forecasts table: the key columns of Chains (null or
	// empty where a node aggregates over a column), "period", "base" and,
	// optionally, "base_variance" (the base forecast-error variance of
	// each step). Required.
	Base string
	// Residuals, when set, is the in-sample one-step residuals table: key
	// columns, "period" and "residual" for every node, all ending at the
	// forecast origin. Needed by the covariance estimators that use
	// residuals and for intervals.
	Residuals string
	// History, when its Path is set, is the sales history of the bottom
	// series, read exactly as Load reads a forecast's input (its Chains
	// are taken from Tables.Chains). Needed by top-down with historical
	// proportions.
	History Source
	// Format overrides the format the Base and Residuals file names
	// imply; "" goes by the extensions.
	Format tableio.Format
	// Chains are the key columns, each chain coarse to fine. Required.
	Chains []hierarchy.Chain
}

// BaseSet is a set of base forecast tables read and arranged on the
// structure built from the base table's bottom series.
type BaseSet struct {
	Structure *hierarchy.Structure
	// Periods are the forecast periods, in order.
	Periods []tableio.Period
	// Base and BaseVar are nodes × periods; BaseVar is nil without a
	// variance column.
	Base, BaseVar [][]float64
	// Residuals are nodes × residual periods (NaN where a node has
	// none); nil without a residuals table.
	Residuals [][]float64
	// History is the loaded sales history, or nil.
	History *Data
	// KeyTypes gives the base table's key column types, in Chains order.
	KeyTypes []tableio.ColumnType
	Input    InputReport
	Warnings []string
	// ReadSeconds is the time spent reading and arranging the tables.
	ReadSeconds float64
}

// LoadTables reads the tables and arranges them on the grouped structure.
func LoadTables(ts Tables) (*BaseSet, error) {
	if ts.Base == "" {
		return nil, inputerr.ForOption("Base", "no base forecasts table named")
	}
	if len(ts.Chains) == 0 {
		return nil, inputerr.ForOption("Chains", "no key columns named: give one or more chains of key columns, coarse to fine")
	}
	start := time.Now()
	var attrs []string
	for _, ch := range ts.Chains {
		attrs = append(attrs, ch...)
	}
	if err := checkKeyColumns(attrs); err != nil {
		return nil, err
	}
	// The residuals table is read and arranged beside the base table, on
	// the other core; its errors count only after the base table's.
	type loaded struct {
		t   *nodeTable
		err error
	}
	resDone := make(chan loaded, 1)
	if ts.Residuals != "" {
		go func() {
			var l loaded
			defer func() { resDone <- l }()
			defer crash.Catch(&l.err)
			rt, err := tableio.ReadTable(ts.Residuals, ts.Format)
			if err != nil {
				l.err = err
				return
			}
			l.t, l.err = newNodeTable(ts.Residuals, rt, attrs, "residual")
		}()
	}
	baseT, err := tableio.ReadTable(ts.Base, ts.Format)
	if err != nil {
		return nil, err
	}
	base, err := newNodeTable(ts.Base, baseT, attrs, "base")
	if err != nil {
		return nil, err
	}
	st, err := hierarchy.Build(ts.Chains, base.bottomKeys())
	if err != nil {
		return nil, err
	}
	sum, err := fileSHA256(ts.Base)
	if err != nil {
		return nil, err
	}
	bs := &BaseSet{Structure: st, Input: InputReport{Path: ts.Base, SHA256: sum, Rows: base.rows, Columns: columnNames(baseT)},
		KeyTypes: base.keyTypes()}
	var res *nodeTable
	if ts.Residuals != "" {
		r := <-resDone
		if r.err != nil {
			return nil, r.err
		}
		res = r.t
	}
	// The base and residual periods are read as history is, and their
	// grain found from both together: a single base period dated
	// 2036-01-01 is a month when the residuals are dated a month apart.
	g, err := tablesGrain(base, res)
	if err != nil {
		return nil, err
	}
	for _, nt := range []*nodeTable{base, res} {
		if nt == nil {
			continue
		}
		if err := nt.atGrain(g); err != nil {
			return nil, err
		}
		bs.Warnings = append(bs.Warnings, nt.notes...)
	}
	nodes := newNodeIndex(st, base)
	if bs.Base, bs.Periods, err = base.matrix(nodes, "base", everyPeriod); err != nil {
		return nil, err
	}
	if base.has("base_variance") {
		if bs.BaseVar, _, err = base.matrix(nodes, "base_variance", everyPeriod); err != nil {
			return nil, err
		}
	}
	if res != nil {
		if err := res.remap(base.dicts); err != nil {
			return nil, err
		}
		var periods []tableio.Period
		if bs.Residuals, periods, err = res.matrix(nodes, "residual", sameEnd); err != nil {
			return nil, err
		}
		if last := periods[len(periods)-1]; last.Grain != bs.Periods[0].Grain || last.Next(1) != bs.Periods[0] {
			return nil, &inputerr.Error{File: ts.Residuals, Msg: fmt.Sprintf("residuals end at %s, but the base forecasts start at %s; residuals must end at the forecast origin", last, bs.Periods[0])}
		}
	}
	if ts.History.Path != "" {
		h := ts.History
		h.Chains = ts.Chains
		// The base forecasts fix the origin: the history's last period
		// is not set aside as partial.
		h.KeepLastPeriod = true
		if bs.History, err = Load(h); err != nil {
			return nil, err
		}
		if last := bs.History.Panel.Period(bs.History.Panel.T - 1); last.Next(1) != bs.Periods[0] {
			return nil, &inputerr.Error{File: h.Path, Msg: fmt.Sprintf("the history ends at %s, but the base forecasts start at %s", last, bs.Periods[0])}
		}
		for _, key := range bs.History.Panel.Keys {
			if _, ok := st.BottomIndex(key); !ok {
				return nil, &inputerr.Error{File: h.Path, Msg: fmt.Sprintf("bottom series %v has history but no base forecasts", key)}
			}
		}
	}
	bs.ReadSeconds = time.Since(start).Seconds()
	return bs, nil
}

func columnNames(t *tableio.Table) []string {
	names := make([]string, len(t.Columns))
	for i, c := range t.Columns {
		names[i] = c.Name
	}
	return names
}

// ReconcileOptions are the settings of a reconciliation of given base
// forecasts. Zero values are documented defaults, as in Options.
type ReconcileOptions struct {
	// Reconcile says how; the zero value is MinT with shrinkage.
	Reconcile Reconciliation
	// Levels are the interval levels in percent; nil means 80 and 95.
	Levels []float64
	// Intervals is the interval method: IntervalsErrorQuantiles (the
	// default, "") or IntervalsGaussian; error quantiles need the
	// residuals table and are Gaussian without it.
	Intervals string
}

// Reconcile reconciles a base set under the same rules as Forecast:
// bottom series that have closed (their history, or their residuals, end
// before the forecast origin) are forecast as exactly zero and left out of
// the reconciliation, aggregates keep like-for-like history, and
// non-negativity is automatic for mint when the history (or, without one,
// every bottom base forecast) has no negative value.
func Reconcile(ctx context.Context, bs *BaseSet, opt ReconcileOptions) (*Result, error) {
	if err := checkLevels(opt.Levels); err != nil {
		return nil, err
	}
	if opt.Levels == nil {
		opt.Levels = DefaultLevels
	}
	switch opt.Intervals {
	case "":
		opt.Intervals = IntervalsErrorQuantiles
	case IntervalsErrorQuantiles, IntervalsGaussian:
	default:
		return nil, inputerr.ForOption("Intervals", "unknown interval method %q for reconciling tables (use %s or %s)", opt.Intervals, IntervalsErrorQuantiles, IntervalsGaussian)
	}
	method, rc, err := opt.Reconcile.method()
	if err != nil {
		return nil, err
	}
	if info, _ := reconcile.LookupMethod(method.Name()); info.Temporal {
		return nil, inputerr.ForOption("Method", "the %s method fits every node again by quarter and year, which needs the models; it runs in forecast and backtest, not on base forecasts given as a table", method.Name())
	}
	if rc.Calibrate != 0 {
		return nil, inputerr.ForOption("Calibrate", "calibrating intervals needs a backtest, which needs the sales history and the models: use forecast")
	}
	if err := ctx.Err(); err != nil {
		return nil, err
	}
	st := bs.Structure
	h := len(bs.Periods)
	n := len(st.Nodes)
	T := 0
	if bs.Residuals != nil {
		T = len(bs.Residuals[0])
	}
	if bs.History != nil {
		T = max(T, bs.History.Panel.T)
	}
	budget, err := memoryBudget()
	if err != nil {
		return nil, err
	}
	if err := checkRunMemory(budget, n, len(st.Attrs), T, h, h,
		bs.Periods[0].Next(-T).String()+" to "+bs.Periods[0].Next(-1).String(), isProjection(method)); err != nil {
		return nil, err
	}
	var bottom [][]float64
	if bs.History != nil {
		bottom = make([][]float64, st.NumBottom())
		for j := range bottom {
			bottom[j] = nanRow(T)
		}
		pn := bs.History.Panel
		for i, key := range pn.Keys {
			j, _ := st.BottomIndex(key)
			copy(bottom[j][T-pn.T:], pn.Values[i])
		}
	}
	closed := make([]bool, st.NumBottom())
	if bottom != nil {
		closed = closedBottoms(bottom)
	}
	if bs.Residuals != nil {
		off := st.BottomOffset()
		for j := range closed {
			_, last := span(bs.Residuals[off+j])
			closed[j] = closed[j] || last < len(bs.Residuals[off+j])-1
		}
	}
	var history [][]float64
	if bottom != nil {
		history = fittingHistory(st, bottom, closed)
	}
	trading, err := openStructure(st, closed)
	if err != nil {
		return nil, err
	}

	fits := make([]NodeFit, n)
	var warnings []string
	baseVar := bs.BaseVar
	if baseVar == nil && bs.Residuals != nil {
		baseVar = oneStepVariance(bs.Residuals, h)
		warnings = append(warnings, "the base table has no base_variance column: intervals use the one-step residual variance at every step, so they do not widen with the horizon")
	}
	for i := range fits {
		f := NodeFit{Mean: bs.Base[i], First: -1, Last: -1}
		if baseVar != nil {
			f.Variance = baseVar[i]
		}
		if bs.Residuals != nil {
			// Residuals end at the origin, as the history does; the
			// calendar starts with the longer of the two.
			offset := T - len(bs.Residuals[i])
			first, last := span(bs.Residuals[i])
			if first >= 0 {
				f.Residuals = bs.Residuals[i][first : last+1]
				f.First, f.Last = first+offset, last+offset
			}
		}
		fits[i] = f
	}
	prob := problem(trading.st, trading.rows(orNaN(history, n, T)), trading.fits(fits), T)
	if bs.Residuals == nil {
		prob.Residuals = nil
	}
	if history == nil {
		prob.History = nil
	}
	if baseVar == nil {
		prob.BaseVar = nil
	}
	noNegative := true
	if bs.History != nil {
		noNegative = bs.History.Panel.Stats.Negative == 0
	} else {
		for _, y := range bs.Base[st.BottomOffset():] {
			for _, v := range y {
				noNegative = noNegative && v >= 0
			}
		}
	}
	locks, tradingLocks, err := prepareLocks(rc, method, nonnegativeFor(method, rc, noNegative), st, trading, bs.Periods[0], h)
	if err != nil {
		return nil, err
	}
	prob.Locks = tradingLocks
	prob.StepLabel = func(k int) string { return bs.Periods[k].String() }
	start := time.Now()
	sol, nonneg, err := reconcileOpen(method, rc, prob, noNegative, trading, st, h)
	if err != nil {
		return nil, lockError(rc, err)
	}
	first := bs.Periods[0].Next(-T)
	res := &Result{Structure: st, Calendar: Calendar{First: first, T: T}, History: history, Fits: fits,
		Solution: sol, Levels: opt.Levels, Nonnegative: nonneg, Horizon: h, KeyTypes: bs.KeyTypes}
	if opt.Intervals == IntervalsErrorQuantiles && prob.Residuals != nil && sol.Variance != nil {
		errs, err := reconciledErrors(method, prob, trading, st)
		if err != nil {
			return nil, err
		}
		res.Shape = errorShape(st, errs, h, opt.Levels)
	}
	res.Report = RunReport{Version: Version, Command: "reconcile", Input: bs.Input,
		Options:  map[string]any{"method": rc.Method, "cov": rc.Cov, "at": rc.At, "nonnegative": nonneg, "intervals": opt.Levels},
		Timings:  map[string]float64{"read": bs.ReadSeconds, "reconcile": time.Since(start).Seconds()},
		Warnings: append([]string{}, warnings...), Models: map[string]int{},
		Reconcile: reconcileReport(method.Name(), sol.Notes)}
	res.Report.Reconcile.Shape = res.Shape
	res.Report.Options["interval_method"] = IntervalsGaussian
	if res.Shape != nil {
		res.Report.Options["interval_method"] = IntervalsErrorQuantiles
	}
	c := &res.Report.Counts
	c.BottomSeries, c.Nodes, c.Periods, c.Horizon = st.NumBottom(), n, T, h
	c.Grain = bs.Periods[0].Grain.String()
	c.SeasonalLag = bs.Periods[0].Grain.SeasonalPeriod()
	if T > 0 {
		c.FirstPeriod, c.LastPeriod = first.String(), bs.Periods[0].Next(-1).String()
	}
	c.ForecastRange = [2]string{bs.Periods[0].String(), bs.Periods[h-1].String()}
	for _, l := range st.Levels {
		c.NodesPerLevel = append(c.NodesPerLevel, LevelCount{Level: l.Name, Nodes: len(l.Nodes)})
	}
	if nc := countTrue(closed); nc > 0 {
		res.Report.Warnings = append(res.Report.Warnings, fmt.Sprintf("%s closed before the forecast origin and %s forecast as zero", words.Count(nc, "bottom series", "bottom series"), words.Agree(nc, "is", "are")))
	}
	if err := res.recordLocks(&res.Report, rc, locks); err != nil {
		return nil, err
	}
	return res, nil
}

func countTrue(b []bool) int {
	n := 0
	for _, v := range b {
		if v {
			n++
		}
	}
	return n
}

// orNaN returns rows, or n rows of T NaNs when rows is nil.
func orNaN(rows [][]float64, n, T int) [][]float64 {
	if rows != nil {
		return rows
	}
	out := make([][]float64, n)
	for i := range out {
		out[i] = nanRow(T)
	}
	return out
}

// fileSHA256 is the hex SHA-256 of the file's bytes, for run.json's input
// record (tableio.Read computes it for a sales table as it reads).
func fileSHA256(path string) (string, error) {
	f, err := os.Open(path)
	if err != nil {
		return "", inputerr.Wrap(path, err)
	}
	defer f.Close()
	h := sha256.New()
	if _, err := io.Copy(h, f); err != nil {
		return "", inputerr.Wrap(path, err)
	}
	return hex.EncodeToString(h.Sum(nil)), nil
}
