package engine

import (
	"time"

	"trueup/hierarchy"
	"trueup/inputerr"
	"trueup/tableio"
)

// Source names a sales table and how to read it. It is the one read path
// of every command: forecast, fit, inspect and reconcile all load their
// history through Load.
type Source struct {
	// Path is the sales table: Parquet, CSV or Arrow IPC.
	Path string
	// Format overrides the format the file name extension implies; ""
	// goes by the extension.
	Format tableio.Format
	// Time and Value name the period and value columns. Both are required.
	Time, Value string
	// Chains are the key columns, each chain coarse to fine (see
	// hierarchy.ParseNest). Several chains cross. Nil reads the table as
	// one series without keys.
	Chains []hierarchy.Chain
	// SumDuplicates adds rows with the same key and period together;
	// false refuses them as an input error.
	SumDuplicates bool
	// Grain, when non-nil, sums finer periods into periods of this grain;
	// nil works at the data's own grain.
	Grain *tableio.Grain
	// TimeKind says how a period column of bare integers is read: the zero
	// value decides by the values (four-digit numbers from 1800 to 2200
	// are years, other integers a step index).
	TimeKind tableio.TimeKind
	// Comma is the field separator of a CSV file; 0 detects it from the
	// header line (',', ';' or tab).
	Comma rune
	// Until, when non-nil, cuts the history after this period (any form
	// tableio.ParsePeriod reads: 2001-06, 2001-06-30, a timestamp, a
	// year); later rows are left out before anything else is checked.
	Until *tableio.Period
	// KeepLastPeriod keeps a last period that looks partial (far fewer
	// series reporting than in the periods before, far below the usual
	// total, or fewer days or months than its grain holds). By default it
	// is set aside with a warning, so that the series missing from it are
	// not taken as closed and forecast as zero.
	KeepLastPeriod bool
	// KeepFirstPeriod keeps a first period that the input's finer periods
	// cover only in part (a month that starts on the 4th). By default it
	// is set aside with a warning.
	KeepFirstPeriod bool
}

// Data is a source read, checked and arranged: the bottom series on one
// calendar (Panel) and, when the source names key columns, the grouped
// structure built from them.
type Data struct {
	Input InputReport
	Panel *Panel
	// Structure is nil when the source has no key columns.
	Structure *hierarchy.Structure
	// Bottom holds the bottom series in the structure's bottom order (the
	// panel's order when Structure is nil).
	Bottom [][]float64
	// KeyTypes gives each key column's type in the input, in the order of
	// the chains' columns (tableio.Int64 for an integer column).
	KeyTypes []tableio.ColumnType
	// Timings in seconds: reading the file, and building panel and
	// structure.
	ReadSeconds, StructureSeconds float64

	// rows and src are what Load read, kept so that Cut can rebuild the
	// panel from the rows before an origin (see backtest.go).
	rows *tableio.Rows
	src  Source
}

// Load reads the table, builds the panel and the grouped structure.
// Every problem with the file or the options is an *inputerr.Error.
func Load(src Source) (*Data, error) {
	if src.Time == "" || src.Value == "" {
		return nil, inputerr.ForOption("Source", "name the period and the value columns")
	}
	var keys []string
	for _, c := range src.Chains {
		keys = append(keys, c...)
	}
	if err := checkKeyColumns(keys); err != nil {
		return nil, err
	}
	budget, err := memoryBudget()
	if err != nil {
		return nil, err
	}
	start := time.Now()
	rows, err := tableio.Read(src.Path, tableio.ReadOptions{Format: src.Format, Time: src.Time, Value: src.Value, Keys: keys,
		TimeKind: src.TimeKind, Comma: src.Comma, MemoryBudget: budget})
	if err != nil {
		return nil, err
	}
	d := &Data{ReadSeconds: time.Since(start).Seconds(), KeyTypes: rows.KeyTypes, rows: rows, src: src,
		Input: InputReport{Path: rows.Path, SHA256: rows.SHA256, Rows: rows.N, Columns: rows.Columns, Value: src.Value}}

	start = time.Now()
	if err := d.arrange(rows, src); err != nil {
		return nil, err
	}
	d.StructureSeconds = time.Since(start).Seconds()
	return d, nil
}

// arrange builds the panel, the structure and the bottom series of d from
// rows.
func (d *Data) arrange(rows *tableio.Rows, src Source) error {
	budget, err := memoryBudget()
	if err != nil {
		return err
	}
	if d.Panel, err = BuildPanel(rows, PanelOptions{Grain: src.Grain, SumDuplicates: src.SumDuplicates,
		MemoryBudget: budget, Until: src.Until, KeepLastPeriod: src.KeepLastPeriod, KeepFirstPeriod: src.KeepFirstPeriod}); err != nil {
		return err
	}
	if len(src.Chains) == 0 {
		d.Bottom = d.Panel.Values
	} else {
		if err := checkStructureMemory(budget, src.Chains, len(d.Panel.Keys)); err != nil {
			return err
		}
		if d.Structure, err = hierarchy.Build(src.Chains, d.Panel.Keys); err != nil {
			return err
		}
		if err := checkHistoryMemory(budget, len(d.Structure.Nodes), d.Panel.T); err != nil {
			return err
		}
		d.Bottom = make([][]float64, len(d.Panel.Keys))
		for i, key := range d.Panel.Keys {
			j, _ := d.Structure.BottomIndex(key)
			d.Bottom[j] = d.Panel.Values[i]
		}
	}
	return nil
}
