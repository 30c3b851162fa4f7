package cli

import (
	"fmt"
	"os"
	"path/filepath"

	"github.com/spf13/cobra"

	"trueup/engine"
	"trueup/engine/output"
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
			// Everything is checked before the input is copied in.
			if _, err := rf.options(cmd); err != nil {
				return err
			}
			formats, err := rf.outputFormats()
			if err != nil {
				return err
			}
			if err := output.Check(rf.out, output.Plan{Formats: formats}); err != nil {
				return err
			}
			if err := os.MkdirAll(rf.out, 0o777); err != nil {
				return err
			}
			src := engine.Source{Path: filepath.Join(rf.out, "demo_sales.parquet"),
				Time: fixtures.DemoTimeColumn, Value: fixtures.DemoValueColumn, Chains: fixtures.DemoChains()}
			if err := tableio.WriteFileAtomic(src.Path, fixtures.DemoMonthlyParquet); err != nil {
				return fmt.Errorf("copy demo data: %w", err)
			}
			return runForecast(cmd, src, &rf)
		},
	}
	rf.register(cmd, "trueup-demo")
	return cmd
}
