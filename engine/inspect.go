package engine

import (
	"math"

	"trueup/inputerr"
)

// InspectReport describes an input table without fitting anything.
type InspectReport struct {
	Input         InputReport  `json:"input"`
	Grain         string       `json:"grain"`
	GrainFrom     string       `json:"grain_from"`
	FirstPeriod   string       `json:"first_period"`
	LastPeriod    string       `json:"last_period"`
	Periods       int          `json:"periods"`
	BottomSeries  int          `json:"bottom_series"`
	Nodes         int          `json:"nodes"`
	NodesPerLevel []LevelCount `json:"nodes_per_level"` // as run.json counts them
	DuplicateRows int          `json:"duplicate_rows"`  // rows repeating an earlier key and period
	ZeroValues    int          `json:"zero_values"`
	NegativeRows  int          `json:"negative_values"`
	GapPeriods    int          `json:"gap_periods"` // periods inside a series' span with no row
	// PartialPeriods names a first or last period only partly covered by
	// the input's finer periods (with --grain).
	PartialPeriods []string `json:"partial_periods"`
	// InputNotes says how the periods were read where that is not plain
	// (timestamps read as local dates), where the input was cut, and the
	// partial last period set aside (see PanelStats.InputNotes).
	InputNotes []string `json:"input_notes"`
	// LateStarts and EarlyEnds list the nodes starting after the first
	// period (openings) or ending before the last (closures), at the
	// coarsest level that has any.
	LateStarts []SeriesSpan `json:"opened_late"`
	EarlyEnds  []SeriesSpan `json:"closed"`
}

// SeriesSpan is a node, named by its one label (hierarchy.Label), and the
// first and last periods it has sales in.
type SeriesSpan struct {
	Level string `json:"level"`
	Node  string `json:"node"`
	First string `json:"first_period"`
	Last  string `json:"last_period"`
}

// Inspect reads the table and reports its shape and oddities. Duplicate
// rows are counted rather than refused, whatever src.SumDuplicates says.
func Inspect(src Source) (*InspectReport, error) {
	src.SumDuplicates = true
	d, err := Load(src)
	if err != nil {
		return nil, err
	}
	if d.Structure == nil {
		return nil, inputerr.ForOption("Chains", "name the key columns to inspect the structure")
	}
	pn, st := d.Panel, d.Structure
	rep := &InspectReport{
		Input:     d.Input,
		Grain:     pn.Grain.String(),
		GrainFrom: pn.Stats.InferredFrom, FirstPeriod: pn.Period(0).String(), LastPeriod: pn.Period(pn.T - 1).String(),
		Periods: pn.T, BottomSeries: st.NumBottom(), Nodes: len(st.Nodes),
		PartialPeriods: append([]string{}, pn.Stats.Partial...),
		InputNotes:     pn.Stats.InputNotes(),
		ZeroValues:     pn.Stats.Zero, NegativeRows: pn.Stats.Negative, GapPeriods: pn.Stats.Gaps,
		LateStarts: []SeriesSpan{}, EarlyEnds: []SeriesSpan{},
	}
	rep.DuplicateRows = pn.Stats.Duplicates
	// Spans of every node: the openings and closures show at the
	// coarsest level where they happen (a store, rather than each of its
	// categories), so that is the level listed.
	history := st.S.Aggregate(d.Bottom)
	for _, l := range st.Levels {
		lc := LevelCount{Level: l.Name, Nodes: len(l.Nodes)}
		var late, early []SeriesSpan
		for _, i := range l.Nodes {
			first, last := span(history[i])
			sp := SeriesSpan{Level: l.Name, Node: st.Label(i), First: pn.Period(first).String(), Last: pn.Period(last).String()}
			if first > 0 {
				late = append(late, sp)
			}
			if last < pn.T-1 {
				early = append(early, sp)
			}
		}
		lc.LateStarts, lc.EarlyEnds = len(late), len(early)
		rep.NodesPerLevel = append(rep.NodesPerLevel, lc)
		if len(rep.LateStarts) == 0 {
			rep.LateStarts = append(rep.LateStarts, late...)
		}
		if len(rep.EarlyEnds) == 0 {
			rep.EarlyEnds = append(rep.EarlyEnds, early...)
		}
	}
	return rep, nil
}

// span returns the first and last period index at which y is not NaN, or
// −1, −1 when it never is.
func span(y []float64) (first, last int) {
	first, last = -1, -1
	for t, v := range y {
		if !math.IsNaN(v) {
			if first < 0 {
				first = t
			}
			last = t
		}
	}
	return first, last
}
