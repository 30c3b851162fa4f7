package cli

import (
	"github.com/spf13/cobra"
	"github.com/spf13/pflag"
)

// renamedFlags maps each flag name given up to its new name. The old
// names keep working for one release, hidden from help, with a note on
// stderr: --levels also meant a level of the structure, --period also
// meant the period column, and --nest's "chain" also meant the retailer.
var renamedFlags = map[string]string{
	"levels": "intervals",
	"period": "season-length",
	"nest":   "hierarchy",
	// --keep-last-period now keeps a partial first period too.
	"keep-last-period": "keep-partial-periods",
}

// keepOldNames registers, for each flag of cmd that renamedFlags renamed,
// its old name as a deprecated alias that sets the new flag (so that
// Changed, repeats and --flag=value behave as with the new name).
func keepOldNames(cmd *cobra.Command) {
	fl := cmd.Flags()
	for old, current := range renamedFlags {
		target := fl.Lookup(current)
		if target == nil || fl.Lookup(old) != nil {
			continue
		}
		fl.Var(&aliasValue{fl: fl, target: current}, old, "old name of --"+current)
		fl.Lookup(old).NoOptDefVal = target.NoOptDefVal
		if err := fl.MarkDeprecated(old, "use --"+current+" (--"+old+" is accepted until the next release)"); err != nil {
			panic(err) // the flag was registered just above
		}
	}
}

// aliasValue is an old flag name's value: setting it sets the new flag.
type aliasValue struct {
	fl     *pflag.FlagSet
	target string
}

func (a *aliasValue) Set(v string) error { return a.fl.Set(a.target, v) }
func (a *aliasValue) String() string {
	if f := a.fl.Lookup(a.target); f != nil {
		return f.Value.String()
	}
	return ""
}
func (a *aliasValue) Type() string { return a.fl.Lookup(a.target).Value.Type() }
