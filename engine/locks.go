package engine

import (
	"errors"
	"fmt"
	"math"
	"sort"
	"strings"

	"trueup/hierarchy"
	"trueup/inputerr"
	"trueup/reconcile"
	"trueup/tableio"
)

// Locks: forecasts that planners fix (a finance target for the total, a
// category manager's number, a store known to close as zero) and that
// reconciliation must reproduce exactly, reconciling every other node
// around them (reconcile.Lock).
//
// The lock table has the key columns of the run (empty or null where the
// node adds a column up, as in the base table trueup reconcile reads), a
// "period" column read by the one period reader (labels, dates,
// timestamps, Parquet DATE; a date locks the forecast period that holds
// it) and a "value" column.

// LockValueColumn is the column of the lock table holding the locked
// value; LockPeriodColumn the one holding its period.
const (
	LockValueColumn  = "value"
	LockPeriodColumn = "period"
)

// lockedNode is a lock as read: the node in the full structure, the step,
// the value, and the table row for messages.
type lockedNode struct {
	reconcile.Lock
	row int
}

// readLocks reads the lock table at path for the structure st and the h
// forecast periods from first. Every lock must name a node of st and a
// forecast period, once, with a finite value.
func readLocks(path string, st *hierarchy.Structure, first tableio.Period, h int) ([]lockedNode, error) {
	t, err := tableio.ReadTable(path, "")
	if err != nil {
		return nil, err
	}
	nt, err := newNodeTable(path, t, st.Attrs, LockValueColumn)
	if err != nil {
		return nil, err
	}
	periods := nt.period // read by the sales table's period reader (newNodeTable)
	vc := t.Columns[nt.columns[LockValueColumn]]
	key := make([]string, len(st.Attrs))
	seen := map[[2]int]int{}
	out := make([]lockedNode, 0, nt.rows)
	last := first.Next(h - 1)
	for r := 0; r < nt.rows; r++ {
		for a := range key {
			key[a] = nt.values[a][nt.codes[a][r]]
		}
		i, ok := st.Lookup(key)
		if !ok {
			return nil, nt.rowError(r, "", "%s is not a node of the structure (no bottom series has that key, or a key is set below an aggregated one)", nt.rowLabel(r))
		}
		p, err := periods[r].Coarsen(first.Grain)
		if err != nil {
			return nil, nt.rowError(r, LockPeriodColumn, "period %s cannot be placed among the forecast's %s periods: %v", periods[r], first.Grain, err)
		}
		step := p.Index - first.Index
		if step < 0 || step >= h {
			return nil, nt.rowError(r, LockPeriodColumn, "%s is locked at %s, outside the forecast periods %s to %s", st.Label(i), p, first, last)
		}
		v, null, err := cellFloat(vc, r)
		if err != nil {
			return nil, nt.rowError(r, LockValueColumn, "%v", err)
		}
		if null || math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, nt.rowError(r, LockValueColumn, "the lock of %s at %s is %s; a lock must be a number", st.Label(i), p, describe(v, null))
		}
		if prev, dup := seen[[2]int{i, step}]; dup {
			return nil, nt.rowError(r, "", "%s is locked at %s twice (rows %d and %d)", st.Label(i), p, prev+1, r+1)
		}
		seen[[2]int{i, step}] = r
		out = append(out, lockedNode{Lock: reconcile.Lock{Node: i, Step: step, Value: v}, row: r})
	}
	sort.Slice(out, func(a, b int) bool {
		if out[a].Step != out[b].Step {
			return out[a].Step < out[b].Step
		}
		return out[a].Node < out[b].Node
	})
	return out, nil
}

// onTrading maps locks of the full structure onto the still-trading one
// (openPart). A node whose every bottom series has closed is forecast as
// zero: a lock of zero there already holds and is left out, any other is
// an input error.
func onTrading(path string, locks []lockedNode, st *hierarchy.Structure, trading *openPart, first tableio.Period) ([]reconcile.Lock, error) {
	index := make(map[int]int, len(trading.toFull))
	for i, f := range trading.toFull {
		index[f] = i
	}
	var out []reconcile.Lock
	for _, l := range locks {
		i, open := index[l.Node]
		if !open {
			if l.Value != 0 {
				return nil, &inputerr.Error{File: path, Row: l.row + 1, Column: LockValueColumn,
					Msg: fmt.Sprintf("%s has closed (every series under it stops before the forecast) and is forecast as zero; it cannot be locked to %g at %s", st.Label(l.Node), l.Value, first.Next(l.Step))}
			}
			continue
		}
		out = append(out, reconcile.Lock{Node: i, Step: l.Step, Value: l.Value})
	}
	return out, nil
}

// prepareLocks reads the lock table of rc (none when rc.Locks is empty)
// and checks it against the method and the non-negativity constraint
// before any fitting, so that a wrong lock costs no fitting time.
func prepareLocks(rc Reconciliation, method reconcile.Method, nonneg bool, st *hierarchy.Structure, trading *openPart,
	first tableio.Period, h int) ([]lockedNode, []reconcile.Lock, error) {
	if rc.Locks == "" {
		return nil, nil, nil
	}
	if info, _ := reconcile.LookupMethod(method.Name()); !info.Locks {
		return nil, nil, inputerr.ForOption("Locks", "locked forecasts need a method that reconciles around them (%s); %s has no weights to move the other nodes by", lockMethods(), method.Name())
	}
	locks, err := readLocks(rc.Locks, st, first, h)
	if err != nil {
		return nil, nil, err
	}
	onOpen, err := onTrading(rc.Locks, locks, st, trading, first)
	if err != nil {
		return nil, nil, err
	}
	if nonneg {
		if err := reconcile.CheckNonnegativeLocks(trading.st, onOpen, func(k int) string { return first.Next(k).String() }); err != nil {
			return nil, nil, &inputerr.Error{File: rc.Locks, Err: err}
		}
	}
	return locks, onOpen, nil
}

