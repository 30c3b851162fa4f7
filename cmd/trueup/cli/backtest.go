package cli

import (
	"context"
	"encoding/json"
	"fmt"
	"io"
	"strings"
	"trueup/internal/words"

	"github.com/spf13/cobra"

	"trueup/engine"
	"trueup/engine/output"
	"trueup/report"
)

func newBacktestCmd() *cobra.Command {
	var (
		sf      sourceFlags
		rf      runFlags
		origins int
		every   int
		compare string
	)
	cmd := &cobra.Command{
		Use:   "backtest --input FILE --hierarchy COLUMNS [--hierarchy COLUMNS ...]",
		Short: "Score the whole pipeline at past origins and compare reconciliation methods",
		Long: `Cuts the history at --origins past points, --every periods apart (the last
leaves exactly one horizon of actuals), fits every node as forecast would
at each, reconciles those same fits with every --compare method and scores
the forecasts against what happened: MASE, RMSSE, bias, interval coverage
and interval score per node, level, method, origin and step. Shows which
children (the nodes under a parent) drive each parent's error, and how
much the children's errors cancel, and recommends the method with
the best mean score over levels.

Writes backtest, scores, contributions, drivers, node_scores and
incoherence tables and run.json to --out, then report.html with the
scores, the recommendation and the drivers (unless --no-report).`,
		Example: `  trueup backtest --input sales.parquet --hierarchy region,store --hierarchy category

  trueup backtest --input sales.parquet --hierarchy region,store --hierarchy category \
      --origins 6 --every 2 --compare base,bottom-up,mint-shrink --format csv`,
		Args: noArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			if origins < 1 {
				return &usageError{fmt.Errorf("--origins must be at least 1, got %d", origins)}
			}
			if every < 1 {
				return &usageError{fmt.Errorf("--every must be at least 1, got %d", every)}
			}
			src, err := sf.source(true)
			if err != nil {
				return err
			}
			opt, err := rf.options(cmd)
			if err != nil {
				return err
			}
			all, err := rf.outputFormats()
			if err != nil {
				return err
			}
			// The report is rendered from the folder once the tables and
			// run.json are in it (report.FromDir reads a backtest's tables).
			var formats []string
			withReport := false
			for _, f := range all {
				if f == "report" {
					withReport = true
				} else {
					formats = append(formats, f)
				}
			}
			if len(formats) == 0 {
				return &usageError{fmt.Errorf("--format names no table format (parquet, csv, arrow); a backtest writes its tables first")}
			}
			var methods []string
			for _, m := range strings.Split(compare, ",") {
				if m = strings.TrimSpace(m); m != "" {
					methods = append(methods, m)
				}
			}
			if len(methods) == 0 {
				return &usageError{fmt.Errorf("--compare names no method (use %s)", engine.CompareNames())}
			}
			if err := output.Check(rf.out, output.Plan{Backtest: true, Formats: all, Inputs: []string{src.Path}}); err != nil {
				return err
			}
			data, err := engine.Load(src)
			if err != nil {
				return err
			}
			printInputNotes(cmd.ErrOrStderr(), data)
			bt, err := engine.Backtest(context.Background(), data, engine.BacktestOptions{Options: opt,
				Origins: origins, Every: every, Compare: methods})
			if err != nil {
				return err
			}
			var render func(string) (string, error)
			if withReport {
				// The report reads the tables and run.json back from the
				// staging folder, so it is part of the same output set.
				render = func(dir string) (string, error) {
					in, err := report.FromDir(dir)
					if err != nil {
						return "", err
					}
					return report.Write(dir, in)
				}
			}
			files, err := output.WriteBacktest(rf.out, bt, formats, render)
			if err != nil {
				return err
			}
			return printBacktest(cmd.OutOrStdout(), bt, files, rf.json)
		},
	}
	sf.register(cmd)
	rf.registerModel(cmd)
	fl := cmd.Flags()
	fl.IntVar(&origins, "origins", engine.DefaultOrigins, "number of past forecast origins")
	fl.IntVar(&every, "every", 1, "periods between origins")
	fl.StringVar(&compare, "compare", strings.Join(engine.DefaultCompare, ","), "methods to compare, comma-separated: "+engine.CompareNames())
	groupFlags(cmd, "Reconciliation", "origins", "every", "compare")
	rf.outputFlags.register(cmd, "trueup-backtest")
	return cmd
}

