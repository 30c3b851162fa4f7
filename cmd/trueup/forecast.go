package main

import (
	"github.com/spf13/cobra"

	"trueup/engine"
)

func newForecastCmd() *cobra.Command {
	var (
		sf     sourceFlags
		rf     runFlags
		sumDup bool
		period int
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
			src, err := sf.source()
			if err != nil {
				return err
			}
			src.SumDuplicates = sumDup
			cfg := engine.Config{Source: src, Period: period}
			if err := rf.apply(cmd, &cfg); err != nil {
				return err
			}
			res, err := engine.Run(cfg)
			if err != nil {
				return err
			}
			return printSummary(cmd.OutOrStdout(), res, rf.json)
		},
	}
	sf.register(cmd)
	fl := cmd.Flags()
	fl.BoolVar(&sumDup, "sum-duplicates", false, "add up rows with the same key and period instead of refusing them")
	fl.IntVar(&period, "period", 0, "seasonal period (default from the grain: 7, 52, 12, 4)")
	groupFlags(cmd, "Input", "sum-duplicates", "period")
	rf.register(cmd, "trueup-out")
	return cmd
}