// lockMethods names the methods that take locks, from the table of
// methods.
func lockMethods() string {
	var names []string
	for _, m := range reconcile.Methods() {
		if m.Locks {
			names = append(names, m.Name)
		}
	}
	return strings.Join(names, ", ")
}

// LocksReport is run.json's record of the locks: each lock, and how far
// the locks moved the other nodes of each level from the forecasts the
// same method gives without them.
type LocksReport struct {
	Path   string       `json:"path"`
	SHA256 string       `json:"sha256"`
	Rows   []LockRecord `json:"rows"`
	// Moved has one entry per level.
	Moved []LevelMove `json:"moved_by_level"`
}

// LockRecord is one lock.
type LockRecord struct {
	// Node is the node's label (hierarchy.Structure.Label) and Key its
	// key columns that are set.
	Node   string            `json:"node"`
	Key    map[string]string `json:"key"`
	Period string            `json:"period"`
	Value  float64           `json:"value"`
	// Unlocked is the node's forecast by the same method without locks.
	Unlocked float64 `json:"unlocked_forecast"`
}

// LevelMove is how far the locks moved the unlocked nodes of one level,
// over every forecast period: the mean and largest absolute change from
// the forecast without locks, and the total change relative to the total
// absolute forecast without locks.
type LevelMove struct {
	Level         string  `json:"level"`
	Forecasts     int     `json:"forecasts"` // node-periods not locked
	MeanAbsChange float64 `json:"mean_abs_change"`
	RelChange     float64 `json:"relative_change"`
	MaxAbsChange  float64 `json:"max_abs_change"`
	MaxNode       string  `json:"max_node"`
	MaxPeriod     string  `json:"max_period"`
}

// locksReport describes the locks of a result.
func locksReport(path string, locks []lockedNode, st *hierarchy.Structure, sol reconcile.Solution, first tableio.Period) (*LocksReport, error) {
	sum, err := fileSHA256(path)
	if err != nil {
		return nil, err
	}
	rep := &LocksReport{Path: path, SHA256: sum, Rows: []LockRecord{}}
	h := 0
	if len(sol.Forecast) > 0 {
		h = len(sol.Forecast[0])
	}
	locked := make(map[[2]int]bool, len(locks))
	for _, l := range locks {
		locked[[2]int{l.Node, l.Step}] = true
		key := map[string]string{}
		for a, v := range st.Nodes[l.Node].Key {
			if v != "" {
				key[st.Attrs[a]] = v
			}
		}
		rep.Rows = append(rep.Rows, LockRecord{Node: st.Label(l.Node), Key: key, Period: first.Next(l.Step).String(),
			Value: l.Value, Unlocked: sol.Unlocked[l.Node][l.Step]})
	}
	for _, lv := range st.Levels {
		mv := LevelMove{Level: lv.Name}
		var change, base float64
		for _, i := range lv.Nodes {
			for k := 0; k < h; k++ {
				if locked[[2]int{i, k}] {
					continue
				}
				d := math.Abs(sol.Forecast[i][k] - sol.Unlocked[i][k])
				mv.Forecasts++
				change += d
				base += math.Abs(sol.Unlocked[i][k])
				if d > mv.MaxAbsChange {
					mv.MaxAbsChange, mv.MaxNode, mv.MaxPeriod = d, st.Label(i), first.Next(k).String()
				}
			}
		}
		if mv.Forecasts > 0 {
			mv.MeanAbsChange = change / float64(mv.Forecasts)
		}
		if base > 0 {
			mv.RelChange = change / base
		}
		rep.Moved = append(rep.Moved, mv)
	}
	return rep, nil
}

// recordLocks keeps the locks on the result and describes them in rep
// (run.json's "locks" and the lock table among the options).
func (r *Result) recordLocks(rep *RunReport, rc Reconciliation, locks []lockedNode) error {
	if rc.Locks == "" {
		return nil
	}
	r.Locks = make([]reconcile.Lock, len(locks))
	for q, l := range locks {
		r.Locks[q] = l.Lock
	}
	lr, err := locksReport(rc.Locks, locks, r.Structure, r.Solution, r.ForecastPeriod(0))
	if err != nil {
		return err
	}
	rep.Locks = lr
	rep.Options["locks"] = rc.Locks
	return nil
}

// lockError names the lock table in a reconciliation's input error about
// locks (contradictory locks are found while reconciling).
func lockError(rc Reconciliation, err error) error {
	if rc.Locks == "" || !inputerr.Is(err) {
		return err
	}
	var e *inputerr.Error
	if errors.As(err, &e) && e.File == "" && strings.Contains(e.Error(), "lock") {
		return &inputerr.Error{File: rc.Locks, Err: err}
	}
	return err
}
