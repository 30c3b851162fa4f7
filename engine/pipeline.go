// Package engine is trueup's library API: it loads a sales table into a
// panel, builds the grouped structure, fits a model to every node (behind
// the Fitter seam), reconciles the forecasts so that every total equals the
// sum of its parts, and attaches coherent prediction intervals. The result
// is held in memory; writing files is a separate step (package
// engine/output).
//
// Every command of the trueup program is a thin layer over this package:
//
//	data, err := engine.Load(engine.Source{Path: "sales.parquet", Time: "month",
//		Value: "sales", Chains: chains})
//	res, err := engine.Forecast(ctx, data, engine.Options{Horizon: 12})
//
// Errors caused by the data or the options are *inputerr.Error values.
package engine

import (
	"context"
	"fmt"
	"math"
	"slices"
	"time"

	"gonum.org/v1/gonum/stat/distuv"

	"trueup/hierarchy"
	"trueup/inputerr"
	"trueup/models/families"
	"trueup/reconcile"
	"trueup/tableio"
)

// Options are the settings of a forecast run. The zero value of every field
// is a documented default, so Options{} is a complete, sensible run.
type Options struct {
	// Model is the family (and optionally fixed form) fitted to every
	// node. The zero value is the automatic per-node choice.
	Model families.Spec
	// Period is the seasonal period. 0 takes the usual period of the
	// data's grain (12 for months, 4 for quarters, 52 for weeks, 7 for
	// days, 1 for years and time indexes).
	Period int
	// Horizon is the number of periods to forecast. 0 means one seasonal
	// cycle, or 8 periods when the period is 1.
	Horizon int
	// Reconcile says how forecasts are made coherent. The zero value is
	// MinT with the shrinkage covariance.
	Reconcile Reconciliation
	// Levels are the central prediction interval levels in percent, each
	// strictly between 0 and 100. Nil means 80 and 95.
	Levels []float64
	// Fitter fits the nodes. Nil means Local{Workers: 1}.
	Fitter Fitter
	// Progress, when non-nil, is called after every node fit.
	Progress func(done, total int)
	// PlanGrains are calendar grains coarser than the data's (Quarter,
	// Year; Month for weekly or daily data) by which the result also
	// carries every node's totals (Result.Plans). Nil means none.
	PlanGrains []tableio.Grain

	// Intervals is the interval method: IntervalsErrorQuantiles (forecast
	// ± f·z·sd from the coherent variances, f from the in-sample errors'
	// quantiles, see errorShape), IntervalsGaussian (forecast ± z·sd) or
	// IntervalsBootstrap (quantiles of reconciled sample paths, see
	// bootstrapIntervals); "" means
	// DefaultIntervals. A backtest applies it to every compared method.
	Intervals string
	// Draws is the number of sample paths of the bootstrap intervals; 0
	// means DefaultDraws.
	Draws int

	// joint keeps the joint distribution of the errors in the result's
	// Solution.Joint (the backtest scores the joint forecast with it).
	joint bool
}

// Reconciliation names a reconciliation method and its settings.
type Reconciliation struct {
	// Method is a reconcile method name (see reconcile.MethodNames); ""
	// means DefaultMethod.
	Method string
	// Cov is the covariance estimator of the projection methods; "" means
	// shrink for mint and nothing for the other methods.
	Cov string
	// At is the level middle-out reconciles from (e.g. "region+category");
	// it is required by middle-out and refused by every other method.
	At string
	// Nonnegative asks for non-negative reconciled bottom forecasts. Nil
	// means automatic: on for mint when the history has no negative value
	// (sales cannot be negative), off otherwise.
	Nonnegative *bool
	// Paths bounds the cost of mint's interval widths on large structures
	// (see reconcile.Problem.Paths): they are exact while at most Paths
	// nodes have residuals that start late, and partly estimated from
	// Paths seeded sample paths above; 0 means reconcile.DefaultPaths.
	Paths int
	// Calibrate, when positive, calibrates the intervals from a backtest
	// of the method at Calibrate origins (split conformal per node level,
	// horizon group and interval level; see Calibration), applied only
	// when the backtest shows that calibration helped at its later
	// origins (CalibrationCheck.Helps). It costs about Calibrate more
	// forecasts. 0 leaves the intervals as the model variances give them.
	Calibrate int
	// Locks, when set, is the path of a lock table (CSV, Parquet or Arrow,
	// by extension): the key columns (empty or null where the node adds
	// a column up), "period" and "value". Each row fixes a node's
	// reconciled forecast at a forecast period; the other nodes are
	// reconciled around the locks (see reconcile.Lock). Needs a method
	// whose reconcile.MethodInfo.Locks is set (mint). A backtest ignores
	// it, as it ignores the rest of Reconciliation.
	Locks string
	// Origins is the number of backtest origins behind Method "auto"
	// (AutoMethod: the method is chosen by a short backtest of the
	// DefaultCompare methods); 0 means AutoOrigins. Other methods refuse
	// it.
	Origins int
}

