package main

import (
	"fmt"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"

	"trueup/engine"
	"trueup/fixtures"
	"trueup/tableio"
)

func newDemoCmd() *cobra.Command {
	var rf runFlags
	cmd := &cobra.Command{
		Use:   "demo",
		Short: "Forecast the built-in demo chain end to end",
		Long: `Runs the whole forecast on the built-in demo data: six years of monthly
sales of ` + fixtures.ChainName + `, an invented retail chain, by region, store and
category. The input is copied into --out next to the results, so the run
can be repeated with "trueup forecast".`,
		Example: `  trueup demo
  trueup demo --out /tmp/demo --format parquet,csv --horizon 6`,
		Args: noArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			cfg := engine.Config{Source: engine.Source{Time: fixtures.DemoTimeColumn, Value: fixtures.DemoValueColumn, Nest: fixtures.DemoNest}}
			if err := rf.apply(cmd, &cfg); err != nil {
				return err
			}
			if err := os.MkdirAll(rf.out, 0o755); err != nil {
				return err
			}
			cfg.Input = filepath.Join(rf.out, "demo_sales.parquet")
			if err := tableio.WriteFileAtomic(cfg.Input, fixtures.DemoMonthlyParquet); err != nil {
				return fmt.Errorf("copy demo data: %w", err)
			}
			res, err := engine.Run(cfg)
			if err != nil {
				return err
			}
			return printSummary(cmd.OutOrStdout(), res, rf.json)
		},
	}
	rf.register(cmd, "trueup-demo")
	return cmd
}
