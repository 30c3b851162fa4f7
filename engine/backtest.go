package engine

import (
	"context"
	"fmt"
	"math"
	"slices"
	"strings"
	"time"

	"trueup/accuracy"
	"trueup/hierarchy"
	"trueup/inputerr"
	"trueup/reconcile"
	"trueup/tableio"
)

// BacktestOptions are the settings of a rolling-origin backtest. The zero
// value of every field is a documented default.
type BacktestOptions struct {
	// Options are the forecast settings every origin runs with (model,
	// period, horizon, interval levels, fitter, progress). Reconcile is
	// ignored: the methods compared are in Compare.
	Options
	// Origins is the number of forecast origins; 0 means
	// DefaultOrigins. The last origin leaves exactly one horizon of
	// actuals after it.
	Origins int
	// Every is the spacing of the origins in periods; 0 means 1.
	Every int
	// Compare names the methods compared (see CompareNames); nil means
	// DefaultCompare. A method that cannot run on the structure is
	// skipped with its reason (BacktestResult.Skipped), not an error.
	Compare []string
}

// DefaultOrigins is the number of origins of a backtest; AutoOrigins that
// of the short backtest behind Reconciliation{Method: "auto"}.
const (
	DefaultOrigins = 4
	AutoOrigins    = 3
)

// DefaultCompare are the methods a backtest compares when none are named:
// the base forecasts, bottom-up, MinT with the shrinkage and with the
// variance-scaling covariance, and top-down by forecast proportions (which
// crossed chains refuse; it is then listed as skipped).
var DefaultCompare = []string{"base", "bottom-up", "mint-shrink", "mint-variance", "top-down-fcst"}

// BaseMethod names the unreconciled base forecasts among compared methods.
const BaseMethod = "base"

// CompareNames describes the method names Compare accepts: base and the
// label (reconcile.Label) of every method of reconcile.Methods.
func CompareNames() string {
	names := []string{BaseMethod}
	for _, m := range reconcile.Methods() {
		switch m.Param {
		case reconcile.CovParam:
			names = append(names, reconcile.Label(m.Name, "COV", ""))
		case reconcile.LevelParam:
			names = append(names, reconcile.Label(m.Name, "", "LEVEL"))
		default:
			names = append(names, m.Name)
		}
	}
	return strings.Join(names, ", ") + " (COV: " + strings.Join(reconcile.CovNames(), ", ") + ")"
}

// compareSetting maps a compared method's label to reconciliation
// settings. Only the full label is accepted ("mint-shrink", not "mint"),
// so that one method is not compared under two names.
func compareSetting(name string) (Reconciliation, error) {
	if name == BaseMethod {
		return Reconciliation{}, nil
	}
	method, cov, at, ok := reconcile.ParseLabel(name)
	if !ok {
		return Reconciliation{}, inputerr.ForOption("Compare", "unknown method %q to compare (use %s)", name, CompareNames())
	}
	if full := reconcile.Label(method, cov, at); full != name {
		return Reconciliation{}, inputerr.ForOption("Compare", "method %q to compare needs its covariance or level, as in %s (use %s)", name, strings.Replace(full, "@", "@LEVEL", 1), CompareNames())
	}
	rc := Reconciliation{Method: method, Cov: cov, At: at}
	if at != "" {
		// The level is checked against the structure when the method runs.
		return rc, nil
	}
	if _, _, err := rc.method(); err != nil {
		return rc, inputerr.ForOption("Compare", "method %q: %v", name, err)
	}
	return rc, nil
}

// SkippedMethod is a compared method that could not run, and why.
type SkippedMethod struct {
	Method string `json:"method"`
	Reason string `json:"reason"`
}

