package engine

import (
	"time"

	"trueup/hierarchy"
	"trueup/inputerr"
	"trueup/tableio"
)

// Source names the sales table and how to read it; forecast and inspect
// share it.
type Source struct {
	Input  string         // path of the sales table
	Format tableio.Format // "" = from the file extension
	Time   string         // period column
	Value  string         // value column
	Nest   []string       // --nest values, each a chain coarse to fine

	SumDuplicates bool
	Grain         string // "" = the data's own grain
}

// loaded is a source read, validated and arranged into its structure.
type loaded struct {
	rows   *tableio.Rows
	panel  *Panel
	st     *hierarchy.Structure
	bottom [][]float64 // bottom series in the structure's bottom order

	readSeconds, structureSeconds float64
}

// load reads the table, builds the panel and the grouped structure.
func (s Source) load() (*loaded, error) {
	if s.Time == "" || s.Value == "" {
		return nil, inputerr.New("name the period and value columns with --time and --value")
	}
	var grain *tableio.Grain
	if s.Grain != "" {
		g, err := tableio.ParseGrain(s.Grain)
		if err != nil {
			return nil, err
		}
		grain = &g
	}
	chains, err := hierarchy.ParseNest(s.Nest)
	if err != nil {
		return nil, err
	}
	var keys []string
	for _, c := range chains {
		keys = append(keys, c...)
	}

	start := time.Now()
	rows, err := tableio.Read(s.Input, tableio.ReadOptions{Format: s.Format, Time: s.Time, Value: s.Value, Keys: keys})
	if err != nil {
		return nil, err
	}
	ld := &loaded{rows: rows, readSeconds: time.Since(start).Seconds()}

	start = time.Now()
	if ld.panel, err = BuildPanel(rows, PanelOptions{Grain: grain, SumDuplicates: s.SumDuplicates}); err != nil {
		return nil, err
	}
	if ld.st, err = hierarchy.Build(chains, ld.panel.Keys); err != nil {
		return nil, err
	}
	ld.bottom = make([][]float64, len(ld.panel.Keys))
	for i, key := range ld.panel.Keys {
		j, _ := ld.st.BottomIndex(key)
		ld.bottom[j] = ld.panel.Values[i]
	}
	ld.structureSeconds = time.Since(start).Seconds()
	return ld, nil
}

func (ld *loaded) inputReport() InputReport {
	return InputReport{Path: ld.rows.Path, SHA256: ld.rows.SHA256, Rows: ld.rows.N, Columns: ld.rows.Columns}
}
