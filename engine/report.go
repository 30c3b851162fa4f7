package engine

import (
	"fmt"
	"sort"
	"trueup/internal/words"

	"trueup/models/families"
	"trueup/reconcile"
)

// RunReport is the content of run.json: what was read, with which options,
// what came out, how long each stage took and what deserves a look.
type RunReport struct {
	Version string         `json:"version"`
	Command string         `json:"command"`
	Input   InputReport    `json:"input"`
	Options map[string]any `json:"options"`
	Counts  CountsReport   `json:"counts"`
	Models  map[string]int `json:"models"` // nodes per chosen family
	// Reconcile holds the method and its facts, such as the shrinkage λ.
	Reconcile ReconcileReport `json:"reconcile"`
	// Locks lists the locked forecasts and what they moved; nil without.
	Locks *LocksReport `json:"locks,omitempty"`
	// Timings holds seconds per stage. They vary from run to run, so
	// run.json is the one output that is not byte-identical across runs.
	Timings  map[string]float64 `json:"timings_seconds"`
	Warnings []string           `json:"warnings"`
	// Files lists the files of the output set (run.json aside), filled in
	// by the writer, each with its SHA-256 so that a reader can check that
	// what it read belongs to this run.
	Files []FileRecord `json:"files"`
}

// FileRecord names one file of an output set, relative to the output
// folder, with the hex SHA-256 of its bytes.
type FileRecord struct {
	Name   string `json:"name"`
	SHA256 string `json:"sha256"`
}

// InputReport identifies the input file.
type InputReport struct {
	Path    string   `json:"path"`
	SHA256  string   `json:"sha256"`
	Rows    int      `json:"rows"`
	Columns []string `json:"columns"`
	// Value is the column summed as sales (Source.Value); the report's
	// value axis is labelled with it. Empty for base forecasts read by
	// LoadTables.
	Value string `json:"value_column,omitempty"`
}

// CountsReport sizes the structure.
type CountsReport struct {
	BottomSeries  int            `json:"bottom_series"`
	Nodes         int            `json:"nodes"`
	NodesPerLevel []LevelCount   `json:"nodes_per_level"`
	Periods       int            `json:"periods"`
	FirstPeriod   string         `json:"first_period"`
	LastPeriod    string         `json:"last_period"`
	Grain         string         `json:"grain"`
	SeasonalLag   int            `json:"season_length"`
	Horizon       int            `json:"horizon"`
	ForecastRange [2]string      `json:"forecast_periods"`
	Input         map[string]int `json:"input_checks"`
}

// LevelCount is the number of nodes in one level.
type LevelCount struct {
	Level string `json:"level"`
	Nodes int    `json:"nodes"`
	// LateStarts and EarlyEnds count nodes that start after the first
	// period or end before the last (filled by Inspect).
	LateStarts int `json:"opened_late,omitempty"`
	EarlyEnds  int `json:"closed,omitempty"`
}

// ReconcileReport describes the reconciliation.
type ReconcileReport struct {
	Method string `json:"method"`
	// Explanation says what the method does, for the report's readers
	// (reconcile.MethodInfo.Explanation).
	Explanation string             `json:"explanation"`
	Notes       map[string]float64 `json:"notes,omitempty"`
	// Auto records the backtest behind an automatic choice of method.
	Auto *AutoChoice `json:"automatic_choice,omitempty"`
	// Calibration records the calibration of the intervals, when asked
	// for (Reconciliation.Calibrate).
	Calibration *CalibrationRecord `json:"interval_calibration,omitempty"`
	// Shape holds the factors of error-quantile intervals per node level
	// (Result.Shape); nil for the other interval methods.
	Shape *Calibration `json:"interval_error_quantiles,omitempty"`
	// Bootstrap describes bootstrap intervals (Options.Intervals); nil
	// for Gaussian ones.
	Bootstrap *BootstrapRecord `json:"bootstrap_intervals,omitempty"`
}

// reconcileReport describes the method named method, as the table of
// methods explains it.
func reconcileReport(method string, notes map[string]float64) ReconcileReport {
	info, _ := reconcile.LookupMethod(method)
	return ReconcileReport{Method: method, Explanation: info.Explanation, Notes: notes}
}

// optionsReport records the options as resolved, defaults filled in.
func optionsReport(opt Options, rc Reconciliation, nonneg bool) map[string]any {
	return map[string]any{
		"family": familyOrDefault(opt.Model.Family), "model": opt.Model.Form, "transform": opt.Model.Transform,
		"season_length": opt.Period, "horizon": opt.Horizon, "intervals": opt.Levels,
		"method": rc.Method, "cov": rc.Cov, "at": rc.At, "nonnegative": nonneg,
		"interval_method": intervalMethod(opt),
	}
}

// intervalMethod is opt's interval method, the default filled in.
func intervalMethod(opt Options) string {
	if opt.Intervals == "" {
		return DefaultIntervals
	}
	return opt.Intervals
}

