package main

import (
	"encoding/json"
	"fmt"
	"io"
	"path/filepath"
	"strings"
	"text/tabwriter"

	"trueup/internal/pipeline"
)

// printSummary prints what a run did: nodes per level, chosen models,
// warnings and where the files are; or, with asJSON, the run report.
func printSummary(w io.Writer, res *pipeline.Result, asJSON bool) error {
	rep := res.Report
	if asJSON {
		enc := json.NewEncoder(w)
		enc.SetIndent("", "  ")
		return enc.Encode(rep)
	}
	c := rep.Counts
	fmt.Fprintf(w, "Read %d rows: %d bottom series, %s to %s (%d %ss, seasonal period %d).\n",
		rep.Input.Rows, c.BottomSeries, c.FirstPeriod, c.LastPeriod, c.Periods, c.Grain, c.SeasonalLag)
	fmt.Fprintf(w, "Forecast %d %ss ahead (%s to %s) for %d nodes, reconciled with %s.\n\n",
		c.Horizon, c.Grain, c.ForecastRange[0], c.ForecastRange[1], c.Nodes, rep.Reconcile.Method)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "level\tnodes")
	for _, l := range rep.LevelCounts() {
		fmt.Fprintf(tw, "%s\t%d\n", l.Level, l.Nodes)
	}
	tw.Flush()
	fmt.Fprintln(w)
	tw = tabwriter.NewWriter(w, 0, 0, 2, ' ', 0)
	fmt.Fprintln(tw, "model family\tnodes")
	for _, f := range rep.FamilyCounts() {
		fmt.Fprintf(tw, "%s\t%d\n", f.Family, f.Nodes)
	}
	tw.Flush()
	if len(rep.Reconcile.Notes) > 0 {
		var notes []string
		for k, v := range rep.Reconcile.Notes {
			notes = append(notes, fmt.Sprintf("%s=%.4g", k, v))
		}
		fmt.Fprintf(w, "\nReconciliation: %s\n", strings.Join(notes, " "))
	}
	if len(rep.Warnings) > 0 {
		fmt.Fprintln(w, "\nWarnings:")
		for _, warn := range rep.Warnings {
			fmt.Fprintln(w, "  -", warn)
		}
	}
	fmt.Fprintln(w, "\nFiles:")
	for _, f := range rep.Files {
		fmt.Fprintln(w, "  "+f)
	}
	fmt.Fprintln(w, "  "+filepath.Join(rep.Options["out"].(string), "run.json"))
	fmt.Fprintln(w, "\nThese forecasts are estimates with stated uncertainty (lo_/hi_ columns);")
	fmt.Fprintln(w, "they are for the people accountable for the plan to review, not to adopt unread.")
	return nil
}

func errMissing(flag string) error { return fmt.Errorf("%s is required", flag) }
