package engine

import (
	"context"
	"errors"
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"testing"
	"time"

	"trueup/hierarchy"
	"trueup/inputerr"
	"trueup/tableio"
)

// The tables in these tests are invented: they check how locks are read
// and refused, not a method's numbers (reconcile/locks_test.go checks
// those against the published formula).

// lockFixture writes a base table and a residuals table for region →
// store: R1 with stores S1, S2 and R2 with S3, S4, where S4's residuals
// stop three periods before the origin (a closed store), and returns the
// base set.
func lockFixture(t *testing.T) *BaseSet {
	t.Helper()
	dir := t.TempDir()
	nodes := [][2]string{{"", ""}, {"R1", ""}, {"R2", ""}, {"R1", "S1"}, {"R1", "S2"}, {"R2", "S3"}, {"R2", "S4"}}
	base := []float64{100, 55, 40, 30, 20, 35, 0}
	bt := &tableio.Table{Columns: []tableio.Column{{Name: "region"}, {Name: "store"}, {Name: "period"}, {Name: "base", Type: tableio.Float64}}}
	rt := &tableio.Table{Columns: []tableio.Column{{Name: "region"}, {Name: "store"}, {Name: "period"}, {Name: "residual", Type: tableio.Float64}}}
	add := func(tb *tableio.Table, node [2]string, period string, v float64) {
		tb.Columns[0].Strings = append(tb.Columns[0].Strings, node[0])
		tb.Columns[1].Strings = append(tb.Columns[1].Strings, node[1])
		tb.Columns[2].Strings = append(tb.Columns[2].Strings, period)
		tb.Columns[3].Floats = append(tb.Columns[3].Floats, v)
	}
	for i, node := range nodes {
		for k := 1; k <= 3; k++ {
			add(bt, node, fmt.Sprintf("2026-%02d", k), base[i]*(1+0.1*float64(k)))
		}
		for m := 1; m <= 12; m++ {
			r := math.Sin(float64(7*i+m)) * (1 + float64(i%3))
			if node[1] == "S4" && m > 9 {
				r = math.NaN() // closed: no residuals after 2025-09
			}
			add(rt, node, fmt.Sprintf("2025-%02d", m), r)
		}
	}
	for i := range rt.Columns[3].Floats {
		if math.IsNaN(rt.Columns[3].Floats[i]) {
			if rt.Columns[3].Null == nil {
				rt.Columns[3].Null = make([]bool, len(rt.Columns[3].Floats))
			}
			rt.Columns[3].Null[i] = true
		}
	}
	bp, rp := filepath.Join(dir, "base.csv"), filepath.Join(dir, "residuals.csv")
	if err := tableio.WriteTable(bp, bt, tableio.CSV); err != nil {
		t.Fatal(err)
	}
	if err := tableio.WriteTable(rp, rt, tableio.CSV); err != nil {
		t.Fatal(err)
	}
	bs, err := LoadTables(Tables{Base: bp, Residuals: rp, Chains: []hierarchy.Chain{{"region", "store"}}})
	if err != nil {
		t.Fatal(err)
	}
	return bs
}

// lockRow is one row of a lock table; period is a cell of the period
// column's type (string, or time.Time for a Date column).
type lockRow struct {
	region, store string
	period        any
	value         float64
}

func writeLocks(t *testing.T, rows []lockRow, f tableio.Format) string {
	t.Helper()
	tb := &tableio.Table{Columns: []tableio.Column{{Name: "region"}, {Name: "store"}, {Name: "period"}, {Name: "value", Type: tableio.Float64}}}
	for _, r := range rows {
		tb.Columns[0].Strings = append(tb.Columns[0].Strings, r.region)
		tb.Columns[1].Strings = append(tb.Columns[1].Strings, r.store)
		switch p := r.period.(type) {
		case time.Time:
			tb.Columns[2].Type = tableio.Date
			tb.Columns[2].Ints = append(tb.Columns[2].Ints, p.Unix()/86400)
		default:
			tb.Columns[2].Strings = append(tb.Columns[2].Strings, p.(string))
		}
		tb.Columns[3].Floats = append(tb.Columns[3].Floats, r.value)
		if math.IsNaN(r.value) {
			if tb.Columns[3].Null == nil {
				tb.Columns[3].Null = make([]bool, len(rows))
			}
			tb.Columns[3].Null[len(tb.Columns[3].Floats)-1] = true
		}
	}
	path := filepath.Join(t.TempDir(), "locks"+f.Ext())
	if err := tableio.WriteTable(path, tb, f); err != nil {
		t.Fatal(err)
	}
	return path
}

