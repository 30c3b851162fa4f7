package pipeline

import (
	"trueup/hierarchy"
	"trueup/internal/inputerr"
	tableio "trueup/io"
)

// InspectConfig names the input and its columns, as for a forecast.
type InspectConfig struct {
	Input  string
	Format tableio.Format
	Time   string
	Value  string
	Nest   []string
	Grain  string
}

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
	SeriesByLevel []LevelCount `json:"series_per_level"`
	DuplicateRows int          `json:"duplicate_rows"` // rows repeating an earlier key and period
	ZeroValues    int          `json:"zero_values"`
	NegativeRows  int          `json:"negative_values"`
	GapPeriods    int          `json:"gap_periods"` // periods inside a series' span with no row
	LateStarts    []SeriesSpan `json:"late_starts"` // series starting after the first period
	EarlyEnds     []SeriesSpan `json:"early_ends"`  // series ending before the last period
}

// SeriesSpan is a bottom series and the periods it covers.
type SeriesSpan struct {
	Key   string `json:"key"`
	First string `json:"first"`
	Last  string `json:"last"`
}

// Inspect reads the table and reports its shape and oddities.
func Inspect(cfg InspectConfig) (*InspectReport, error) {
	if cfg.Time == "" || cfg.Value == "" {
		return nil, inputerr.New("name the period and value columns with --time and --value")
	}
	chains, err := hierarchy.ParseNest(cfg.Nest)
	if err != nil {
		return nil, err
	}
	var keys []string
	for _, c := range chains {
		keys = append(keys, c...)
	}
	var grain *tableio.Grain
	if cfg.Grain != "" {
		g, err := tableio.ParseGrain(cfg.Grain)
		if err != nil {
			return nil, err
		}
		grain = &g
	}
	rows, err := tableio.Read(cfg.Input, tableio.ReadOptions{Format: cfg.Format, Time: cfg.Time, Value: cfg.Value, Keys: keys})
	if err != nil {
		return nil, err
	}
	// Summing lets inspection count duplicates instead of stopping at the first.
	pn, err := BuildPanel(rows, PanelOptions{Grain: grain, SumDuplicates: true})
	if err != nil {
		return nil, err
	}
	st, err := hierarchy.Build(chains, pn.Keys)
	if err != nil {
		return nil, err
	}
	rep := &InspectReport{
		Input:     InputReport{Path: rows.Path, SHA256: rows.SHA256, Rows: rows.N, Columns: rows.Columns},
		Grain:     pn.Grain.String(),
		GrainFrom: pn.Stats.InferredFrom, FirstPeriod: pn.Period(0).String(), LastPeriod: pn.Period(pn.T - 1).String(),
		Periods: pn.T, BottomSeries: st.NumBottom(), Nodes: len(st.Nodes),
		ZeroValues: pn.Stats.Zero, NegativeRows: pn.Stats.Negative, GapPeriods: pn.Stats.Gaps,
		LateStarts: []SeriesSpan{}, EarlyEnds: []SeriesSpan{},
	}
	if grain == nil || *grain == pn.Stats.NativeGrain {
		rep.DuplicateRows = pn.Stats.SummedRows
	}
	for _, l := range st.Levels {
		rep.SeriesByLevel = append(rep.SeriesByLevel, LevelCount{l.Name, len(l.Nodes)})
	}
	off := st.BottomOffset()
	for s, key := range pn.Keys {
		j, _ := st.BottomIndex(key)
		first, last := -1, -1
		for t, v := range pn.Values[s] {
			if v == v {
				if first < 0 {
					first = t
				}
				last = t
			}
		}
		span := SeriesSpan{Key: st.Label(off + j), First: pn.Period(first).String(), Last: pn.Period(last).String()}
		if first > 0 {
			rep.LateStarts = append(rep.LateStarts, span)
		}
		if last < pn.T-1 {
			rep.EarlyEnds = append(rep.EarlyEnds, span)
		}
	}
	return rep, nil
}
