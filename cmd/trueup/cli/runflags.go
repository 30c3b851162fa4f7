package cli

import (
	"fmt"
	"os"
	"runtime"
	"strconv"
	"strings"

	"github.com/schollz/progressbar/v3"
	"github.com/spf13/cobra"
	"golang.org/x/term"

	"trueup/engine"
	"trueup/engine/output"
	"trueup/models/families"
	"trueup/reconcile"
	"trueup/tableio"
)

// runFlags are the flags shared by forecast and demo.
type runFlags struct {
	period  int
	horizon int
	family  string
	reconcileFlags
	levels string
	// intervalMethod is --interval-method: gaussian or bootstrap.
	intervalMethod string
	workers        int
	origins        int // backtest origins behind --method auto
	// planGrain is --plan-grain (forecast, demo): grains of plan totals.
	planGrain string
	// calibrate is the number of backtest origins the intervals are
	// calibrated from (0: none).
	calibrate int
	// hasOrigins says whether --origins is this command's (forecast, demo).
	hasOrigins bool
	outputFlags
}

// reconcileFlags choose the reconciliation (forecast, demo, reconcile).
type reconcileFlags struct {
	method, cov, at string
	nonnegative     bool
	paths           int
	locks           string
}

func (f *reconcileFlags) register(cmd *cobra.Command) {
	fl := cmd.Flags()
	fl.StringVar(&f.method, "method", engine.DefaultMethod, methodHelp(false))
	fl.StringVar(&f.cov, "cov", "", "covariance for "+methodsWhere(func(m reconcile.MethodInfo) bool { return m.Param == reconcile.CovParam })+": "+strings.Join(reconcile.CovNames(), ", ")+" (default shrink)")
	fl.StringVar(&f.at, "at", "", "level to reconcile from with "+methodsWhere(func(m reconcile.MethodInfo) bool { return m.Param == reconcile.LevelParam })+", e.g. region+category")
	fl.BoolVar(&f.nonnegative, "nonnegative", false, "keep reconciled bottom-level forecasts at or above zero\n(default: on for "+methodsWhere(func(m reconcile.MethodInfo) bool { return m.NonNegativeDefault })+" when the history has no negative value; --nonnegative=false turns it off)")
	fl.IntVar(&f.paths, "paths", reconcile.DefaultPaths, fmt.Sprintf("above %d nodes, mint's interval widths are exact while at most this many nodes have residuals that start late, partly from this many sample paths above (more: slower, closer)", reconcile.DenseMaxNodes))
	fl.StringVar(&f.locks, "lock", "", "lock table (CSV, Parquet or Arrow): the key columns (empty where a node adds a column up),\n"+
		engine.LockPeriodColumn+" and "+engine.LockValueColumn+"; each row fixes a node's forecast at a forecast period exactly (a target, a\nclosure as 0) and mint reconciles every other node around the locks")
	groupFlags(cmd, "Reconciliation", "method", "cov", "at", "nonnegative", "paths", "lock")
}

// methodHelp lists the reconciliation methods of reconcile.Methods with
// their help, and the automatic choice where the command offers it.
func methodHelp(auto bool) string {
	var b strings.Builder
	b.WriteString("reconciliation method:")
	for _, m := range reconcile.Methods() {
		fmt.Fprintf(&b, "\n  %s: %s", m.Name, m.Help)
	}
	if auto {
		fmt.Fprintf(&b, "\n  %s: the best of a short backtest (see trueup backtest and --origins)", engine.AutoMethod)
	}
	b.WriteString("\n(a backtest's label such as mint-variance or middle-out@region is accepted too)")
	return b.String()
}

// methodsWhere names the methods of reconcile.Methods that keep accepts.
func methodsWhere(keep func(reconcile.MethodInfo) bool) string {
	var names []string
	for _, m := range reconcile.Methods() {
		if keep(m) {
			names = append(names, m.Name)
		}
	}
	return strings.Join(names, ", ")
}

func (f *reconcileFlags) options(cmd *cobra.Command) engine.Reconciliation {
	r := engine.Reconciliation{Method: f.method, Cov: f.cov, At: f.at, Paths: f.paths, Locks: f.locks}
	if cmd.Flags().Changed("nonnegative") {
		r.Nonnegative = &f.nonnegative
	}
	return r
}

