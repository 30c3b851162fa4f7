package cli

import (
	"encoding/json"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"
	"trueup/internal/words"

	"trueup/engine"
)

// printSummary prints what a run did: nodes per level, chosen models,
// warnings and where the files are; or, with asJSON, the run report.
func printSummary(w io.Writer, res *engine.Result, files []string, asJSON bool) error {
	rep := res.Report
	if asJSON {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(rep)
	}
	c := rep.Counts
	fmt.Fprintf(w, "Read %s rows: %s bottom series, %s to %s (%d %ss, season length %d).\n",
		grouped(float64(rep.Input.Rows)), grouped(float64(c.BottomSeries)), c.FirstPeriod, c.LastPeriod, c.Periods, c.Grain, c.SeasonalLag)
	how := rep.Reconcile.Method
	var extras []string
	if cov, _ := rep.Options["cov"].(string); cov != "" {
		extras = append(extras, "covariance "+cov)
	}
	if res.Nonnegative {
		extras = append(extras, "non-negative")
	}
	if len(extras) > 0 {
		how += " (" + strings.Join(extras, ", ") + ")"
	}
	fmt.Fprintf(w, "Forecast %s ahead (%s to %s) for %s, reconciled with %s.\n",
		words.Count(c.Horizon, c.Grain, c.Grain+"s"), c.ForecastRange[0], c.ForecastRange[1], words.Count(c.Nodes, "node", "nodes"), how)
	if a := rep.Reconcile.Auto; a != nil {
		fmt.Fprintf(w, "Method chosen by a backtest at %s: %s (%s).\n", words.Count(a.Origins, "origin", "origins"), a.Method, a.Reason)
	}
	if b := rep.Reconcile.Bootstrap; b != nil {
		fmt.Fprintf(w, "Intervals from %s, each simulated from every node's model with residuals resampled at the same periods (blocks of %s) and reconciled.\n",
			words.Count(b.Draws, "sample path", "sample paths"), words.Count(b.BlockPeriods, "period", "periods"))
		if b.NoSimulator > 0 {
			fmt.Fprintf(w, "%s no simulator (such as Croston's method for intermittent series) or paths that leave the range of their transform: their paths take their own residuals at the same periods, scaled to their forecast variance.\n",
				words.Count(b.NoSimulator, "node's model has", "nodes' models have"))
		}
	}
	printShape(w, rep)
	if c := rep.Reconcile.Calibration; c != nil {
		if c.Applied {
			fmt.Fprintf(w, "Intervals calibrated from a backtest at %s (it brought coverage nearer to nominal at its later origins; factors in run.json).\n", words.Count(c.Origins, "origin", "origins"))
		} else {
			fmt.Fprintf(w, "Intervals not calibrated: at the later origins of a backtest at %s calibration did not help (see run.json); the model intervals are kept.\n", words.Count(c.Origins, "origin", "origins"))
		}
	}
	fmt.Fprintln(w)
	var levels, fams [][]string
	for _, l := range rep.LevelCounts() {
		levels = append(levels, []string{l.Level, grouped(float64(l.Nodes))})
	}
	textTable(w, []string{"level", "nodes"}, levels)
	fmt.Fprintln(w)
	for _, f := range rep.FamilyCounts() {
		fams = append(fams, []string{f.Family, grouped(float64(f.Nodes))})
	}
	textTable(w, []string{"model family", "nodes"}, fams)
	printTail(w, res, files)
	return nil
}

// printReconciled prints what trueup reconcile did.
func printReconciled(w io.Writer, res *engine.Result, files []string) error {
	rep := res.Report
	c := rep.Counts
	how := rep.Reconcile.Method
	if cov, _ := rep.Options["cov"].(string); cov != "" {
		how += " (covariance " + cov + ")"
	}
	fmt.Fprintf(w, "Reconciled %s (%s) × %s, %s to %s, with %s.\n",
		words.Count(c.Nodes, "node", "nodes"), words.Count(c.BottomSeries, "bottom series", "bottom series"), words.Count(c.Horizon, "period", "periods"), c.ForecastRange[0], c.ForecastRange[1], how)
	printShape(w, rep)
	printTail(w, res, files)
	return nil
}

// printShape says that the intervals are error-quantile ones, with the
// total's factors, unless a calibration replaced them.
func printShape(w io.Writer, rep engine.RunReport) {
	if sh := rep.Reconcile.Shape; sh != nil && (rep.Reconcile.Calibration == nil || !rep.Reconcile.Calibration.Applied) {
		fmt.Fprintf(w, "Intervals from the reconciled variances, their width per level set by the quantiles of the reconciled forecasts' past one-step errors (%s; factors in run.json).\n", shapeWords(sh))
	}
}

