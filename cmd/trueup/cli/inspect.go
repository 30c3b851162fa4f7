package cli

import (
	"encoding/json"
	"fmt"
	"strings"

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
		Use:   "inspect --input FILE --hierarchy COLUMNS [--hierarchy COLUMNS ...]",
		Short: "Describe a sales table before forecasting it",
		Long: `Reads the sales table as forecast would and reports rows, series per level,
the period range, gaps, zeros, duplicate key-and-period rows, negative
values, and the series that opened late (first sales after the first
period) or closed (no sales in the latest periods).
Input notes say how the periods were read where that is not plain from the
file (timestamps read as local dates), where --until cut the input, and a
partial last period set aside. Nothing is written.`,
		Example: `  trueup inspect --input sales.parquet --time month --value sales \
      --hierarchy region,store --hierarchy category`,
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
			n := func(x int) string { return grouped(float64(x)) }
			fmt.Fprintf(w, "%s: %s rows, columns %s\n", rep.Input.Path, n(rep.Input.Rows), strings.Join(rep.Input.Columns, ", "))
			fmt.Fprintf(w, "periods: %s to %s, %s %ss (grain from %s)\n", rep.FirstPeriod, rep.LastPeriod, n(rep.Periods), rep.Grain, rep.GrainFrom)
			fmt.Fprintf(w, "bottom series: %s, nodes: %s\n\n", n(rep.BottomSeries), n(rep.Nodes))
			var levels [][]string
			for _, l := range rep.NodesPerLevel {
				levels = append(levels, []string{l.Level, n(l.Nodes), n(l.LateStarts), n(l.EarlyEnds)})
			}
			textTable(w, []string{"level", "nodes", "opened late", "closed"}, levels)
			fmt.Fprintln(w)
			textTable(w, []string{"input check", "count"}, [][]string{
				{"duplicate rows (same key and period)", n(rep.DuplicateRows)},
				{"zero values", n(rep.ZeroValues)},
				{"negative values", n(rep.NegativeRows)},
				{"gap periods (no row inside a series' span, read as zero)", n(rep.GapPeriods)},
			})
			for _, p := range rep.PartialPeriods {
				fmt.Fprintf(w, "partial period: %s\n", p)
			}
			for _, note := range rep.InputNotes {
				fmt.Fprintf(w, "input note: %s\n", note)
			}
			for _, group := range []struct {
				title string
				spans []engine.SeriesSpan
			}{{"opened late", rep.LateStarts}, {"closed", rep.EarlyEnds}} {
				if len(group.spans) == 0 {
					continue
				}
				fmt.Fprintf(w, "%s (%s level):\n", group.title, group.spans[0].Level)
				for i, s := range group.spans {
					if i == listMax {
						fmt.Fprintf(w, "  … and %d more (--json lists all)\n", len(group.spans)-listMax)
						break
					}
					fmt.Fprintf(w, "  %s: %s to %s\n", shownKey(s.Node), s.First, s.Last)
				}
			}
			return nil
		},
	}
	sf.register(cmd)
	fl := cmd.Flags()
	fl.BoolVar(&asJSON, "json", false, "print the report as JSON")
	fl.IntVar(&listMax, "list", 10, "series that opened late or closed to list")
	return cmd
}