// printBacktest prints the method table by level, the recommendation and
// the drivers of the total's error; or, with asJSON, the report.
func printBacktest(w io.Writer, bt *engine.BacktestResult, files []string, asJSON bool) error {
	rep := bt.Report
	if asJSON {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(rep)
	}
	first, last := rep.Origins[0], rep.Origins[len(rep.Origins)-1]
	fmt.Fprintf(w, "Backtest at %s, first forecasts %s to %s, %s ahead from each; %s.\n",
		words.Count(len(rep.Origins), "origin", "origins"), first.FirstForecast, last.FirstForecast,
		words.Count(bt.Horizon, "period", "periods"), words.Count(len(bt.Structure.Nodes), "node", "nodes"))
	fmt.Fprintf(w, "Every node fitted once per origin; methods compared on the same fits: %s.\n", strings.Join(bt.Methods, ", "))
	for _, s := range bt.Skipped {
		fmt.Fprintf(w, "Skipped %s: %s\n", s.Method, s.Reason)
	}

	fmt.Fprintln(w, "\nMASE by level (mean over nodes and origins, all steps; lower is better):")
	header := append([]string{"level"}, bt.Methods...)
	rows := levelRows(bt, func(s engine.Score) string { return fmt.Sprintf("%.3f", s.MASE) })
	row := []string{"mean of levels"}
	for _, h := range bt.Headline {
		row = append(row, fmt.Sprintf("%.3f", h.MASE))
	}
	textTable(w, header, append(rows, row))

	fmt.Fprintln(w, "\nScores by method (mean over levels, each level weighing the same):")
	header = []string{"method", "MASE", "RMSSE", "bias"}
	for _, l := range bt.Levels {
		header = append(header, "coverage "+engine.LevelLabel(l)+"%")
	}
	for _, l := range bt.Levels {
		header = append(header, "interval score "+engine.LevelLabel(l)+"%")
	}
	header = append(header, "CRPS", "energy score")
	rows = nil
	for _, h := range bt.Headline {
		row := []string{h.Method, fmt.Sprintf("%.3f", h.MASE), fmt.Sprintf("%.3f", h.RMSSE), fmt.Sprintf("%.3f", h.Bias)}
		for _, c := range h.Coverage {
			row = append(row, fmt.Sprintf("%.1f%%", 100*c))
		}
		for _, s := range h.IntervalScore {
			row = append(row, fmt.Sprintf("%.2f", s))
		}
		row = append(row, fmt.Sprintf("%.3f", h.CRPS), fmt.Sprintf("%.2f", h.EnergyScore))
		rows = append(rows, row)
	}
	textTable(w, header, rows)
	fmt.Fprintln(w, "MASE, RMSSE and bias are over each node's seasonal naive error (below 1: better than repeating last season; bias above 0: forecasts too low).")
	fmt.Fprintln(w, "Coverage is the share of actuals inside the interval (an 80% interval should hold about 80%); the interval score adds the interval's width")
	fmt.Fprintln(w, "and a penalty for each actual outside it, over the scale. CRPS scores each node's whole predictive distribution, the energy score the")
	fmt.Fprintln(w, "joint one of all nodes; both over the scale. For every score but coverage, lower is better.")
	printCoverageByLevel(w, bt)
	if len(bt.Calibration) > 0 {
		c := bt.Calibration[0]
		fmt.Fprintf(w, "\nConformal calibration of the intervals, checked at the last %d origins with factors from the errors known before each (forecast --calibrate applies it only where it helps):\n", c.Origins)
		var rows [][]string
		for _, c := range bt.Calibration {
			verdict := "does not help"
			if c.Helps {
				verdict = "helps"
			}
			rows = append(rows, []string{c.Method, verdict})
		}
		textTable(w, []string{"method", "calibration"}, rows)
	}

	rec := bt.Recommendation
	if rec.Method != "" {
		fmt.Fprintf(w, "\nRecommended: %s (%s).\n", rec.Method, rec.Reason)
		printDrivers(w, bt, rec.Method)
		if len(rep.Cancellation) > 0 {
			fmt.Fprintf(w, "\nHow much the children's errors cancel (%s; 0: they add up, 1: they cancel out):\n", rec.Method)
			var rows [][]string
			for _, c := range rep.Cancellation {
				rows = append(rows, []string{c.ParentLevel, c.ChildLevel, fmt.Sprintf("%.2f", c.Mean)})
			}
			textTable(w, []string{"parent level", "child level", "cancellation"}, rows)
		}
		if len(rep.Helped) > 0 || len(rep.Hurt) > 0 {
			fmt.Fprintf(w, "\nWhere %s changed the base forecasts' MASE most:\n", rec.Method)
			var rows [][]string
			for _, s := range rep.Helped {
				rows = append(rows, []string{s.Node, "helped", fmt.Sprintf("%.3f", s.MASE), fmt.Sprintf("%+.3f", s.Change)})
			}
			for _, s := range rep.Hurt {
				rows = append(rows, []string{s.Node, "hurt", fmt.Sprintf("%.3f", s.MASE), fmt.Sprintf("%+.3f", s.Change)})
			}
			textTable(w, []string{"node", "", "MASE", "vs base"}, rows)
		}
	}
	if len(rep.Incoherence) > 0 {
		fmt.Fprintln(w, "\nIncoherence of the base forecasts (mean |base − sum of children| over the node's scale):")
		var rows [][]string
		for _, in := range rep.Incoherence {
			rows = append(rows, []string{in.Level, fmt.Sprintf("%.3f", in.Mean)})
		}
		textTable(w, []string{"level", "scaled"}, rows)
	}
	var warnings []string
	for _, warn := range rep.Warnings {
		if !strings.HasPrefix(warn, "method ") { // skipped methods are named at the top
			warnings = append(warnings, warn)
		}
	}
	if len(warnings) > 0 {
		fmt.Fprintln(w, "\nWarnings:")
		for _, warn := range warnings {
			fmt.Fprintln(w, "  -", escapeUnprintable(warn))
		}
	}
	fmt.Fprintln(w, "\nFiles:")
	for _, f := range files {
		fmt.Fprintln(w, "  "+f)
	}
	fmt.Fprintln(w, "\nScores describe these origins only; the next periods may behave differently.")
	return nil
}

