package cli

import (
	"flag"
	"fmt"
	"slices"
	"strings"

	"github.com/spf13/cobra"

	"trueup/engine"
)

// usageError is a bad flag or argument.
type usageError struct{ err error }

func (e *usageError) Error() string { return e.err.Error() }
func (e *usageError) Unwrap() error { return e.err }

func newRootCmd() *cobra.Command { return newRootCmdWith(Config{}) }

// newRootCmdWith is the command tree for cfg: its commands, and its extra
// flags on each of them.
func newRootCmdWith(cfg Config) *cobra.Command {
	root := &cobra.Command{
		Use:   "trueup",
		Short: "Coherent forecasts for store × category × region sales",
		Long: `trueup forecasts every node of a grouped sales structure (stores within
regions, crossed with categories, and every total of them), chooses a
seasonal model per node, and reconciles the forecasts so that every total
equals the sum of its parts. Forecasts are estimates: review them before
they go into a plan.`,
		Example: `  trueup demo
  trueup inspect --input sales.parquet --nest region,store --nest category
  trueup forecast --input sales.parquet --nest region,store --nest category --out plan
  trueup backtest --input sales.parquet --nest region,store --nest category`,
		Version:       engine.Version,
		SilenceUsage:  true,
		SilenceErrors: true,
	}
	root.SetFlagErrorFunc(func(_ *cobra.Command, err error) error { return &usageError{err} })
	// One constructor per command, each in its own file.
	for _, cmd := range []*cobra.Command{
		newDemoCmd(),
		newForecastCmd(),
		newInspectCmd(),
		newFitCmd(),
		newReconcileCmd(),
		newBacktestCmd(),
		newReportCmd(),
	} {
		if cfg.Commands == nil || slices.Contains(cfg.Commands, cmd.Name()) {
			root.AddCommand(cmd)
		}
	}
	if cfg.Name != "" {
		root.Use, root.Example = cfg.Name, ""
	}
	if cfg.Flags != nil {
		root.PersistentFlags().AddGoFlagSet(cfg.Flags)
		cfg.Flags.VisitAll(func(f *flag.Flag) { _ = root.PersistentFlags().MarkHidden(f.Name) })
	}
	return root
}

// noArgs rejects positional arguments as a usage error (exit status 2).
func noArgs(cmd *cobra.Command, args []string) error {
	if len(args) > 0 {
		return &usageError{fmt.Errorf("%s takes no arguments, got %q; flags start with --", cmd.Name(), strings.Join(args, " "))}
	}
	return nil
}