// BacktestOrigin is one forecast origin: the history cut before it, every
// method's forecasts from the same base fits, and the actuals.
type BacktestOrigin struct {
	// Periods is the number of history periods kept; the first forecast
	// period is Start.
	Periods int
	Start   tableio.Period
	// Structure is the structure of the bottom series that existed before
	// the origin; series that opened later are not scored.
	Structure *hierarchy.Structure
	// Results holds, per compared method that ran, the forecast run on the
	// cut history (the base method's result carries the base forecasts
	// and variances as its solution). Every result shares the same fits.
	Results map[string]*Result
	// Actual holds the actual value of every node of Structure at each
	// forecast step (bottom actuals summed, a bottom series without a row
	// counting as zero sales), n × h.
	Actual [][]float64
	// ScaleMAE and ScaleMSE are each node's in-sample seasonal naive
	// scales at the origin (accuracy.Scale on the history as fitted).
	ScaleMAE, ScaleMSE []float64
	// Energy holds, per method with a joint distribution, the energy
	// score of its joint forecast at each step (see scoreEnergy).
	Energy map[string][]float64

	fits []NodeFit // the fits every method shares
}

// Error is actual − forecast of node i at step k under method.
func (o *BacktestOrigin) Error(method string, i, k int) float64 {
	return o.Actual[i][k] - o.Results[method].Solution.Forecast[i][k]
}

// Scored reports whether node i counts in the scores at this origin: it
// trades at the origin (a closed node's forecast is a known zero) and has
// a positive, finite scale.
func (o *BacktestOrigin) Scored(i int) bool {
	if o.fits[i].Closed {
		return false
	}
	s := o.ScaleMAE[i]
	return s > 0 && !math.IsInf(s, 0) && o.ScaleMSE[i] > 0
}

// BacktestResult is a backtest held in memory.
type BacktestResult struct {
	// Structure is the structure of the whole history.
	Structure *hierarchy.Structure
	// KeyTypes are the input's key column types (see Data.KeyTypes).
	KeyTypes []tableio.ColumnType
	Origins  []*BacktestOrigin
	// Methods are the compared methods that ran, in the order asked;
	// Skipped those that could not.
	Methods []string
	Skipped []SkippedMethod
	Levels  []float64
	Horizon int
	Period  int
	// Scores summarise accuracy per level, method and step (see Score);
	// Headline per method.
	Scores   []Score
	Headline []Headline
	// Recommendation is the coherent method with the best headline MASE.
	Recommendation Recommendation
	// Calibration compares, per method, its intervals with and without
	// conformal calibration at the later origins (see CalibrationCheck).
	Calibration []CalibrationCheck
	// Attribution holds the error attribution (see attribution.go).
	Attribution *Attribution
	Report      BacktestReport
}

// Score is the accuracy of one method at one level, over every scored
// node and origin, at one step (Step 1…h) or over all steps (Step 0).
// Errors are actual − forecast; every measure is scaled by the node's
// in-sample seasonal naive error at the origin (Hyndman & Koehler 2006).
type Score struct {
	Level  string `json:"level"`
	Method string `json:"method"`
	Step   int    `json:"step"`
	// Count is the number of node-origin pairs scored.
	Count int `json:"count"`
	// MASE is the mean absolute scaled error; RMSSE the mean over node
	// and origin of the root mean squared scaled error; Bias the mean
	// scaled error (positive: forecasts too low).
	MASE  float64 `json:"mase"`
	RMSSE float64 `json:"rmsse"`
	Bias  float64 `json:"bias"`
	// CRPS is the mean continuous ranked probability score of the
	// Gaussian predictive distribution N(forecast, variance) the
	// intervals come from (accuracy.CRPSGaussian), divided by the scale:
	// it judges the whole distribution, not one interval, and equals the
	// MASE for a distribution with no spread. Lower is better.
	CRPS float64 `json:"crps"`
	// Coverage and IntervalScore per interval in Intervals (percent;
	// BacktestResult.Levels): the share of actuals inside the interval,
	// and the mean interval score (Gneiting & Raftery 2007, eq. 43)
	// divided by the scale. run.json names each by its interval, as the
	// scores table does: coverage_80, interval_score_80.
	Coverage      []float64
	IntervalScore []float64
	Intervals     []float64
}