// TestLockPeriodForms reads the lock period in every form a sales table
// may use (a label, a first-of-month date, a date inside the month, a
// timestamp, a Parquet DATE), in CSV and Parquet, and checks that the
// locked nodes come out exactly at their values in February.
func TestLockPeriodForms(t *testing.T) {
	bs := lockFixture(t)
	feb := time.Date(2026, 2, 1, 0, 0, 0, 0, time.UTC)
	for _, form := range []struct {
		name   string
		period any
	}{{"label", "2026-02"}, {"date", "2026-02-01"}, {"date inside", "2026-02-15"},
		{"timestamp", "2026-02-01T00:00:00Z"}, {"Parquet DATE", feb}} {
		for _, f := range []tableio.Format{tableio.CSV, tableio.Parquet} {
			if _, isDate := form.period.(time.Time); isDate && f == tableio.CSV {
				continue // CSV has no date type: its dates are the "date" form
			}
			path := writeLocks(t, []lockRow{{"", "", form.period, 130}, {"R1", "S2", form.period, 0}}, f)
			res, err := Reconcile(context.Background(), bs, ReconcileOptions{Reconcile: Reconciliation{Locks: path}})
			if err != nil {
				t.Fatalf("%s %s: %v", form.name, f.Ext(), err)
			}
			s2, _ := res.Structure.Lookup([]string{"R1", "S2"})
			if got := res.Solution.Forecast[0][1]; got != 130 {
				t.Errorf("%s %s: total in 2026-02 is %v, locked to 130", form.name, f.Ext(), got)
			}
			if got := res.Solution.Forecast[s2][1]; got != 0 {
				t.Errorf("%s %s: R1/S2 in 2026-02 is %v, locked to 0", form.name, f.Ext(), got)
			}
			if lo, hi := res.Bounds(0, 1, 95); lo != 130 || hi != 130 {
				t.Errorf("%s %s: total's 95%% interval is [%v, %v], want zero width at the lock", form.name, f.Ext(), lo, hi)
			}
			if lo, hi := res.Bounds(0, 0, 95); !(hi > lo) {
				t.Errorf("%s %s: total's interval in 2026-01 (not locked) is [%v, %v], want a width", form.name, f.Ext(), lo, hi)
			}
			rows := res.Report.Locks.Rows
			if len(rows) != 2 || rows[0].Period != "2026-02" || rows[0].Node != "total" || rows[0].Value != 130 {
				t.Errorf("%s %s: run.json's locks %+v", form.name, f.Ext(), rows)
			}
		}
	}
}