// DefaultMethod is the reconciliation used when none is named: MinT with
// the shrinkage covariance (Wickramasuriya, Athanasopoulos & Hyndman
// 2019), the most accurate of the published projections.
const DefaultMethod = "mint"

// DefaultLevels are the interval levels used when none are given.
var DefaultLevels = []float64{80, 95}

// Version is the program version recorded in run.json.
const Version = "0.2.0"

// Result is a forecast run held in memory.
type Result struct {
	Structure *hierarchy.Structure
	// Calendar is the history's periods followed by the forecast periods.
	Calendar Calendar
	// History is each node's history as fitted, on the calendar, NaN
	// outside the node's span.
	History [][]float64
	// Fits are the base models, one per node; for a run reconciled from
	// tables they hold only the base forecasts.
	Fits     []NodeFit
	Solution reconcile.Solution
	Report   RunReport
	// Levels are the interval levels in percent; Nonnegative says whether
	// the reconciliation was constrained to non-negative forecasts.
	Levels      []float64
	Nonnegative bool
	// Horizon is the number of forecast periods.
	Horizon int
	// Plans holds the totals by plan period when Options.PlanGrains
	// asked for them, nil otherwise.
	Plans *Plans
	// Sampled holds the bootstrap intervals when Options.Intervals asked
	// for them (Bounds then reads them); nil otherwise.
	Sampled *Sampled
	// Calibration holds the interval factors Bounds applies (see
	// Reconciliation.Calibrate); nil: none.
	Calibration *Calibration
	// Shape holds the factors of error-quantile intervals per node level
	// and interval level (errorShape), which Bounds applies when there is
	// no Calibration; nil for Gaussian and bootstrap intervals.
	Shape *Calibration
	// KeyTypes gives the type of each key attribute's column in the input
	// (in Structure.Attrs order): tableio.Int64 for an integer column,
	// whose values the writers give their integer type back.
	KeyTypes []tableio.ColumnType
	// Locks are the locked forecasts (node of Structure, step, value),
	// nil without a lock table; Solution.Unlocked then holds the
	// forecasts without them.
	Locks []reconcile.Lock
}

// Calendar numbers a run's periods: T history periods starting at First,
// then the forecast periods.
type Calendar struct {
	First tableio.Period
	T     int
}

// Period returns the calendar period of column t (t ≥ T are forecasts).
func (c Calendar) Period(t int) tableio.Period { return c.First.Next(t) }

// DefaultHorizon is the horizon used when none is given: one seasonal
// cycle, or 8 periods for data without seasonality (period 1).
func DefaultHorizon(period int) int {
	if period == 1 {
		return 8
	}
	return period
}

// resolve fills in the documented defaults and checks the options that do
// not need the data.
func (o Options) resolve(period int) (Options, error) {
	if o.Period < 0 {
		return o, inputerr.ForOption("Period", "the season length must be at least 1, got %d", o.Period)
	}
	if o.Horizon < 0 {
		return o, inputerr.ForOption("Horizon", "the horizon must be at least 1 period, got %d", o.Horizon)
	}
	if err := checkLevels(o.Levels); err != nil {
		return o, err
	}
	if o.Levels == nil {
		o.Levels = DefaultLevels
	}
	if o.Period == 0 {
		o.Period = period
	}
	if o.Horizon == 0 {
		o.Horizon = DefaultHorizon(o.Period)
	}
	if o.Fitter == nil {
		o.Fitter = Local{Workers: 1}
	}
	switch o.Intervals {
	case "":
		o.Intervals = DefaultIntervals
	case IntervalsErrorQuantiles, IntervalsGaussian, IntervalsBootstrap:
	default:
		return o, inputerr.ForOption("Intervals", "unknown interval method %q (use %s, %s or %s)", o.Intervals, IntervalsErrorQuantiles, IntervalsGaussian, IntervalsBootstrap)
	}
	if o.Draws < 0 || (o.Draws > 0 && o.Draws < 100) {
		return o, inputerr.ForOption("Draws", "the bootstrap needs at least 100 sample paths, got %d", o.Draws)
	}
	if o.Draws == 0 {
		o.Draws = DefaultDraws
	}
	if _, err := o.Model.Resolve(); err != nil {
		return o, err
	}
	return o, nil
}