// Headline is a method's score averaged over levels, each level weighing
// the same: the mean of the level means (all steps).
type Headline struct {
	Method string  `json:"method"`
	MASE   float64 `json:"mase"`
	RMSSE  float64 `json:"rmsse"`
	Bias   float64 `json:"bias"`
	CRPS   float64 `json:"crps"`
	// Coverage and IntervalScore per interval in Intervals, as in Score.
	Coverage      []float64
	IntervalScore []float64
	Intervals     []float64
	// EnergyScore is the energy score of the joint forecast of every
	// scored node (Gneiting & Raftery 2007, eq. 22; accuracy.EnergyScore
	// from EnergyDraws draws of the method's joint Gaussian), each node
	// divided by its scale, averaged over origins and steps; EnergyByStep
	// per step. It rewards getting the co-movement of nodes right, which
	// per-node scores cannot see. Lower is better; NaN (nil) without a
	// joint distribution.
	EnergyScore  float64   `json:"energy_score"`
	EnergyByStep []float64 `json:"energy_score_by_step"`
}

// Recommendation names the best coherent method by headline MASE.
type Recommendation struct {
	Method string  `json:"method"`
	MASE   float64 `json:"mase"`
	// RunnerUp is the next best coherent method and Margin how much lower
	// the winner's headline MASE is, in percent of the runner-up's.
	RunnerUp string  `json:"runner_up,omitempty"`
	Margin   float64 `json:"margin_percent"`
	// VersusBase is the improvement over the base forecasts' headline
	// MASE in percent (negative: worse than base); NaN without base.
	VersusBase float64 `json:"versus_base_percent"`
	// Losses lists the levels where another method has a lower MASE.
	Losses []LevelLoss `json:"losses"`
	Reason string      `json:"reason"`
}

// LevelLoss is a level where the recommended method is beaten.
type LevelLoss struct {
	Level  string  `json:"level"`
	Best   string  `json:"best"`
	MASE   float64 `json:"mase"`
	BestIs float64 `json:"best_mase"`
}