// outputFlags say where and how results are written.
type outputFlags struct {
	out      string
	formats  string
	quiet    bool
	json     bool
	noReport bool
}

func (f *outputFlags) register(cmd *cobra.Command, defaultOut string) {
	fl := cmd.Flags()
	fl.StringVar(&f.out, "out", defaultOut, "directory for the result tables and run.json")
	fl.StringVar(&f.formats, "format", "parquet", "output formats, comma-separated: "+strings.Join(output.Formats(), ", "))
	fl.BoolVar(&f.noReport, "no-report", false, "do not write report.html (the report is written by default)")
	fl.BoolVarP(&f.quiet, "quiet", "q", false, "no progress bar")
	fl.BoolVar(&f.json, "json", false, "print a machine-readable summary on stdout")
	groupFlags(cmd, "Output", "out", "format", "no-report", "quiet", "json")
}

// outputFormats lists the formats to write: those of --format, then the
// report unless --no-report.
func (f *outputFlags) outputFormats() ([]string, error) {
	list := f.formats
	if !f.noReport {
		list += ",report"
	}
	return output.ParseFormats(list)
}

func (f *runFlags) register(cmd *cobra.Command, defaultOut string) {
	f.registerModel(cmd)
	f.reconcileFlags.register(cmd)
	fl := cmd.Flags()
	fl.Lookup("method").Usage = methodHelp(true)
	fl.IntVar(&f.origins, "origins", engine.AutoOrigins, "with --method auto: backtest origins the method is chosen at")
	fl.IntVar(&f.calibrate, "calibrate", 0, "calibrate the intervals from a backtest at this many origins, applied only if it helped at the backtest's later origins (costs as many extra fits; 0: off)")
	groupFlags(cmd, "Reconciliation", "origins", "calibrate")
	f.hasOrigins = true
	f.outputFlags.register(cmd, defaultOut)
	fl.StringVar(&f.planGrain, "plan-grain", "", "also write every node's totals by these coarser grains, comma-separated:\nquarter, year (month for weekly or daily data); a week counts in the month of its Thursday.\nA period begun before the origin adds the actuals past to the forecasts (the plans table)")
	groupFlags(cmd, "Output", "plan-grain")
}

// planGrains reads --plan-grain: calendar grain names, comma-separated.
// Whether each is coarser than the data's grain is the engine's check.
func (f *runFlags) planGrains() ([]tableio.Grain, error) {
	if strings.TrimSpace(f.planGrain) == "" {
		return nil, nil
	}
	var out []tableio.Grain
	for _, part := range strings.Split(f.planGrain, ",") {
		g, err := tableio.ParseGrain(strings.TrimSpace(part))
		if err != nil || g == tableio.Index || g == tableio.Day {
			return nil, &usageError{fmt.Errorf("--plan-grain: %q is not a plan grain (use week, month, quarter or year)", strings.TrimSpace(part))}
		}
		out = append(out, g)
	}
	return out, nil
}

// registerModel registers the model flags only (season length, horizon,
// family, intervals, workers): backtest compares reconciliations instead of choosing
// one.
func (f *runFlags) registerModel(cmd *cobra.Command) {
	fl := cmd.Flags()
	fl.IntVar(&f.period, "season-length", 0, "periods in one season (default from the grain: 7, 52, 12, 4; 1 for years and time indexes)")
	fl.IntVar(&f.horizon, "horizon", 0, "periods to forecast (default: one seasonal cycle, e.g. 12 months)")
	fl.StringVar(&f.family, "family", "", "model family for every node: "+familyNames())
	fl.StringVar(&f.levels, "intervals", "80,95", "prediction intervals to write, in percent, comma-separated")
	fl.StringVar(&f.intervalMethod, "interval-method", engine.DefaultIntervals, "how intervals are made:\n  "+
		engine.IntervalsErrorQuantiles+": forecast ± z·sd from the reconciled variances, z taken from the quantiles of the\n  reconciled forecasts' past one-step errors (per level) instead of the normal distribution's\n  "+
		engine.IntervalsGaussian+": forecast ± z·sd from the reconciled variances, z from the normal distribution\n  "+
		engine.IntervalsBootstrap+fmt.Sprintf(": quantiles of %d sample paths simulated from each node's model with residuals\n  resampled at the same periods for every node, each path reconciled", engine.DefaultDraws))
	fl.IntVar(&f.workers, "workers", runtime.NumCPU(), "nodes fitted in parallel")
	groupFlags(cmd, "Model", "season-length", "horizon", "family", "intervals", "interval-method", "workers")
	keepOldNames(cmd)
}

