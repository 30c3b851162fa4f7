package cli

import (
	"context"

	"github.com/spf13/cobra"

	"trueup/engine"
	"trueup/engine/output"
)

func newForecastCmd() *cobra.Command {
	var (
		sf sourceFlags
		rf runFlags
	)
	cmd := &cobra.Command{
		Use:   "forecast --input FILE --hierarchy COLUMNS [--hierarchy COLUMNS ...]",
		Short: "Forecast every node of the structure and reconcile the forecasts",
		Long: `Reads a long sales table (one row per bottom series per period), builds
every aggregate named by --hierarchy, fits a model to every node, reconciles the
forecasts so that every total equals the sum of its parts, and writes
forecasts, models, residuals and run.json to --out.

Each --hierarchy value lists key columns from coarse to fine. Several
hierarchies cross: --hierarchy region,store --hierarchy category gives the
levels total, category, region, region+category, region+store and
region+store+category.

Forecasts are estimates. Review them, and their intervals, before they go
into a plan.`,
		Example: `  trueup forecast --input sales.parquet --time month --value sales \
      --hierarchy region,store --hierarchy category --horizon 12 --out plan-2027

  # item-level rows summed to store × category, weekly totals from daily data
  trueup forecast --input items.csv --time day --value units \
      --hierarchy region,store --hierarchy category --sum-duplicates --grain week`,
		Args: noArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			src, err := sf.source(true)
			if err != nil {
				return err
			}
			formats, err := rf.outputFormats()
			if err != nil {
				return err
			}
			if err := output.Check(rf.out, output.Plan{Formats: formats, Inputs: []string{src.Path}}); err != nil {
				return err
			}
			return runForecast(cmd, src, &rf)
		},
	}
	sf.register(cmd)
	rf.register(cmd, "trueup-out")
	return cmd
}

// runForecast checks the options, loads the source, forecasts, writes the
// result and prints the summary.
func runForecast(cmd *cobra.Command, src engine.Source, rf *runFlags) error {
	opt, err := rf.options(cmd)
	if err != nil {
		return err
	}
	formats, err := rf.outputFormats()
	if err != nil {
		return err
	}
	data, err := engine.Load(src)
	if err != nil {
		return err
	}
	// How the input was read, and implausible values, are shown before
	// the fitting, which may be long.
	printInputNotes(cmd.ErrOrStderr(), data)
	res, err := engine.Forecast(context.Background(), data, opt)
	if err != nil {
		return err
	}
	files, err := output.Write(rf.out, res, formats)
	if err != nil {
		return err
	}
	return printSummary(cmd.OutOrStdout(), res, files, rf.json)
}