// Backtest evaluates the whole pipeline at K rolling origins: at each, the
// history is cut before the origin (rows after it are dropped and the
// panel and structure rebuilt, so openings and closures are judged as a
// forecast run at the origin would judge them), every node is fitted once
// as Forecast fits it, every compared method reconciles those same fits,
// and the forecasts are scored against the actuals. Nothing is written.
func Backtest(ctx context.Context, d *Data, bo BacktestOptions) (*BacktestResult, error) {
	if d.Structure == nil {
		return nil, inputerr.ForOption("Chains", "a backtest needs key columns to build the structure from")
	}
	if d.rows == nil {
		return nil, fmt.Errorf("engine: Backtest needs data read by Load")
	}
	opt, err := bo.Options.resolve(d.Panel.Grain.SeasonalPeriod())
	if err != nil {
		return nil, err
	}
	if bo.Origins < 0 {
		return nil, inputerr.ForOption("Origins", "the number of origins must be at least 1, got %d", bo.Origins)
	}
	if bo.Every < 0 {
		return nil, inputerr.ForOption("Every", "the spacing of origins must be at least 1 period, got %d", bo.Every)
	}
	K, every := bo.Origins, bo.Every
	if K == 0 {
		K = DefaultOrigins
	}
	if every == 0 {
		every = 1
	}
	compare := bo.Compare
	if compare == nil {
		compare = DefaultCompare
	}
	settings := map[string]Reconciliation{}
	var methods []string
	for _, name := range compare {
		if _, dup := settings[name]; dup {
			continue
		}
		rc, err := compareSetting(name)
		if err != nil {
			return nil, err
		}
		settings[name] = rc
		methods = append(methods, name)
	}
	if len(methods) == 0 {
		return nil, inputerr.ForOption("Compare", "no method to compare (use %s)", CompareNames())
	}
	T, h := d.Panel.T, opt.Horizon
	minFit := 2 * opt.Period
	if opt.Period == 1 {
		minFit = 4
	}
	need := minFit + (K-1)*every + h
	if T < need {
		return nil, inputerr.ForOption("Origins",
			"the history has %d periods; %d origins %d apart with a horizon of %d need at least %d: %d to fit at the first origin (two seasonal cycles), %d between the first and the last origin and %d of actuals after the last",
			T, K, every, h, need, minFit, (K-1)*every, h)
	}

	res := &BacktestResult{Structure: d.Structure, KeyTypes: d.KeyTypes, Levels: opt.Levels, Horizon: h, Period: opt.Period}
	rep := BacktestReport{Version: Version, Command: "backtest", Input: d.Input, Timings: map[string]float64{
		"read": d.ReadSeconds, "structure": d.StructureSeconds}}
	skipped := map[string]string{}
	progress := opt.Progress
	for o := 0; o < K; o++ {
		cut := T - h - (K-1-o)*every
		start := time.Now()
		cd, err := d.Cut(cut)
		if err != nil {
			return nil, err
		}
		rep.Timings["structure"] += time.Since(start).Seconds()

		// One fit per origin and grain, shared by every method: the
		// single-period fits, and the fits of the series summed over
		// quarters and seasons for the temporal methods (told apart by
		// their jobs' period, horizon and length).
		cache := map[[3]int][]NodeFit{}
		var fitSeconds float64
		fitter := FitterFunc(func(ctx context.Context, jobs []FitJob, _ func(int, int)) ([]NodeFit, error) {
			var key [3]int
			if len(jobs) > 0 {
				key = [3]int{jobs[0].Period, jobs[0].Horizon, len(jobs[0].Series)}
			}
			if f, ok := cache[key]; ok {
				return f, nil
			}
			start := time.Now()
			var p func(int, int)
			if progress != nil && len(cache) == 0 {
				p = func(done, total int) { progress(o*total+done, K*total) }
			}
			f, err := opt.Fitter.Fit(ctx, jobs, p)
			if err == nil {
				cache[key] = f
			}
			fitSeconds += time.Since(start).Seconds()
			return f, err
		})
		run := func(rc Reconciliation) (*Result, error) {
			ro := opt
			ro.Reconcile, ro.Fitter, ro.Progress, ro.joint = rc, fitter, nil, true
			return Forecast(ctx, cd, ro)
		}
		org := &BacktestOrigin{Periods: cut, Start: d.Panel.Period(cut), Results: map[string]*Result{}}
		start = time.Now()
		var first *Result // any method's result: they share the fits
		for _, m := range methods {
			if m == BaseMethod || skipped[m] != "" {
				continue
			}
			r, err := run(settings[m])
			if err != nil {
				if inputerr.Is(err) && ctx.Err() == nil {
					skipped[m] = fmt.Sprintf("origin %s: %v", org.Start, err)
					continue
				}
				return nil, err
			}
			org.Results[m] = r
			if first == nil {
				first = r
			}
		}
		if first == nil { // only base asked, or every method skipped
			r, err := run(Reconciliation{Method: reconcile.BottomUp{}.Name()})
			if err != nil {
				return nil, err
			}
			first = r
		}
		if slices.Contains(methods, BaseMethod) {
			base, err := baseResult(first)
			if err != nil {
				return nil, err
			}
			org.Results[BaseMethod] = base
		}
		rep.Timings["fit"] += fitSeconds
		rep.Timings["reconcile"] += time.Since(start).Seconds() - fitSeconds

		org.Structure, org.fits = first.Structure, first.Fits
		org.Actual = actuals(d, org.Structure, cut, h)
		n := len(org.Structure.Nodes)
		org.ScaleMAE, org.ScaleMSE = make([]float64, n), make([]float64, n)
		for i := range org.ScaleMAE {
			org.ScaleMAE[i], org.ScaleMSE[i], _ = accuracy.Scale(first.History[i], opt.Period)
		}
		for position, m := range methods {
			if org.Results[m] != nil {
				org.scoreEnergy(m, o, position, h)
			}
		}
		res.Origins = append(res.Origins, org)
	}
	for _, m := range methods {
		if reason := skipped[m]; reason != "" {
			res.Skipped = append(res.Skipped, SkippedMethod{Method: m, Reason: reason})
			for _, org := range res.Origins {
				delete(org.Results, m)
				delete(org.Energy, m)
			}
			continue
		}
		res.Methods = append(res.Methods, m)
	}
	if len(res.Methods) == 0 {
		return nil, inputerr.ForOption("Compare", "no compared method could run: %s", res.Skipped[0].Reason)
	}
	start := time.Now()
	res.score()
	res.checkCalibration()
	res.recommend()
	res.Attribution = attribute(res)
	rep.Timings["score"] = time.Since(start).Seconds()
	rep.fill(res, opt, K, every)
	rep.Warnings = append(d.Panel.Stats.InputNotes(), rep.Warnings...)
	res.Report = rep
	return res, nil
}

