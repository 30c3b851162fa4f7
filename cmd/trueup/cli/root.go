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
  trueup inspect --input sales.parquet --hierarchy region,store --hierarchy category
  trueup forecast --input sales.parquet --hierarchy region,store --hierarchy category --out plan
  trueup backtest --input sales.parquet --hierarchy region,store --hierarchy category`,
		Version:       engine.Version,
		SilenceUsage:  true,
		SilenceErrors: true,
	}
	root.SetFlagErrorFunc(func(_ *cobra.Command, err error) error { return &usageError{err} })
	root.CompletionOptions.DisableDefaultCmd = true
	root.SetHelpFunc(help)
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

// commandGroups lists the commands in the order a new user meets them,
// for the root help.
var commandGroups = []struct {
	title    string
	commands []string
}{
	{"Start here", []string{"demo", "inspect"}},
	{"Forecast and check", []string{"forecast", "backtest", "report"}},
	{"One step at a time", []string{"fit", "reconcile"}},
}

// help prints a command's help: the root's own layout (commands grouped
// in the order of the work, where to read more) or, for a command, its
// description and usage.
func help(cmd *cobra.Command, _ []string) {
	w := cmd.OutOrStdout()
	if cmd.HasParent() {
		text := cmd.Long
		if text == "" {
			text = cmd.Short
		}
		fmt.Fprintf(w, "%s\n\n%s", strings.TrimSpace(text), cmd.UsageString())
		return
	}
	fmt.Fprintf(w, "%s\n\nUsage:\n  trueup COMMAND [flags]\n", strings.TrimSpace(cmd.Long))
	for _, g := range commandGroups {
		fmt.Fprintf(w, "\n%s:\n", g.title)
		for _, name := range g.commands {
			if sub, _, err := cmd.Find([]string{name}); err == nil && sub != cmd {
				fmt.Fprintf(w, "  %-10s %s\n", sub.Name(), sub.Short)
			}
		}
	}
	fmt.Fprintf(w, "\nExamples:\n%s\n", cmd.Example)
	fmt.Fprintf(w, "\nMore:\n  trueup COMMAND --help   the flags of a command, grouped by purpose\n"+
		"  trueup --version        the version\n"+
		"  docs/glossary.md        every name in trueup's flags, tables, run.json and report, with its meaning\n")
}