// printCoverageByLevel prints, per level, the coverage of each method's
// intervals at every level of the run (all steps), the check that
// intervals hold their nominal share where each reader looks, with the
// range of its sampling error (engine.CoverageRange).
func printCoverageByLevel(w io.Writer, bt *engine.BacktestResult) {
	for l, lv := range bt.Levels {
		fmt.Fprintf(w, "\nShare of actuals inside the %s%% intervals by level (all steps):\n", engine.LevelLabel(lv))
		header := append([]string{"level"}, bt.Methods...)
		textTable(w, header, levelRows(bt, func(s engine.Score) string {
			if l >= len(s.Coverage) {
				return ""
			}
			_, lo, hi, ok := bt.CoverageRange(s.Method, s.Level, lv)
			if !ok {
				return fmt.Sprintf("%.1f%%", 100*s.Coverage[l])
			}
			return fmt.Sprintf("%.1f%% (%.0f–%.0f)", 100*s.Coverage[l], 100*lo, 100*hi)
		}))
	}
	fmt.Fprintln(w, "In brackets: the 5th to 95th percentile of the share when the forecast periods are resampled, a lower bound on its sampling error.")
	fmt.Fprintln(w, "Where the nominal share (80% for an 80% interval) lies inside that range, chance alone could explain the difference.")
}

// levelRows lays out one row per level of the backtest, led by the
// level's name, with one cell per compared method: cell's text for that
// level's score, empty where the method has no score there.
func levelRows(bt *engine.BacktestResult, cell func(engine.Score) string) [][]string {
	var rows [][]string
	for _, level := range bt.Structure.LevelNames() {
		row := []string{level}
		for _, m := range bt.Methods {
			text := ""
			if s, ok := bt.LevelScore(level, m); ok {
				text = cell(s)
			}
			row = append(row, text)
		}
		rows = append(rows, row)
	}
	return rows
}

// driverRows is how many drivers of the total the summary shows.
const driverRows = 10

// printDrivers shows the bottom series that drive the total's error most
// under method, and the largest driver at each level just below the total.
func printDrivers(w io.Writer, bt *engine.BacktestResult, method string) {
	at := bt.Attribution
	levels := bt.Structure.LevelNames()
	bottom := levels[len(levels)-1]
	top := at.TopDrivers(method, "total", bottom, driverRows)
	if len(top) == 0 {
		return
	}
	fmt.Fprintf(w, "\nTop %d drivers of the total's error (%s; absolute error summed over origins and steps):\n", len(top), method)
	var nets []float64
	for _, d := range top {
		nets = append(nets, d.AbsError, d.NetError)
	}
	amount := amountFormat(nets)
	var rows [][]string
	for _, d := range top {
		rows = append(rows, []string{d.Child, fmt.Sprintf("%.1f%%", 100*d.Share), amount(d.AbsError), amount(d.NetError)})
	}
	textTable(w, []string{"node", "share", "abs. error", "net error"}, rows)
	var parts []string
	for _, level := range levels[1 : len(levels)-1] {
		if d := at.TopDrivers(method, "total", level, 1); len(d) == 1 {
			parts = append(parts, fmt.Sprintf("%s (%.1f%%)", shownKey(d[0].Child), 100*d[0].Share))
		}
	}
	if len(parts) > 0 {
		fmt.Fprintf(w, "Largest share by level: %s.\n", strings.Join(parts, "; "))
	}
}
