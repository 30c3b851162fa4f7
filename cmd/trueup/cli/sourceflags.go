package cli

import (
	"fmt"
	"io"

	"github.com/spf13/cobra"

	"trueup/engine"
	"trueup/hierarchy"
	"trueup/tableio"
)

// sourceFlags are the flags that name the sales table and its columns,
// shared by every command that reads sales history.
type sourceFlags struct {
	input, format string
	time, value   string
	nest          []string
	grain         string
	sumDuplicates bool
	integerTime   string
	separator     string
	until         string
	keepPartial   bool
}

// register adds the input flags and --hierarchy.
func (f *sourceFlags) register(cmd *cobra.Command) {
	f.registerInput(cmd)
	cmd.Flags().StringArrayVar(&f.nest, "hierarchy", nil, "key columns of one hierarchy, coarse to fine, comma-separated (repeatable)")
	groupFlags(cmd, "Input", "hierarchy")
	keepOldNames(cmd)
}

// registerInput adds the flags that name the table, its columns and how
// to read them, without --hierarchy.
func (f *sourceFlags) registerInput(cmd *cobra.Command) {
	fl := cmd.Flags()
	fl.StringVar(&f.input, "input", "", "sales table: .parquet, .csv or .arrow")
	fl.StringVar(&f.format, "input-format", "", "read the input as parquet, csv or arrow whatever its extension")
	fl.StringVar(&f.time, "time", "period", "period column: dates, timestamps, labels such as 2024-03, 2024-Q1, 2024-W07, 2024, or a time index 1, 2, 3")
	fl.StringVar(&f.value, "value", "sales", "numeric value column")
	fl.StringVar(&f.grain, "grain", "", "work at this grain, summing finer periods: day, week, month, quarter, year")
	fl.BoolVar(&f.sumDuplicates, "sum-duplicates", false, "add up rows with the same key and period instead of refusing them")
	fl.StringVar(&f.integerTime, "integer-time", "auto", "read whole-number periods as years or steps (auto: four-digit numbers 1800-2200 are years)")
	fl.StringVar(&f.separator, "separator", "", `CSV field separator: ",", ";", "|" or "tab" (default: detected from the header line)`)
	fl.StringVar(&f.until, "until", "", "use the history up to this period only, e.g. 2001-06, 2001-06-30 or a timestamp")
	fl.BoolVar(&f.keepPartial, "keep-partial-periods", false, "keep a first or last period that looks partial (by default each is set aside with a warning)")
	groupFlags(cmd, "Input", "input", "input-format", "time", "value", "grain", "sum-duplicates", "integer-time", "separator",
		"until", "keep-partial-periods")
}

// printInputNotes prints how the input was read where that is not plain
// (see engine.PanelStats.InputNotes) and the rows that look mistyped, as
// warnings on w before any fitting, which may be long.
func printInputNotes(w io.Writer, data *engine.Data) {
	st := data.Panel.Stats
	for _, n := range st.Notes {
		fmt.Fprintln(w, "trueup: note:", n)
	}
	if st.SetAsideFirst != "" {
		fmt.Fprintf(w, "trueup: WARNING: %s (--keep-partial-periods keeps it)\n", st.SetAsideFirst)
	}
	if st.SetAside != "" {
		fmt.Fprintf(w, "trueup: WARNING: %s (--keep-partial-periods keeps it; --until PERIOD cuts the input elsewhere)\n", st.SetAside)
	}
	for _, o := range st.Outliers {
		fmt.Fprintln(w, "trueup: warning:", o)
	}
}

// source returns the engine source the flags describe. needKeys says
// whether the command needs --hierarchy.
func (f *sourceFlags) source(needKeys bool) (engine.Source, error) {
	if f.input == "" {
		return engine.Source{}, &usageError{errMissing("--input")}
	}
	src := engine.Source{Path: f.input, Format: tableio.Format(f.format), Time: f.time, Value: f.value,
		SumDuplicates: f.sumDuplicates, KeepLastPeriod: f.keepPartial, KeepFirstPeriod: f.keepPartial}
	if f.until != "" {
		p, err := tableio.ParsePeriod(f.until)
		if err != nil {
			return src, &usageError{fmt.Errorf("--until: %w", err)}
		}
		src.Until = &p
	}
	if needKeys || len(f.nest) > 0 {
		chains, err := hierarchy.ParseNest(f.nest)
		if err != nil {
			return src, err
		}
		src.Chains = chains
	}
	switch f.integerTime {
	case "auto":
	case "years":
		src.TimeKind = tableio.TimeYears
	case "steps":
		src.TimeKind = tableio.TimeSteps
	default:
		return src, &usageError{fmt.Errorf("--integer-time: %q is not auto, years or steps", f.integerTime)}
	}
	switch f.separator {
	case "":
	case "tab", `\t`:
		src.Comma = '\t'
	case ",", ";", "|":
		src.Comma = rune(f.separator[0])
	default:
		return src, &usageError{fmt.Errorf("--separator: %q is not one of \",\", \";\", \"|\" or \"tab\"", f.separator)}
	}
	if f.grain != "" {
		g, err := tableio.ParseGrain(f.grain)
		if err != nil {
			return src, err
		}
		src.Grain = &g
	}
	return src, nil
}