// Supported checks a period and a horizon given explicitly against the
// length of the history, t periods, before any fitting. A seasonal
// pattern is estimated from at least two full cycles, so the period is at
// most t/2; a forecast reaches at most as far ahead as the history goes
// back, t periods, or the default horizon if that is longer (both common
// practice). The defaults taken from the grain are not refused: a history
// too short for them gets non-seasonal models, as before.
func (o Options) Supported(t, grainPeriod int) error {
	if o.Period > 1 && o.Period > t/2 {
		return inputerr.ForOption("Period", "a season length of %d needs at least %d periods of history (two cycles); the history has %d, which supports a season length of at most %d",
			o.Period, 2*o.Period, t, max(t/2, 1))
	}
	period := o.Period
	if period == 0 {
		period = grainPeriod
	}
	if limit := max(t, DefaultHorizon(period)); o.Horizon > limit {
		return inputerr.ForOption("Horizon", "a horizon of %d periods reaches further ahead than the history goes back (%d periods); the history supports a horizon of at most %d",
			o.Horizon, t, limit)
	}
	return nil
}

func checkLevels(levels []float64) error {
	seen := map[float64]bool{}
	for _, l := range levels {
		if !(l > 0 && l < 100) {
			return inputerr.ForOption("Levels", "intervals must lie strictly between 0 and 100 percent, got %v", l)
		}
		if seen[l] {
			return inputerr.ForOption("Levels", "the %v%% interval is given twice", l)
		}
		seen[l] = true
	}
	return nil
}

// method resolves the reconciliation settings.
func (r Reconciliation) method() (reconcile.Method, Reconciliation, error) {
	if r.Method == "" {
		r.Method = DefaultMethod
	}
	if name, cov, at, ok := reconcile.ParseLabel(r.Method); ok && name != r.Method && r.Cov == "" && r.At == "" {
		r.Method, r.Cov, r.At = name, cov, at // a label such as mint-variance
	}
	if info, ok := reconcile.LookupMethod(r.Method); ok && info.Param == reconcile.CovParam && r.Cov == "" {
		r.Cov = string(reconcile.CovShrink)
	}
	if r.Origins != 0 {
		return nil, r, inputerr.ForOption("Origins", "backtest origins apply to the automatic choice of method only")
	}
	if r.Paths < 0 {
		return nil, r, inputerr.ForOption("Paths", "the number of sample paths must be at least 1, got %d", r.Paths)
	}
	if r.Calibrate < 0 {
		return nil, r, inputerr.ForOption("Calibrate", "the number of calibration origins must be at least 1, got %d", r.Calibrate)
	}
	m, err := reconcile.ByName(r.Method, r.Cov, r.At)
	return m, r, err
}

