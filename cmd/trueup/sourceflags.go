package main

import (
	"github.com/spf13/cobra"

	"trueup/engine"
	"trueup/tableio"
)

// sourceFlags are the flags that name the sales table and its columns,
// shared by forecast and inspect.
type sourceFlags struct {
	src    engine.Source
	format string
}

func (f *sourceFlags) register(cmd *cobra.Command) {
	fl := cmd.Flags()
	fl.StringVar(&f.src.Input, "input", "", "sales table, .parquet or .csv")
	fl.StringVar(&f.format, "input-format", "", "read the input as parquet or csv whatever its extension")
	fl.StringVar(&f.src.Time, "time", "period", "period column: dates, timestamps, or labels such as 2024-03, 2024-Q1, 2024-W07")
	fl.StringVar(&f.src.Value, "value", "sales", "numeric value column")
	fl.StringArrayVar(&f.src.Nest, "nest", nil, "key columns of one chain, coarse to fine, comma-separated (repeatable)")
	fl.StringVar(&f.src.Grain, "grain", "", "work at this grain, summing finer periods: day, week, month, quarter")
	groupFlags(cmd, "Input", "input", "input-format", "time", "value", "nest", "grain")
}

// source returns the flags' source, or a usage error when --input is missing.
func (f *sourceFlags) source() (engine.Source, error) {
	if f.src.Input == "" {
		return engine.Source{}, &usageError{errMissing("--input")}
	}
	s := f.src
	s.Format = tableio.Format(f.format)
	return s, nil
}
