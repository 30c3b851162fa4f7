package cli

import (
	"fmt"

	"github.com/spf13/cobra"
	"github.com/spf13/pflag"
)

// flagGroupKey is the flag annotation naming a flag's group in help text.
const flagGroupKey = "trueup_group"

// Flag groups, in the order help text shows them.
var flagGroupOrder = []string{"Input", "Model", "Reconciliation", "Output"}

// groupFlags files the named flags of cmd under group and makes cmd's help
// list its flags by group.
func groupFlags(cmd *cobra.Command, group string, names ...string) {
	for _, n := range names {
		if err := cmd.Flags().SetAnnotation(n, flagGroupKey, []string{group}); err != nil {
			panic(err) // a misspelt flag name is a programming error
		}
	}
	cmd.SetUsageFunc(groupedUsage)
}

// groupedUsage prints a command's usage with its flags grouped by purpose;
// flags in no group are listed last.
func groupedUsage(cmd *cobra.Command) error {
	w := cmd.OutOrStderr()
	groups := map[string]*pflag.FlagSet{}
	var other []*pflag.Flag
	cmd.LocalFlags().VisitAll(func(f *pflag.Flag) {
		g := f.Annotations[flagGroupKey]
		if len(g) == 0 {
			other = append(other, f)
			return
		}
		if groups[g[0]] == nil {
			groups[g[0]] = pflag.NewFlagSet(g[0], pflag.ContinueOnError)
		}
		groups[g[0]].AddFlag(f)
	})
	fmt.Fprintf(w, "Usage:\n  %s\n", cmd.UseLine())
	if cmd.HasExample() {
		fmt.Fprintf(w, "\nExamples:\n%s\n", cmd.Example)
	}
	for _, name := range flagGroupOrder {
		if fs := groups[name]; fs != nil {
			fmt.Fprintf(w, "\n%s flags:\n%s", name, fs.FlagUsages())
		}
	}
	if len(other) > 0 {
		fs := pflag.NewFlagSet("other", pflag.ContinueOnError)
		for _, f := range other {
			fs.AddFlag(f)
		}
		fmt.Fprintf(w, "\nOther flags:\n%s", fs.FlagUsages())
	}
	return nil
}