// Forecast fits every node of the loaded data, reconciles the base
// forecasts and returns the coherent result. Nothing is written.
func Forecast(ctx context.Context, d *Data, opt Options) (*Result, error) {
	if d.Structure == nil {
		return nil, inputerr.ForOption("Chains", "a forecast run needs key columns to build the structure from")
	}
	if err := opt.Supported(d.Panel.T, d.Panel.Grain.SeasonalPeriod()); err != nil {
		return nil, err
	}
	if err := checkPlanGrains(opt.PlanGrains, d.Panel.Grain); err != nil {
		return nil, err
	}
	if opt.Reconcile.Method == AutoMethod {
		return forecastAuto(ctx, d, opt)
	}
	opt, err := opt.resolve(d.Panel.Grain.SeasonalPeriod())
	if err != nil {
		return nil, err
	}
	method, rc, err := opt.Reconcile.method()
	if err != nil {
		return nil, err
	}
	if rc.Calibrate > 0 && opt.Intervals == IntervalsBootstrap {
		// The calibration's factors scale z of a Gaussian interval.
		return nil, inputerr.ForOption("Calibrate", "calibration applies to %s and %s intervals, not to %s ones", IntervalsErrorQuantiles, IntervalsGaussian, IntervalsBootstrap)
	}
	budget, err := memoryBudget()
	if err != nil {
		return nil, err
	}
	if err := checkRunMemory(budget, len(d.Structure.Nodes), len(d.Structure.Attrs), d.Panel.T, opt.Horizon, 2*d.Panel.T+opt.Horizon,
		d.Panel.Period(0).String()+" to "+d.Panel.Period(d.Panel.T-1).String(), isProjection(method)); err != nil {
		return nil, err
	}
	rep := RunReport{Version: Version, Command: "forecast", Timings: map[string]float64{
		"read": d.ReadSeconds, "structure": d.StructureSeconds}}
	stage := func(name string, start time.Time) { rep.Timings[name] += time.Since(start).Seconds() }

	start := time.Now()
	st := d.Structure
	closed := closedBottoms(d.Bottom)
	history := fittingHistory(st, d.Bottom, closed)
	trading, err := openStructure(st, closed)
	if err != nil {
		return nil, err
	}
	locks, tradingLocks, err := prepareLocks(rc, method, nonnegativeFor(method, rc, d.Panel.Stats.Negative == 0), st, trading, d.Panel.Period(d.Panel.T), opt.Horizon)
	if err != nil {
		return nil, err
	}
	stage("structure", start)

	start = time.Now()
	jobs := make([]FitJob, len(history))
	for i, y := range history {
		jobs[i] = FitJob{Node: i, Series: y, Model: opt.Model, Period: opt.Period, Horizon: opt.Horizon}
	}
	fits, err := opt.Fitter.Fit(ctx, jobs, opt.Progress)
	if err != nil {
		return nil, nameFormError(err, st.Label)
	}
	stage("fit", start)

	var coarse []reconcile.TemporalBase
	if info, _ := reconcile.LookupMethod(method.Name()); info.Temporal {
		start = time.Now()
		if coarse, err = fitTemporal(ctx, opt, history); err != nil {
			return nil, nameFormError(err, st.Label)
		}
		stage("fit", start)
	}

	start = time.Now()
	prob := problem(trading.st, trading.rows(history), trading.fits(fits), d.Panel.T)
	for _, tb := range coarse {
		prob.Temporal = append(prob.Temporal, reconcile.TemporalBase{Every: tb.Every, Base: trading.rows(tb.Base)})
	}
	prob.Joint = opt.joint
	prob.Locks = tradingLocks
	prob.StepLabel = func(k int) string { return d.Panel.Period(d.Panel.T + k).String() }
	sol, nonneg, err := reconcileOpen(method, rc, prob, d.Panel.Stats.Negative == 0, trading, st, opt.Horizon)
	if err != nil {
		return nil, lockError(rc, err)
	}
	stage("reconcile", start)
	var sampled *Sampled
	if opt.Intervals == IntervalsBootstrap {
		start = time.Now()
		if len(tradingLocks) > 0 {
			return nil, inputerr.ForOption("Intervals", "bootstrap intervals cannot be combined with locked forecasts yet; use %s or %s intervals", IntervalsErrorQuantiles, IntervalsGaussian)
		}
		open := sol
		open.Forecast = trading.rows(sol.Forecast)
		if sampled, err = bootstrapIntervals(method, prob, open, trading.fits(fits), trading, st, opt.Horizon, opt.Levels,
			opt.Draws, opt.joint, budget); err != nil {
			return nil, err
		}
		stage("bootstrap", start)
	}

	res := &Result{Structure: st, Calendar: Calendar{First: d.Panel.First, T: d.Panel.T}, History: history,
		Fits: fits, Solution: sol, Sampled: sampled, Levels: opt.Levels, Nonnegative: nonneg, Horizon: opt.Horizon, KeyTypes: d.KeyTypes}
	if opt.Intervals == IntervalsErrorQuantiles {
		start = time.Now()
		errs, err := reconciledErrors(method, prob, trading, st)
		if err != nil {
			return nil, err
		}
		res.Shape = errorShape(st, errs, opt.Horizon, opt.Levels)
		stage("reconcile", start)
	}
	if len(opt.PlanGrains) > 0 {
		start = time.Now()
		res.Plans = res.plans(opt.PlanGrains)
		stage("plans", start)
	}
	rep.fill(d, opt, rc, res, method.Name())
	if err := res.recordLocks(&rep, rc, locks); err != nil {
		return nil, err
	}
	rep.Reconcile.Shape = res.Shape
	res.Report = rep
	if rc.Calibrate > 0 {
		start := time.Now()
		if err := calibrate(ctx, d, opt, res, reconcile.Label(rc.Method, rc.Cov, rc.At), rc.Calibrate); err != nil {
			return nil, err
		}
		res.Report.Timings["calibrate"] = time.Since(start).Seconds()
	}
	return res, nil
}

