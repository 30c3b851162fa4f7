package engine

import (
	"math"
	"sort"
)

// Error attribution. Reconciled forecasts are coherent and so are the
// actuals (both are sums of bottom series), so an aggregate's error
// a − f is exactly the sum of its children's errors, for each way the
// aggregate splits (by region or by category, say, when chains cross).
// That identity lets the backtest say which children make up a parent's
// error, how much their errors cancel, and which nodes drive the error of
// every aggregate. Base forecasts are not coherent: for them the backtest
// reports the incoherence instead, base minus the sum of the children's
// base forecasts.

// Attribution is the error attribution of a backtest.
type Attribution struct {
	// Contributions: every coherent method, origin, step, aggregate and
	// child (over each split of the aggregate).
	Contributions []Contribution
	// Drivers rank, per coherent method, for every aggregate and every
	// finer level, the nodes under it by their absolute error summed over
	// origins and steps.
	Drivers []Driver
	// NodeScores are each node's MASE per method over every origin and
	// step, and the change from the base forecasts' MASE.
	NodeScores []NodeScore
	// Incoherence holds, per origin, step, aggregate and split, the base
	// forecast minus the sum of its children's base forecasts.
	Incoherence []Incoherence
}

// Contribution is child Child's part of the error of aggregate Parent
// (node indices of the origin's structure) at one origin and step.
type Contribution struct {
	Method       string
	Origin, Step int // Origin indexes BacktestResult.Origins; Step from 1
	Parent       int
	Child        int
	// Contribution is the child's error (actual − forecast); over one
	// split the contributions add up to ParentError.
	Contribution, ParentError float64
	// Share is the child's share of the absolute error of the split,
	// |e_c| / Σ|e_c'|.
	Share float64
	// Cancellation is 1 − |e_parent| / Σ|e_c'|: 0 when the children's
	// errors all have one sign, near 1 when they cancel out.
	Cancellation float64
}

// Driver is node Child's part in the error of Parent, a node any number
// of splits above it (the total, say, for a store's category). Parent and
// child are the glossary's one pair of names for a node and a node under
// it, as in the contributions and incoherence tables.
type Driver struct {
	Method                   string
	ParentLevel, ChildLevel  string
	Parent, Child            string // labels such as "region=North store=N01" (hierarchy.Label)
	AbsError, NetError       float64
	Share                    float64 // AbsError over the sum of AbsError of ChildLevel's nodes under Parent
	Rank                     int     // 1 = the largest absolute error
	parentLevelIdx, levelIdx int
	parent, child            int // node indices in the whole history's structure
}

// NodeScore is a node's accuracy under one method over every origin and
// step.
type NodeScore struct {
	Method string  `json:"method"`
	Level  string  `json:"level"`
	Node   string  `json:"node"`
	MASE   float64 `json:"mase"`
	// Change is MASE minus the base forecasts' MASE of the node (negative:
	// reconciliation helped); NaN without base.
	Change   float64 `json:"change_from_base"`
	levelIdx int
	node     int // node index in the whole history's structure
}

// Incoherence is base − Σ children's base of one aggregate and split.
type Incoherence struct {
	Origin, Step  int
	Parent        int
	SplitLevel    int // the children's level
	Base, Sum     float64
	ScaledAbs     float64 // |Base − Sum| over the parent's scale
	ParentLevelNm string
}