// printTail prints the reconciliation facts, the total's forecast,
// warnings, files and the caution.
func printTail(w io.Writer, res *engine.Result, files []string) {
	rep := res.Report
	if len(rep.Reconcile.Notes) > 0 {
		keys := make([]string, 0, len(rep.Reconcile.Notes))
		// variance_node_growth is said in words, and only when 0.
		for k := range rep.Reconcile.Notes {
			keys = append(keys, k)
		}
		sort.Strings(keys)
		var notes []string
		for _, k := range keys {
			if k == "variance_node_growth" {
				if rep.Reconcile.Notes[k] == 0 {
					notes = append(notes, "interval widths grow with the bottom series' base variances only (a large run: nodes × steps × history periods over 8.4 million; aggregates whose stores share persistent shocks may get intervals too narrow)")
				}
				continue
			}
			label := noteLabels[k]
			if label == "" {
				label = k
			}
			notes = append(notes, fmt.Sprintf("%s = %.4g", label, rep.Reconcile.Notes[k]))
		}
		if len(notes) > 0 {
			fmt.Fprintf(w, "\nReconciliation: %s.\n", strings.Join(notes, ", "))
		}
	}
	if lk := rep.Locks; lk != nil {
		fmt.Fprintf(w, "\nLocked forecasts: %d, from %s. They come out exactly as given, with no interval; every other forecast was reconciled around them (see run.json's locks and the report).\n",
			len(lk.Rows), escapeUnprintable(lk.Path))
	}
	printTotal(w, res)
	printTotalPlans(w, res)
	if len(rep.Warnings) > 0 {
		fmt.Fprintln(w, "\nWarnings:")
		for _, warn := range rep.Warnings {
			fmt.Fprintln(w, "  -", escapeUnprintable(warn))
		}
	}
	fmt.Fprintln(w, "\nFiles:")
	for _, f := range files {
		fmt.Fprintln(w, "  "+f)
	}
	fmt.Fprintln(w, "\nThese forecasts are estimates, each with its prediction intervals (the piNN_lower")
	fmt.Fprintln(w, "and piNN_upper columns). They are for the people accountable for the plan to")
	fmt.Fprintln(w, "review, not to adopt unread.")

}

// noteLabels name the reconciliation facts for people.
var noteLabels = map[string]string{
	"shrinkage":      "shrinkage intensity (0: the sample covariance, 1: its diagonal)",
	"cg_iterations":  "conjugate-gradient iterations",
	"variance_paths": "sample paths behind the interval widths of nodes whose residuals start late",
}

// totalRows is how many forecast periods of the total the summary shows.
const totalRows = 12

// printTotal shows the total's coherent forecast with its narrowest
// interval, period by period.
func printTotal(w io.Writer, res *engine.Result) {
	if len(res.Levels) == 0 || res.Solution.Variance == nil {
		return
	}
	level := res.Levels[0]
	for _, l := range res.Levels {
		level = math.Min(level, l)
	}
	lab := strconv.FormatFloat(level, 'f', -1, 64)
	h := len(res.Solution.Forecast[0])
	fmt.Fprintf(w, "\nTotal forecast with its %s%% interval:\n", lab)
	var rows [][]string
	for k := 0; k < min(h, totalRows); k++ {
		lo, hi := res.Bounds(0, k, level)
		rows = append(rows, []string{res.ForecastPeriod(k).String(), grouped(res.Solution.Forecast[0][k]), grouped(lo), grouped(hi)})
	}
	textTable(w, []string{"period", "forecast", "lower " + lab + "%", "upper " + lab + "%"}, rows)
	if h > totalRows {
		fmt.Fprintf(w, "(%d more periods in the forecasts table)\n", h-totalRows)
	}
}

// printTotalPlans shows the total's plan totals, when the run made them:
// the actuals already past and the forecast of the rest, with the total's
// narrowest interval.
func printTotalPlans(w io.Writer, res *engine.Result) {
	p := res.Plans
	if p == nil || len(p.Periods) == 0 {
		return
	}
	T := res.Calendar.T
	level := math.NaN()
	if p.Variance != nil && len(res.Levels) > 0 {
		level = res.Levels[0]
		for _, l := range res.Levels {
			level = math.Min(level, l)
		}
	}
	header := []string{"period", "actual", "forecast", "total", res.Report.Counts.Grain + "s actual+forecast"}
	lab := strconv.FormatFloat(level, 'f', -1, 64)
	if !math.IsNaN(level) {
		header = append(header, "lower "+lab+"%", "upper "+lab+"%")
		fmt.Fprintf(w, "\nTotal by plan period with its %s%% interval (actuals to %s, then forecasts):\n", lab, res.Calendar.Period(T-1))
	} else {
		fmt.Fprintf(w, "\nTotal by plan period (actuals to %s, then forecasts):\n", res.Calendar.Period(T-1))
	}
	var rows [][]string
	for k, pp := range p.Periods {
		a, f := p.Actual[0][k], p.Forecast[0][k]
		row := []string{pp.Period.String(), grouped(a), grouped(f), grouped(a + f),
			fmt.Sprintf("%d+%d", pp.ActualPeriods(T), pp.ForecastPeriods(T))}
		if !math.IsNaN(level) {
			lo, hi := res.PlanBounds(0, k, level)
			row = append(row, grouped(lo), grouped(hi))
		}
		rows = append(rows, row)
	}
	textTable(w, header, rows)
}

// grouped formats x rounded to a whole number with thousands separators,
// as amounts read best: 3,813,724.
func grouped(x float64) string { return groupedDecimals(x, 0) }

func errMissing(flag string) error { return fmt.Errorf("%s is required", flag) }

// shapeWords sums up error-quantile factors for the summary: the total's
// factor at each interval level ("total: 80% ×0.93, 95% ×1.04").
func shapeWords(sh *engine.Calibration) string {
	if len(sh.Factor) == 0 || len(sh.Factor[0]) == 0 {
		return "no errors to take them from"
	}
	var parts []string
	for q, l := range sh.Intervals {
		parts = append(parts, fmt.Sprintf("%s%% ×%.2f", engine.LevelLabel(l), sh.Factor[0][0][q]))
	}
	return sh.Levels[0] + ": " + strings.Join(parts, ", ")
}