// nonnegativeFor says whether reconciliation will be non-negative: the
// option when given, else the method's default when the history has no
// negative value (noNegative).
func nonnegativeFor(method reconcile.Method, rc Reconciliation, noNegative bool) bool {
	if rc.Nonnegative != nil {
		return *rc.Nonnegative
	}
	info, _ := reconcile.LookupMethod(method.Name())
	return info.NonNegativeDefault && noNegative
}

// reconcileOpen reconciles the still-trading part of the structure and
// maps the solution back to the full structure (closed nodes are zero).
// noNegative says whether the history has no negative value, which turns
// non-negativity on for mint when the option leaves it automatic.
func reconcileOpen(method reconcile.Method, rc Reconciliation, prob reconcile.Problem, noNegative bool,
	trading *openPart, st *hierarchy.Structure, h int) (reconcile.Solution, bool, error) {
	nonneg := nonnegativeFor(method, rc, noNegative)
	prob.Nonnegative = nonneg
	prob.Paths = rc.Paths
	sol, err := method.Reconcile(prob)
	if err != nil {
		return sol, nonneg, err
	}
	return trading.expand(st, sol, h), nonneg, nil
}

// problem assembles the reconciliation input: base forecasts and variances
// per node, and residuals aligned to the panel calendar of T periods (NaN
// where a node has none).
func problem(st *hierarchy.Structure, history [][]float64, fits []NodeFit, T int) reconcile.Problem {
	n := len(fits)
	p := reconcile.Problem{Structure: st, History: history,
		Base: make([][]float64, n), BaseVar: make([][]float64, n), Residuals: make([][]float64, n)}
	for i, f := range fits {
		p.Base[i] = f.Mean
		p.BaseVar[i] = f.Variance
		r := make([]float64, T)
		f.ResidualsOnCalendar(r)
		p.Residuals[i] = r
	}
	return p
}

// Quantile is the standard normal quantile for a central interval of the
// given level in percent.
func Quantile(level float64) float64 {
	return distuv.UnitNormal.Quantile(0.5 + level/200)
}

// Bounds returns the central prediction interval of node i at step k
// (0-based) for a level in percent: the Gaussian forecast ± z·sd with sd
// from the coherent variance. Under non-negative reconciliation a lower
// bound below zero is raised to zero (values below zero cannot occur, so
// coverage is unchanged). Without variances both bounds are NaN. With a
// calibration (Result.Calibration), or else with error-quantile intervals
// (Result.Shape), z is multiplied by the factor of the node's level, the
// step's horizon group and the interval level. With
// bootstrap intervals (Result.Sampled) the bounds are the empirical
// quantiles of the reconciled draws, the lower one raised to zero as
// above.
func (r *Result) Bounds(i, k int, level float64) (lo, hi float64) {
	if r.Sampled != nil {
		if lo, hi, ok := r.Sampled.bounds(i, k, level); ok {
			if r.Nonnegative {
				lo = math.Max(lo, 0)
			}
			return lo, hi
		}
	}
	z := Quantile(level)
	c := r.Calibration
	if c == nil {
		c = r.Shape
	}
	if c != nil {
		if q := slices.Index(c.Intervals, level); q >= 0 {
			z *= c.factor(r.Structure.Levels[r.Structure.Nodes[i].Level].Name, k, q)
		}
	}
	return r.bounds(i, k, z)
}

func (r *Result) bounds(i, k int, z float64) (lo, hi float64) {
	if r.Solution.Variance == nil {
		return math.NaN(), math.NaN()
	}
	f := r.Solution.Forecast[i][k]
	sd := math.Sqrt(math.Max(r.Solution.Variance[i][k], 0))
	lo, hi = f-z*sd, f+z*sd
	if r.Nonnegative {
		lo = math.Max(lo, 0)
	}
	return lo, hi
}

// ForecastPeriod is the calendar period of forecast step k (0-based).
func (r *Result) ForecastPeriod(k int) tableio.Period { return r.Calendar.Period(r.Calendar.T + k) }

// LevelLabel writes an interval level as it appears in column names: 80,
// or 97.5 as 97_5.
func LevelLabel(l float64) string {
	if l == math.Trunc(l) {
		return fmt.Sprintf("%d", int(l))
	}
	s := fmt.Sprintf("%g", l)
	out := []byte(s)
	for i, c := range out {
		if c == '.' {
			out[i] = '_'
		}
	}
	return string(out)
}