// baseResult is r with the base forecasts and their variances as its
// solution: the unreconciled forecasts, scored like any method, with the
// joint distribution of their errors (reconcile.BaseJoint).
func baseResult(r *Result) (*Result, error) {
	b := *r
	n := len(r.Fits)
	b.Solution = reconcile.Solution{Forecast: make([][]float64, n), Variance: make([][]float64, n)}
	for i, f := range r.Fits {
		b.Solution.Forecast[i], b.Solution.Variance[i] = f.Mean, f.Variance
	}
	joint, err := reconcile.BaseJoint(problem(r.Structure, r.History, r.Fits, r.Calendar.T))
	if err != nil {
		return nil, err
	}
	b.Solution.Joint = joint
	b.Nonnegative = false
	b.Sampled = nil // the base forecasts keep their Gaussian intervals
	if r.Shape != nil {
		errs := make([][]float64, n)
		for i, f := range r.Fits {
			errs[i] = make([]float64, r.Calendar.T)
			f.ResidualsOnCalendar(errs[i])
			if f.Closed || !f.Fitted {
				errs[i] = nil
			}
		}
		b.Shape = errorShape(r.Structure, errs, r.Horizon, r.Levels)
	}
	return &b, nil
}

// actuals returns the actual value of every node of st over the h periods
// from column cut of d's panel: each bottom series of st takes its value
// in the full panel, zero where it has no row (it had closed, or paused),
// and aggregates add their bottom series, so actuals are coherent on st.
func actuals(d *Data, st *hierarchy.Structure, cut, h int) [][]float64 {
	off := st.BottomOffset()
	bottom := make([][]float64, st.NumBottom())
	for j := range bottom {
		row := make([]float64, h)
		if jf, ok := d.Structure.BottomIndex(st.Nodes[off+j].Key); ok {
			for k := range row {
				if v := d.Bottom[jf][cut+k]; !math.IsNaN(v) {
					row[k] = v
				}
			}
		}
		bottom[j] = row
	}
	return st.S.Aggregate(bottom)
}

// Cut returns the data as a run before period column `periods` of the
// panel would read it: the rows of earlier periods only, with panel and
// structure rebuilt by Load's rules (a series with no row before the
// origin does not exist yet; one whose rows stop before it has closed).
func (d *Data) Cut(periods int) (*Data, error) {
	if d.rows == nil {
		return nil, fmt.Errorf("engine: Cut needs data read by Load")
	}
	if periods < 1 || periods > d.Panel.T {
		return nil, fmt.Errorf("engine: cut at %d periods of %d", periods, d.Panel.T)
	}
	rows, end := d.rows, d.Panel.First.Index+periods
	native, g := d.Panel.Stats.NativeGrain, d.Panel.Grain
	keep := make([]int, 0, rows.N)
	var last tableio.Period
	idx := 0
	for i, p := range rows.Periods {
		if i == 0 || p != last {
			last = p
			c, err := p.Coarsen(native)
			if err == nil {
				c, err = c.Coarsen(g)
			}
			if err != nil {
				return nil, err
			}
			idx = c.Index
		}
		if idx < end {
			keep = append(keep, i)
		}
	}
	sub := subRows(rows, keep)
	in := d.Input
	in.Rows = len(keep)
	// The origin is chosen: its last period is not set aside as partial,
	// and the rows are already cut.
	src := d.src
	src.KeepLastPeriod, src.Until = true, nil
	nd := &Data{Input: in, KeyTypes: d.KeyTypes, rows: sub, src: src}
	if err := nd.arrange(sub, src); err != nil {
		return nil, err
	}
	return nd, nil
}