// BootstrapRecord describes bootstrap intervals in run.json.
type BootstrapRecord struct {
	// Draws is the number of reconciled sample paths; BlockPeriods the
	// length of the blocks of consecutive residual periods they resample.
	Draws        int `json:"draws"`
	BlockPeriods int `json:"block_periods"`
	// NoSimulator counts the nodes whose model has no path form, or one
	// whose paths leave its transform's range: their paths are their own
	// residuals at the same periods scaled to their forecast variance
	// (see Sampled.Fallback).
	NoSimulator int `json:"nodes_without_simulator"`
}

func familyOrDefault(name string) string {
	if name == "" {
		return families.Default
	}
	return name
}

func (r *RunReport) fill(d *Data, opt Options, rc Reconciliation, res *Result, method string) {
	pn, st, fits, sol := d.Panel, res.Structure, res.Fits, res.Solution
	r.Input = d.Input
	r.Options = optionsReport(opt, rc, res.Nonnegative)
	if len(opt.PlanGrains) > 0 {
		names := make([]string, len(opt.PlanGrains))
		for i, g := range opt.PlanGrains {
			names[i] = g.String()
		}
		r.Options["plan_grains"] = names
	}
	c := CountsReport{
		BottomSeries: st.NumBottom(), Nodes: len(st.Nodes), Periods: pn.T,
		FirstPeriod: pn.Period(0).String(), LastPeriod: pn.Period(pn.T - 1).String(),
		Grain: pn.Grain.String(), SeasonalLag: opt.Period, Horizon: opt.Horizon,
		ForecastRange: [2]string{pn.Period(pn.T).String(), pn.Period(pn.T + opt.Horizon - 1).String()},
		Input: map[string]int{
			"summed_rows": pn.Stats.SummedRows, "negative_values": pn.Stats.Negative,
			"zero_values": pn.Stats.Zero, "gap_periods": pn.Stats.Gaps,
			"opened_late": pn.Stats.LateStarts, "closed": pn.Stats.EarlyEnds,
		},
	}
	for _, l := range st.Levels {
		c.NodesPerLevel = append(c.NodesPerLevel, LevelCount{Level: l.Name, Nodes: len(l.Nodes)})
	}
	r.Counts = c
	r.Models = map[string]int{}
	warned := 0
	for _, f := range fits {
		name := "closed"
		if !f.Closed {
			name = f.Family
		}
		r.Models[name]++
		if f.Warning != "" {
			warned++
		}
	}
	r.Reconcile = reconcileReport(method, sol.Notes)
	if sp := res.Sampled; sp != nil {
		r.Reconcile.Bootstrap = &BootstrapRecord{Draws: sp.Draws, BlockPeriods: sp.Block, NoSimulator: sp.Fallback}
	}
	r.Warnings = []string{}
	if pn.Stats.Negative > 0 {
		r.Warnings = append(r.Warnings, fmt.Sprintf("%s negative (returns?); kept", words.Count(pn.Stats.Negative, "row is", "rows are")))
	}
	r.Warnings = append(r.Warnings, pn.Stats.InputNotes()...)
	r.Warnings = append(r.Warnings, pn.Stats.Outliers...)
	for _, p := range pn.Stats.Partial {
		r.Warnings = append(r.Warnings, "partial period: "+p+"; its total understates a full period (trim the input to whole periods)")
	}
	if pn.Stats.Gaps > 0 {
		r.Warnings = append(r.Warnings, fmt.Sprintf("%s inside series' spans had no row and count as zero sales", words.Count(pn.Stats.Gaps, "period", "periods")))
	}
	if pn.Stats.EarlyEnds > 0 {
		r.Warnings = append(r.Warnings, fmt.Sprintf("%s closed before %s and %s forecast as zero", words.Count(pn.Stats.EarlyEnds, "bottom series", "bottom series"), c.LastPeriod, words.Agree(pn.Stats.EarlyEnds, "is", "are")))
	}
	if warned > 0 {
		r.Warnings = append(r.Warnings, fmt.Sprintf("%s a model warning; see the warning column of the models table", words.Count(warned, "node has", "nodes have")))
	}
	if res.Plans != nil {
		for _, l := range res.Plans.LeftOut {
			r.Warnings = append(r.Warnings, "plan period left out: "+l)
		}
	}
}

// LevelCounts returns nodes per level in level order.
func (r *RunReport) LevelCounts() []LevelCount { return r.Counts.NodesPerLevel }

// FamilyCount is the number of nodes whose chosen model is of one family.
type FamilyCount struct {
	Family string
	Nodes  int
}

// FamilyCounts returns nodes per chosen family, sorted by family name.
func (r *RunReport) FamilyCounts() []FamilyCount {
	out := make([]FamilyCount, 0, len(r.Models))
	for k, v := range r.Models {
		out = append(out, FamilyCount{k, v})
	}
	sort.Slice(out, func(i, j int) bool { return out[i].Family < out[j].Family })
	return out
}