func attribute(res *BacktestResult) *Attribution {
	at := &Attribution{}
	h := res.Horizon
	full := res.Structure
	// Nodes are matched across origins by their index in the whole
	// history's structure (every origin's structure is part of it).
	type dkey struct {
		method    string
		anc, node int
	}
	type dsum struct {
		abs, net      float64
		ancLevel, lev int
	}
	drivers := map[dkey]*dsum{}
	type nkey struct {
		method string
		node   int
	}
	type nsum struct {
		ase   float64
		n     int
		level int
	}
	nodes := map[nkey]*nsum{}
	for o, org := range res.Origins {
		st := org.Structure
		toFull := st.IndexIn(full)
		for _, m := range res.Methods {
			for i, node := range st.Nodes {
				key := toFull[i]
				if org.Scored(i) {
					ns := nodes[nkey{m, key}]
					if ns == nil {
						ns = &nsum{level: node.Level}
						nodes[nkey{m, key}] = ns
					}
					for k := 0; k < h; k++ {
						ns.ase += math.Abs(org.Error(m, i, k)) / org.ScaleMAE[i]
						ns.n++
					}
				}
				if m == BaseMethod {
					continue
				}
				if i > 0 {
					ancestors := st.Ancestors(i)
					abs, net := 0.0, 0.0
					for k := 0; k < h; k++ {
						e := org.Error(m, i, k)
						abs += math.Abs(e)
						net += e
					}
					for _, a := range ancestors {
						d := drivers[dkey{m, toFull[a], key}]
						if d == nil {
							d = &dsum{ancLevel: st.Nodes[a].Level, lev: node.Level}
							drivers[dkey{m, toFull[a], key}] = d
						}
						d.abs += abs
						d.net += net
					}
				}
				for _, split := range st.Splits(i) {
					children := split.Nodes
					for k := 0; k < h; k++ {
						ep := org.Error(m, i, k)
						sumAbs := 0.0
						for _, c := range children {
							sumAbs += math.Abs(org.Error(m, c, k))
						}
						canc := 0.0
						if sumAbs > 0 {
							canc = 1 - math.Abs(ep)/sumAbs
						}
						for _, c := range children {
							ec := org.Error(m, c, k)
							share := math.NaN()
							if sumAbs > 0 {
								share = math.Abs(ec) / sumAbs
							}
							at.Contributions = append(at.Contributions, Contribution{Method: m, Origin: o, Step: k + 1,
								Parent: i, Child: c, Contribution: ec, ParentError: ep, Share: share, Cancellation: canc})
						}
					}
				}
			}
		}
		if base := org.Results[BaseMethod]; base != nil {
			f := base.Solution.Forecast
			for i := range st.Nodes {
				for _, split := range st.Splits(i) {
					children := split.Nodes
					for k := 0; k < h; k++ {
						sum := 0.0
						for _, c := range children {
							sum += f[c][k]
						}
						at.Incoherence = append(at.Incoherence, Incoherence{Origin: o, Step: k + 1, Parent: i,
							SplitLevel: split.Level, Base: f[i][k], Sum: sum,
							ScaledAbs: math.Abs(f[i][k]-sum) / org.ScaleMAE[i]})
					}
				}
			}
		}
	}

	// Rank drivers per method, parent and child level.
	type group struct {
		method     string
		anc, level int
	}
	for k, d := range drivers {
		at.Drivers = append(at.Drivers, Driver{Method: k.method, ParentLevel: full.Levels[d.ancLevel].Name,
			ChildLevel: full.Levels[d.lev].Name, Parent: full.Label(k.anc), Child: full.Label(k.node),
			AbsError: d.abs, NetError: d.net, parentLevelIdx: d.ancLevel, levelIdx: d.lev,
			parent: k.anc, child: k.node})
	}
	order := map[string]int{}
	for i, m := range res.Methods {
		order[m] = i
	}
	sort.Slice(at.Drivers, func(i, j int) bool {
		a, b := at.Drivers[i], at.Drivers[j]
		switch {
		case a.Method != b.Method:
			return order[a.Method] < order[b.Method]
		case a.parentLevelIdx != b.parentLevelIdx:
			return a.parentLevelIdx < b.parentLevelIdx
		case a.parent != b.parent:
			return a.parent < b.parent
		case a.levelIdx != b.levelIdx:
			return a.levelIdx < b.levelIdx
		case a.AbsError != b.AbsError:
			return a.AbsError > b.AbsError
		}
		return a.child < b.child
	})
	// Ranks and shares, summing in the sorted order so that the bytes do
	// not depend on map order.
	totals := map[group]float64{}
	for i := range at.Drivers {
		d := &at.Drivers[i]
		totals[group{d.Method, d.parent, d.levelIdx}] += d.AbsError
		d.Rank = 1
		if i > 0 {
			p := at.Drivers[i-1]
			if p.Method == d.Method && p.parent == d.parent && p.levelIdx == d.levelIdx {
				d.Rank = p.Rank + 1
			}
		}
	}
	for i := range at.Drivers {
		d := &at.Drivers[i]
		d.Share = math.NaN()
		if t := totals[group{d.Method, d.parent, d.levelIdx}]; t > 0 {
			d.Share = d.AbsError / t
		}
	}

	// Node scores and the change from base.
	for k, ns := range nodes {
		s := NodeScore{Method: k.method, Level: full.Levels[ns.level].Name, Node: full.Label(k.node),
			MASE: ns.ase / float64(ns.n), Change: math.NaN(), levelIdx: ns.level, node: k.node}
		if b := nodes[nkey{BaseMethod, k.node}]; b != nil && k.method != BaseMethod {
			s.Change = s.MASE - b.ase/float64(b.n)
		}
		at.NodeScores = append(at.NodeScores, s)
	}
	sort.Slice(at.NodeScores, func(i, j int) bool {
		a, b := at.NodeScores[i], at.NodeScores[j]
		switch {
		case a.Method != b.Method:
			return order[a.Method] < order[b.Method]
		case a.levelIdx != b.levelIdx:
			return a.levelIdx < b.levelIdx
		}
		return a.node < b.node
	})
	return at
}

// TopDrivers returns up to n drivers of the named parent (a label such
// as "total") at one child level under method, largest first.
func (at *Attribution) TopDrivers(method, parent, childLevel string, n int) []Driver {
	var out []Driver
	for _, d := range at.Drivers {
		if d.Method == method && d.Parent == parent && d.ChildLevel == childLevel && len(out) < n {
			out = append(out, d)
		}
	}
	return out
}

// Effects returns the n nodes where method helped most (most negative
// change from base) and the n where it hurt most.
func (at *Attribution) Effects(method string, n int) (helped, hurt []NodeScore) {
	var all []NodeScore
	for _, s := range at.NodeScores {
		if s.Method == method && !math.IsNaN(s.Change) {
			all = append(all, s)
		}
	}
	sort.SliceStable(all, func(i, j int) bool { return all[i].Change < all[j].Change })
	for i := 0; i < len(all) && i < n && all[i].Change < 0; i++ {
		helped = append(helped, all[i])
	}
	for i := len(all) - 1; i >= 0 && len(hurt) < n && all[i].Change > 0; i-- {
		hurt = append(hurt, all[i])
	}
	return helped, hurt
}
