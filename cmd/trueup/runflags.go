package main

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
	"trueup/models/families"
	"trueup/tableio"
)

// runFlags are the flags shared by forecast and demo.
type runFlags struct {
	horizon     int
	family      string
	method      string
	cov         string
	at          string
	nonnegative bool
	levels      string
	workers     int
	out         string
	formats     string
	quiet       bool
	json        bool
}

func (f *runFlags) register(cmd *cobra.Command, defaultOut string) {
	fl := cmd.Flags()
	fl.IntVar(&f.horizon, "horizon", 0, "periods to forecast (default: one seasonal cycle, e.g. 12 months)")
	fl.StringVar(&f.family, "family", "", "model family for every node: "+familyNames())
	fl.StringVar(&f.method, "method", engine.DefaultMethod, "reconciliation: bottom-up, top-down-hist, top-down-avg, top-down-fcst, middle-out, mint")
	fl.StringVar(&f.cov, "cov", "", "covariance for mint: identity, structural, variance, sample, shrink (default shrink)")
	fl.StringVar(&f.at, "at", "", "level to reconcile from with middle-out, e.g. region+category")
	fl.BoolVar(&f.nonnegative, "nonnegative", false, "keep reconciled bottom-level forecasts at or above zero\n(default: on for mint when the history has no negative value; --nonnegative=false turns it off)")
	fl.StringVar(&f.levels, "levels", "80,95", "prediction interval levels in percent, comma-separated")
	fl.IntVar(&f.workers, "workers", runtime.NumCPU(), "nodes fitted in parallel")
	fl.StringVar(&f.out, "out", defaultOut, "directory for forecasts, models and run.json")
	fl.StringVar(&f.formats, "format", "parquet", "output formats, comma-separated: parquet, csv, arrow")
	fl.BoolVarP(&f.quiet, "quiet", "q", false, "no progress bar")
	fl.BoolVar(&f.json, "json", false, "print a machine-readable summary on stdout")
	groupFlags(cmd, "Model", "horizon", "family", "levels", "workers")
	groupFlags(cmd, "Reconciliation", "method", "cov", "at", "nonnegative")
	groupFlags(cmd, "Output", "out", "format", "quiet", "json")
}

// apply copies the flags into a pipeline configuration.
func (f *runFlags) apply(cmd *cobra.Command, cfg *engine.Config) error {
	if cmd.Flags().Changed("horizon") && f.horizon < 1 {
		return &usageError{fmt.Errorf("--horizon must be at least 1, got %d", f.horizon)}
	}
	levels, err := parseLevels(f.levels)
	if err != nil {
		return err
	}
	formats, err := tableio.ParseFormats(f.formats)
	if err != nil {
		return err
	}
	cfg.Horizon = f.horizon
	cfg.Family = f.family
	cfg.Method = f.method
	cfg.Cov = f.cov
	cfg.At = f.at
	if cmd.Flags().Changed("nonnegative") {
		cfg.Nonnegative = &f.nonnegative
	}
	cfg.Levels = levels
	cfg.Workers = f.workers
	cfg.OutDir = f.out
	cfg.Formats = formats
	if !f.quiet && term.IsTerminal(int(os.Stderr.Fd())) {
		var bar *progressbar.ProgressBar
		cfg.Progress = func(done, total int) {
			if bar == nil {
				bar = progressbar.NewOptions(total,
					progressbar.OptionSetWriter(os.Stderr),
					progressbar.OptionSetDescription("fitting nodes"),
					progressbar.OptionShowCount(),
					progressbar.OptionClearOnFinish(),
					progressbar.OptionThrottle(100_000_000))
			}
			_ = bar.Set(done)
		}
	}
	return nil
}

func familyNames() string {
	return strings.Join(families.Registry().Names(), ", ") + " (default " + families.Default + ")"
}

func parseLevels(s string) ([]float64, error) {
	var out []float64
	for _, part := range strings.Split(s, ",") {
		v, err := strconv.ParseFloat(strings.TrimSpace(part), 64)
		if err != nil || !(v > 0 && v < 100) {
			return nil, &usageError{fmt.Errorf("--levels: %q is not a percentage between 0 and 100", part)}
		}
		out = append(out, v)
	}
	return out, nil
}
