package main

import (
	"encoding/json"
	"fmt"
	"text/tabwriter"

	"github.com/spf13/cobra"

	"trueup/engine"
)

func newInspectCmd() *cobra.Command {
	var (
		sf      sourceFlags
		asJSON  bool
		listMax int
	)
	cmd := &cobra.Command{
		Use:   "inspect --input FILE --nest CHAIN [--nest CHAIN ...]",
		Short: "Describe a sales table before forecasting it",
		Long: `Reads the sales table as forecast would and reports rows, series per level,
the period range, gaps, zeros, duplicate key-and-period rows, negative
values, and the series that start late (openings) or stop early (closures).
Nothing is written.`,
		Example: `  trueup inspect --input sales.parquet --time month --value sales \
      --nest region,store --nest category`,
		Args: noArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			src, err := sf.source(true)
			if err != nil {
				return err
			}
			rep, err := engine.Inspect(src)
			if err != nil {
				return err
			}
			w := cmd.OutOrStdout()
			if asJSON {
				enc := json.NewEncoder(w)
				enc.SetIndent("", "  ")
				return enc.Encode(rep)
			}
			fmt.Fprintf(w, "%s: %d rows, columns %v\n", rep.Input.Path, rep.Input.Rows, rep.Input.Columns)
			fmt.Fprintf(w, "periods: %s to %s, %d %ss (grain from %s)\n", rep.FirstPeriod, rep.LastPeriod, rep.Periods, rep.Grain, rep.GrainFrom)
			fmt.Fprintf(w, "bottom series: %d, nodes: %d\n\n", rep.BottomSeries, rep.Nodes)
			tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
			fmt.Fprintln(tw, "level\tseries\tstarting late\tending early")
			for _, l := range rep.SeriesByLevel {
				fmt.Fprintf(tw, "%s\t%d\t%d\t%d\n", l.Level, l.Nodes, l.LateStarts, l.EarlyEnds)
			}
			tw.Flush()
			fmt.Fprintf(w, "\nduplicate rows (same key and period): %d\n", rep.DuplicateRows)
			fmt.Fprintf(w, "zero values: %d\nnegative values: %d\n", rep.ZeroValues, rep.NegativeRows)
			fmt.Fprintf(w, "gap periods (no row inside a series' span, read as zero): %d\n", rep.GapPeriods)
			for _, p := range rep.PartialPeriods {
				fmt.Fprintf(w, "partial period: %s\n", p)
			}
			for _, group := range []struct {
				title string
				spans []engine.SeriesSpan
			}{{"starting late", rep.LateStarts}, {"ending early", rep.EarlyEnds}} {
				if len(group.spans) == 0 {
					continue
				}
				fmt.Fprintf(w, "%s (%s level):\n", group.title, group.spans[0].Level)
				for i, s := range group.spans {
					if i == listMax {
						fmt.Fprintf(w, "  … and %d more (--json lists all)\n", len(group.spans)-listMax)
						break
					}
					fmt.Fprintf(w, "  %s: %s to %s\n", s.Key, s.First, s.Last)
				}
			}
			return nil
		},
	}
	sf.register(cmd)
	fl := cmd.Flags()
	fl.BoolVar(&asJSON, "json", false, "print the report as JSON")
	fl.IntVar(&listMax, "list", 10, "late-starting and early-ending series to list")
	return cmd
}
