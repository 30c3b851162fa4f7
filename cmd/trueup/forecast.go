package main

import (
	"github.com/spf13/cobra"

	"trueup/internal/pipeline"
	tableio "trueup/io"
)

func newForecastCmd() *cobra.Command {
	var (
		rf          runFlags
		input       string
		inputFormat string
		timeCol     string
		valueCol    string
		nest        []string
		sumDup      bool
		grain       string
		period      int
	)
	cmd := &cobra.Command{
		Use:   "forecast --input FILE --nest CHAIN [--nest CHAIN ...]",
		Short: "Forecast every node of the structure and reconcile the forecasts",
		Long: `Reads a long sales table (one row per bottom series per period), builds
every aggregate named by --nest, fits a model to every node, reconciles the
forecasts so that every total equals the sum of its parts, and writes
forecasts, models and run.json to --out.

Each --nest value is a chain of key columns from coarse to fine. Several
chains cross: --nest region,store --nest category gives the levels total,
category, region, region+category, region+store and region+store+category.

Forecasts are estimates. Review them, and their intervals, before they go
into a plan.`,
		Example: `  trueup forecast --input sales.parquet --time month --value sales \
      --nest region,store --nest category --horizon 12 --out plan-2027

  # item-level rows summed to store × category, weekly totals from daily data
  trueup forecast --input items.csv --time day --value units \
      --nest region,store --nest category --sum-duplicates --grain week`,
		Args: noArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			cfg := pipeline.Config{
				Input: input, Format: tableio.Format(inputFormat), Time: timeCol, Value: valueCol,
				Nest: nest, SumDuplicates: sumDup, Grain: grain, Period: period,
			}
			if input == "" {
				return &usageError{errMissing("--input")}
			}
			if err := rf.apply(cmd, &cfg); err != nil {
				return err
			}
			res, err := pipeline.Run(cfg)
			if err != nil {
				return err
			}
			return printSummary(cmd.OutOrStdout(), res, rf.json)
		},
	}
	fl := cmd.Flags()
	fl.StringVar(&input, "input", "", "sales table, .parquet or .csv")
	fl.StringVar(&inputFormat, "input-format", "", "read the input as parquet or csv whatever its extension")
	fl.StringVar(&timeCol, "time", "period", "period column: dates, timestamps, or labels such as 2024-03, 2024-Q1, 2024-W07")
	fl.StringVar(&valueCol, "value", "sales", "numeric value column")
	fl.StringArrayVar(&nest, "nest", nil, "key columns of one chain, coarse to fine, comma-separated (repeatable)")
	fl.BoolVar(&sumDup, "sum-duplicates", false, "add up rows with the same key and period instead of refusing them")
	fl.StringVar(&grain, "grain", "", "forecast at this grain, summing finer periods: day, week, month, quarter")
	fl.IntVar(&period, "period", 0, "seasonal period (default from the grain: 7, 52, 12, 4)")
	groupFlags(cmd, "Input", "input", "input-format", "time", "value", "nest", "sum-duplicates", "grain", "period")
	rf.register(cmd, "trueup-out")
	return cmd
}
