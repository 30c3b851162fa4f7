// Package pipeline runs trueup's main job: read the sales table, build the
// grouped structure, fit a model to every node, reconcile, attach coherent
// intervals and write the result tables. Each stage is one function call
// with plain values in and out.
package engine

import (
	"fmt"
	"math"
	"time"

	"gonum.org/v1/gonum/stat/distuv"

	"trueup/hierarchy"
	"trueup/inputerr"
	"trueup/models"
	"trueup/models/families"
	"trueup/reconcile"
	"trueup/tableio"
)

// Config is everything a forecast run needs. The zero value of each
// optional field means the documented default.
type Config struct {
	Source

	Period int // seasonal period; 0 = from the grain

	Horizon int    // 0 = one seasonal cycle
	Family  string // "" = families.Default
	Method  string // "" = DefaultMethod
	Cov     string // covariance for projection methods
	At      string // level for middle-out
	// Nonnegative asks for non-negative reconciled bottom forecasts. nil
	// means automatic: on for mint when the history has no negative value
	// (sales cannot be negative), off otherwise.
	Nonnegative *bool
	Levels      []float64 // interval levels in percent; nil = 80, 95

	Workers int              // parallel fits; < 1 means 1
	OutDir  string           // where the tables go
	Formats []tableio.Format // nil = Parquet only

	// Progress, when set, is called after every node fit.
	Progress func(done, total int)
}

// Result is what a run produced.
type Result struct {
	Structure *hierarchy.Structure
	Panel     *Panel
	Fits      []NodeFit
	Solution  reconcile.Solution
	Report    RunReport
	// Levels are the interval levels in percent; Nonnegative says whether
	// the reconciliation was constrained to non-negative forecasts.
	Levels      []float64
	Nonnegative bool
}

// Validate checks the options that do not need the data.
func (c *Config) Validate() error {
	if c.Horizon < 0 {
		return inputerr.New("--horizon must be at least 1, got %d", c.Horizon)
	}
	if c.Period < 0 {
		return inputerr.New("--period must be positive, got %d", c.Period)
	}
	for _, l := range c.Levels {
		if !(l > 0 && l < 100) {
			return inputerr.New("--levels must lie strictly between 0 and 100, got %v", l)
		}
	}
	if c.OutDir == "" {
		return inputerr.New("give --out DIR for the result tables")
	}
	return nil
}

// Run executes the whole job. Nothing is written unless every stage before
// writing succeeded, and each file is written atomically.
func Run(cfg Config) (*Result, error) {
	if err := cfg.Validate(); err != nil {
		return nil, err
	}
	if cfg.Levels == nil {
		cfg.Levels = []float64{80, 95}
	}
	if cfg.Formats == nil {
		cfg.Formats = []tableio.Format{tableio.Parquet}
	}
	if cfg.Family == "" {
		cfg.Family = families.Default
	}
	if cfg.Method == "" {
		cfg.Method = DefaultMethod
	}
	family, err := families.Registry().Lookup(cfg.Family)
	if err != nil {
		return nil, inputerr.New("--family: %v", err)
	}
	if cfg.Method == "mint" && cfg.Cov == "" {
		cfg.Cov = "shrink"
	}
	method, err := reconcile.ByName(cfg.Method, cfg.Cov, cfg.At)
	if err != nil {
		return nil, err
	}
	rep := RunReport{Version: Version, Timings: map[string]float64{}}
	stage := func(name string, start time.Time) { rep.Timings[name] = time.Since(start).Seconds() }

	ld, err := cfg.Source.load()
	if err != nil {
		return nil, err
	}
	rep.Timings["read"], rep.Timings["structure"] = ld.readSeconds, ld.structureSeconds
	panel, st, bottom := ld.panel, ld.st, ld.bottom
	start := time.Now()
	closed := closedBottoms(bottom)
	history := fittingHistory(st, bottom, closed)
	trading, err := openStructure(st, closed)
	if err != nil {
		return nil, err
	}
	rep.Timings["structure"] += time.Since(start).Seconds()

	period := cfg.Period
	if period == 0 {
		period = panel.Grain.SeasonalPeriod()
	}
	if cfg.Horizon == 0 {
		cfg.Horizon = period
	}
	rep.Options = cfg.options() // as resolved, defaults filled in
	start = time.Now()
	fits := fitNodes(history, family, models.FitOptions{Period: period, Horizon: cfg.Horizon}, cfg.Workers, cfg.Progress)
	stage("fit", start)

	start = time.Now()
	prob := problem(trading.st, trading.rows(history), trading.fits(fits))
	if cfg.Nonnegative == nil {
		auto := method.Name() == "mint" && panel.Stats.Negative == 0
		cfg.Nonnegative = &auto
		rep.Options["nonnegative"] = auto
	}
	prob.Nonnegative = *cfg.Nonnegative
	sol, err := method.Reconcile(prob)
	if err != nil {
		return nil, err
	}
	sol = trading.expand(st, sol, cfg.Horizon)
	stage("reconcile", start)

	res := &Result{Structure: st, Panel: panel, Fits: fits, Solution: sol, Levels: cfg.Levels, Nonnegative: *cfg.Nonnegative}
	rep.fill(cfg, ld, panel, st, fits, sol, method.Name(), period)
	start = time.Now()
	files, err := writeOutputs(cfg, res, &rep)
	if err != nil {
		return nil, err
	}
	stage("write", start)
	rep.Files = files
	res.Report = rep
	if err := writeRunReport(cfg.OutDir, &rep); err != nil {
		return nil, err
	}
	return res, nil
}

// problem assembles the reconciliation input: base forecasts and variances
// per node, and residuals aligned to the panel calendar (NaN where a node
// has none).
func problem(st *hierarchy.Structure, history [][]float64, fits []NodeFit) reconcile.Problem {
	n := len(fits)
	T := len(history[0])
	p := reconcile.Problem{Structure: st, History: history,
		Base: make([][]float64, n), BaseVar: make([][]float64, n), Residuals: make([][]float64, n)}
	for i, f := range fits {
		p.Base[i] = f.Mean
		p.BaseVar[i] = f.Variance
		r := make([]float64, T)
		f.residualsOnCalendar(r)
		p.Residuals[i] = r
	}
	return p
}

// quantile is the standard normal quantile for a central interval of the
// given level in percent.
func quantile(level float64) float64 {
	return distuv.UnitNormal.Quantile(0.5 + level/200)
}

// DefaultMethod is the reconciliation used when --method is not given:
// MinT with the shrinkage covariance (Wickramasuriya, Athanasopoulos &
// Hyndman 2019), the most accurate of the published projections.
const DefaultMethod = "mint"

// Version is the program version recorded in run.json.
const Version = "0.1.0"

func levelLabel(l float64) string {
	if l == math.Trunc(l) {
		return fmt.Sprintf("%d", int(l))
	}
	return fmt.Sprintf("%g", l)
}