// options turns the flags into engine options, checking them before any
// data is read.
func (f *runFlags) options(cmd *cobra.Command) (engine.Options, error) {
	if cmd.Flags().Changed("horizon") && f.horizon < 1 {
		return engine.Options{}, &usageError{fmt.Errorf("--horizon must be at least 1, got %d", f.horizon)}
	}
	if cmd.Flags().Changed("season-length") && f.period < 1 {
		return engine.Options{}, &usageError{fmt.Errorf("--season-length must be at least 1, got %d", f.period)}
	}
	if f.workers < 1 {
		return engine.Options{}, &usageError{fmt.Errorf("--workers must be at least 1, got %d", f.workers)}
	}
	levels, err := parseLevels(f.levels)
	if err != nil {
		return engine.Options{}, err
	}
	opt := engine.Options{
		Model:     families.Spec{Family: f.family},
		Period:    f.period,
		Horizon:   f.horizon,
		Reconcile: f.reconcileFlags.options(cmd),
		Levels:    levels,
		Intervals: f.intervalMethod,
		Fitter:    newFitter(f.workers),
	}
	if opt.PlanGrains, err = f.planGrains(); err != nil {
		return engine.Options{}, err
	}
	if f.hasOrigins && f.calibrate != 0 {
		if f.calibrate < 2 {
			return engine.Options{}, &usageError{fmt.Errorf("--calibrate needs at least 2 origins (factors from the earlier, checked at the later), got %d", f.calibrate)}
		}
		opt.Reconcile.Calibrate = f.calibrate
	}
	if f.hasOrigins && cmd.Flags().Changed("origins") {
		if f.origins < 1 {
			return engine.Options{}, &usageError{fmt.Errorf("--origins must be at least 1, got %d", f.origins)}
		}
		if f.method != engine.AutoMethod {
			return engine.Options{}, &usageError{fmt.Errorf("--origins applies to --method auto only")}
		}
		opt.Reconcile.Origins = f.origins
	}
	if !f.quiet && term.IsTerminal(int(os.Stderr.Fd())) {
		opt.Progress = progressBar("fitting nodes")
	}
	return opt, nil
}

// progressBar returns a progress callback drawing a bar on stderr.
func progressBar(what string) func(done, total int) {
	var bar *progressbar.ProgressBar
	return func(done, total int) {
		if bar == nil {
			bar = progressbar.NewOptions(total,
				progressbar.OptionSetWriter(os.Stderr),
				progressbar.OptionSetDescription(what),
				progressbar.OptionShowCount(),
				progressbar.OptionClearOnFinish(),
				progressbar.OptionThrottle(100_000_000))
		}
		_ = bar.Set(done)
	}
}

func familyNames() string {
	return strings.Join(families.Registry().Names(), ", ") + " (default " + families.Default + ")"
}

// parseLevels reads --intervals: percentages strictly between 0 and 100, none
// repeated.
func parseLevels(s string) ([]float64, error) {
	var out []float64
	seen := map[float64]bool{}
	for _, part := range strings.Split(s, ",") {
		v, err := strconv.ParseFloat(strings.TrimSpace(part), 64)
		if err != nil || !(v > 0 && v < 100) {
			return nil, &usageError{fmt.Errorf("--intervals: %q is not a percentage between 0 and 100", part)}
		}
		if seen[v] {
			return nil, &usageError{fmt.Errorf("--intervals: %v is given twice", v)}
		}
		seen[v] = true
		out = append(out, v)
	}
	return out, nil
}