// TestLockRefusals checks that each lock no run can honour is an input
// error naming the lock table and what is wrong.
func TestLockRefusals(t *testing.T) {
	bs := lockFixture(t)
	for _, c := range []struct {
		name   string
		rows   []lockRow
		method string
		want   []string
	}{
		{"not a node", []lockRow{{"R9", "", "2026-01", 1}}, "", []string{"row 1", "region=R9", "not a node"}},
		{"set below an aggregated key", []lockRow{{"", "S1", "2026-01", 1}}, "", []string{"row 1", "store=S1", "not a node"}},
		{"outside the horizon", []lockRow{{"R1", "", "2026-05", 1}}, "", []string{"row 1", "2026-05", "outside the forecast periods 2026-01 to 2026-03"}},
		{"twice", []lockRow{{"R1", "", "2026-02-01", 1}, {"R1", "", "2026-02-20", 2}}, "", []string{"row 2", "region=R1", "twice", "rows 1 and 2"}},
		{"not a number", []lockRow{{"R1", "", "2026-02", math.NaN()}}, "", []string{"row 1", `column "value"`, "must be a number"}},
		{"closed and not zero", []lockRow{{"R2", "S4", "2026-02", 5}}, "", []string{"region=R2 store=S4", "closed", "cannot be locked to 5"}},
		{"parent against all its children", []lockRow{{"", "", "2026-03", 100}, {"R1", "", "2026-03", 60}, {"R2", "", "2026-03", 30}}, "",
			[]string{"2026-03", "total is locked to 100", "region=R1 (60)", "region=R2 (30)", "fix it at 90"}},
		{"parent below a locked child", []lockRow{{"", "", "2026-01", 50}, {"R1", "", "2026-01", 60}}, "",
			[]string{"2026-01", "total is locked to 50", "region=R1 (60)"}},
		{"below zero", []lockRow{{"R1", "S1", "2026-01", -3}}, "", []string{"region=R1 store=S1", "below zero"}},
		{"a method without weights", []lockRow{{"R1", "", "2026-01", 3}}, "bottom-up", []string{"mint", "bottom-up"}},
	} {
		path := writeLocks(t, c.rows, tableio.CSV)
		_, err := Reconcile(context.Background(), bs, ReconcileOptions{Reconcile: Reconciliation{Method: c.method, Locks: path}})
		if err == nil || !inputerr.Is(err) {
			t.Errorf("%s: got %v, want an input error", c.name, err)
			continue
		}
		var ie *inputerr.Error
		errors.As(err, &ie)
		if c.method == "" && !strings.Contains(err.Error(), path) {
			t.Errorf("%s: %q does not name the lock table", c.name, err)
		}
		for _, w := range c.want {
			if !strings.Contains(err.Error(), w) {
				t.Errorf("%s: %q does not say %q", c.name, err, w)
			}
		}
	}
}

// TestLockedReportMovesByLevel checks run.json's record of what the locks
// moved: per level, the mean absolute change of the unlocked forecasts
// from the reconcile without locks, recomputed here from both results.
func TestLockedReportMovesByLevel(t *testing.T) {
	bs := lockFixture(t)
	path := writeLocks(t, []lockRow{{"", "", "2026-01", 150}, {"R1", "", "2026-03", 40}}, tableio.CSV)
	locked, err := Reconcile(context.Background(), bs, ReconcileOptions{Reconcile: Reconciliation{Locks: path}})
	if err != nil {
		t.Fatal(err)
	}
	free, err := Reconcile(context.Background(), bs, ReconcileOptions{})
	if err != nil {
		t.Fatal(err)
	}
	st := locked.Structure
	for l, lv := range st.Levels {
		var sum float64
		var count int
		for _, i := range lv.Nodes {
			for k := 0; k < 3; k++ {
				if (i == 0 && k == 0) || (st.Label(i) == "region=R1" && k == 2) {
					continue
				}
				sum += math.Abs(locked.Solution.Forecast[i][k] - free.Solution.Forecast[i][k])
				count++
			}
		}
		mv := locked.Report.Locks.Moved[l]
		if mv.Level != lv.Name || mv.Forecasts != count || math.Abs(mv.MeanAbsChange-sum/float64(count)) > 1e-9*math.Max(1, sum) {
			t.Errorf("level %s: %+v, want %d forecasts moved %g on average", lv.Name, mv, count, sum/float64(count))
		}
	}
	if locked.Report.Locks.Moved[0].MeanAbsChange == 0 {
		t.Error("the locks moved nothing")
	}
	if got := locked.Report.Locks.Rows[0].Unlocked; got != free.Solution.Forecast[0][0] {
		t.Errorf("unlocked forecast of the total %v, the reconcile without locks gives %v", got, free.Solution.Forecast[0][0])
	}
}
