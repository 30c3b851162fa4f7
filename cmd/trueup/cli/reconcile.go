package cli

import (
	"context"
	"fmt"

	"github.com/spf13/cobra"

	"trueup/engine"
	"trueup/engine/output"
	"trueup/hierarchy"
	"trueup/tableio"
)

func newReconcileCmd() *cobra.Command {
	var (
		base, residuals, history string
		inputFormat              string
		time, value              string
		nest                     []string
		levels, intervalMethod   string
		rf                       reconcileFlags
		of                       outputFlags
	)
	cmd := &cobra.Command{
		Use:   "reconcile --base FILE --hierarchy COLUMNS [--hierarchy COLUMNS ...]",
		Short: "Reconcile base forecasts made elsewhere so that totals equal the sum of their parts",
		Long: `Reads base forecasts for every node of a grouped structure (one row per node
and period) and writes coherent forecasts: every total equals the sum of its
parts. The forecasts and residuals tables that "trueup forecast" writes can
be given back unchanged.

--base has the key columns named by --hierarchy (empty or null where a node
aggregates over that column), a period column and a base column, and may
have a base_variance column (the base forecast-error variance of each
step). --residuals has the key columns, period and residual: in-sample
one-step errors of every node, needed by --cov variance, sample and shrink
and for intervals. --history is the sales table of the bottom series, read
as forecast reads its input (--time and --value name its columns), needed
by top-down-hist and top-down-avg.

The rules are those of forecast: a bottom series whose history or
residuals stop before the forecast origin has closed and is forecast as
zero; mint is non-negative unless the history (or, without one, a bottom
base forecast) is negative; lower bounds of non-negative forecasts stop
at zero. Intervals are forecast ± z·sd, sd from the joint distribution of
the reconciled errors; with --residuals, z per level comes from the
quantiles of the reconciled forecasts' past one-step errors (see
--interval-method). Without a base_variance column every step uses the
one-step residual variance, so intervals do not widen with the horizon.

Forecasts are estimates. Review them, and their intervals, before they go
into a plan.`,
		Example: `  trueup reconcile --base plan/forecasts.parquet --residuals plan/residuals.parquet \
      --hierarchy region,store --hierarchy category --method mint --out plan-mint

  # keep region × category totals, split them by forecast proportions
  trueup reconcile --base base.csv --hierarchy region,store --hierarchy category \
      --method middle-out --at region+category
  trueup reconcile --base base.csv --history sales.csv --time month --value sales \
      --hierarchy region,store --method top-down-hist --format csv,parquet`,
		Args: noArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			if base == "" {
				return &usageError{errMissing("--base")}
			}
			lv, err := parseLevels(levels)
			if err != nil {
				return err
			}
			formats, err := of.outputFormats()
			if err != nil {
				return err
			}
			if err := output.Check(of.out, output.Plan{Formats: formats, Inputs: []string{base, residuals, history}}); err != nil {
				return err
			}
			chains, err := hierarchy.ParseNest(nest)
			if err != nil {
				return err
			}
			ts := engine.Tables{Base: base, Residuals: residuals, Format: tableio.Format(inputFormat), Chains: chains,
				History: engine.Source{Path: history, Format: tableio.Format(inputFormat), Time: time, Value: value}}
			bs, err := engine.LoadTables(ts)
			if err != nil {
				return err
			}
			for _, w := range bs.Warnings {
				fmt.Fprintln(cmd.ErrOrStderr(), "trueup:", w)
			}
			res, err := engine.Reconcile(context.Background(), bs, engine.ReconcileOptions{Reconcile: rf.options(cmd), Levels: lv, Intervals: intervalMethod})
			if err != nil {
				return err
			}
			files, err := output.Write(of.out, res, formats)
			if err != nil {
				return err
			}
			if of.json {
				return printSummary(cmd.OutOrStdout(), res, files, true)
			}
			return printReconciled(cmd.OutOrStdout(), res, files)
		},
	}
	fl := cmd.Flags()
	fl.StringVar(&base, "base", "", "base forecasts: key columns, period, base [, base_variance]")
	fl.StringVar(&residuals, "residuals", "", "in-sample one-step residuals: key columns, period, residual")
	fl.StringVar(&history, "history", "", "sales history of the bottom series (top-down-hist, top-down-avg)")
	fl.StringVar(&inputFormat, "input-format", "", "read the inputs as parquet, csv or arrow whatever their extension")
	fl.StringVar(&time, "time", "period", "period column of --history")
	fl.StringVar(&value, "value", "sales", "value column of --history")
	fl.StringArrayVar(&nest, "hierarchy", nil, "key columns of one hierarchy, coarse to fine, comma-separated (repeatable)")
	fl.StringVar(&levels, "intervals", "80,95", "prediction intervals to write, in percent, comma-separated")
	fl.StringVar(&intervalMethod, "interval-method", engine.IntervalsErrorQuantiles, "how intervals are made from the reconciled variances:\n  "+
		engine.IntervalsErrorQuantiles+": z from the quantiles of the reconciled past one-step errors (per level; needs --residuals)\n  "+
		engine.IntervalsGaussian+": z from the normal distribution")
	groupFlags(cmd, "Input", "base", "residuals", "history", "input-format", "time", "value", "hierarchy")
	rf.register(cmd)
	groupFlags(cmd, "Reconciliation", "intervals", "interval-method")
	keepOldNames(cmd)
	of.register(cmd, "trueup-reconciled")
	return cmd
}
