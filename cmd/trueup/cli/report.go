package cli

import (
	"fmt"

	"github.com/spf13/cobra"

	"trueup/report"
)

func newReportCmd() *cobra.Command {
	var from, out string
	cmd := &cobra.Command{
		Use:   "report --from DIR",
		Short: "Render report.html again from the tables of an earlier run",
		Long: `Reads run.json and the tables (forecasts, models, residuals, history, and
a backtest's tables when present) of an earlier run's output folder and
writes report.html: one self-contained file that opens in a browser from
disk, with no network.

forecast and demo write the report themselves unless --no-report is given.`,
		Example: `  trueup report --from plan-2027
  trueup report --from plan-2027 --out /tmp/review`,
		Args: noArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			if from == "" {
				return &usageError{fmt.Errorf("--from is required: the output folder of an earlier run")}
			}
			if out == "" {
				out = from
			}
			in, err := report.FromDir(from)
			if err != nil {
				return err
			}
			path, err := report.Write(out, in)
			if err != nil {
				return err
			}
			fmt.Fprintln(cmd.OutOrStdout(), "Wrote", path)
			return nil
		},
	}
	cmd.Flags().StringVar(&from, "from", "", "output folder of an earlier run")
	cmd.Flags().StringVar(&out, "out", "", "folder to write report.html into (default: the --from folder)")
	return cmd
}
