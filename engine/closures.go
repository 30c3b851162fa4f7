package engine

import (
	"math"

	"trueup/hierarchy"
	"trueup/reconcile"
)

// Closed stores are taken out of the future, not out of the past.
//
// A bottom series whose last row is before the panel's last period has
// closed. Its forecast is exactly zero, a known value rather than an
// estimate, so it must not take part in reconciliation (a projection would
// otherwise move some of an aggregate's forecast onto it, giving a closed
// store negative or positive sales). trueup therefore fits and reconciles
// the structure of the still-trading series:
//
//   - an aggregate's fitting history is the sum of its members that still
//     trade (like-for-like), so a closure does not appear as a fall in the
//     region's sales that the model would carry forward;
//   - reconciliation runs on the structure built from the open bottom
//     series only;
//   - closed nodes (every member closed) are still fitted on their own
//     history, for the models table, and are forecast as zero with zero
//     variance.

// closedBottoms reports which bottom series have closed.
func closedBottoms(bottom [][]float64) []bool {
	closed := make([]bool, len(bottom))
	for j, y := range bottom {
		_, last := span(y)
		closed[j] = last < len(y)-1
	}
	return closed
}

// fittingHistory returns, per node, the history a model is fitted to: the
// sum of the node's still-trading members, or, for a node whose members
// have all closed, its full history.
func fittingHistory(st *hierarchy.Structure, bottom [][]float64, closed []bool) [][]float64 {
	full := st.S.Aggregate(bottom)
	open := make([][]float64, len(bottom))
	any := false
	for j, y := range bottom {
		if closed[j] {
			open[j] = nanRow(len(y))
			any = true
		} else {
			open[j] = y
		}
	}
	if !any {
		return full
	}
	out := st.S.Aggregate(open)
	for i, y := range out {
		if first, _ := span(y); first < 0 {
			out[i] = full[i]
		}
	}
	return out
}

func nanRow(n int) []float64 {
	r := make([]float64, n)
	for i := range r {
		r[i] = math.NaN()
	}
	return r
}

// openPart is the structure of the still-trading bottom series and, for
// each of its nodes, the index of the same node in the full structure.
type openPart struct {
	st     *hierarchy.Structure
	toFull []int
}

// openStructure builds the reconciliation structure without the closed
// bottom series. With no closures it is the full structure itself.
func openStructure(full *hierarchy.Structure, closed []bool) (*openPart, error) {
	open := make([]bool, len(closed))
	for j, c := range closed {
		open[j] = !c
	}
	st, toFull, err := full.Sub(open)
	if err != nil {
		return nil, err
	}
	return &openPart{st: st, toFull: toFull}, nil
}

// rows selects the full-structure rows of the open structure's nodes.
func (op *openPart) rows(full [][]float64) [][]float64 {
	out := make([][]float64, len(op.toFull))
	for i, f := range op.toFull {
		out[i] = full[f]
	}
	return out
}

// fits selects the fits of the open structure's nodes.
func (op *openPart) fits(full []NodeFit) []NodeFit {
	out := make([]NodeFit, len(op.toFull))
	for i, f := range op.toFull {
		out[i] = full[f]
	}
	return out
}

// expand maps a solution on the open structure back to the full one:
// nodes outside it (closed) get zero forecasts and zero variance.
func (op *openPart) expand(full *hierarchy.Structure, sol reconcile.Solution, h int) reconcile.Solution {
	n := len(full.Nodes)
	out := reconcile.Solution{Notes: sol.Notes, Forecast: zeros(n, h), Bottom: zeros(full.NumBottom(), h)}
	if sol.Variance != nil {
		out.Variance = zeros(n, h)
	}
	if sol.Joint != nil {
		out.Joint = sol.Joint.Expand(op.toFull, n)
	}
	if sol.Unlocked != nil {
		out.Unlocked = zeros(n, h)
	}
	off := full.BottomOffset()
	for i, f := range op.toFull {
		copy(out.Forecast[f], sol.Forecast[i])
		if sol.Variance != nil {
			copy(out.Variance[f], sol.Variance[i])
		}
		if sol.Unlocked != nil {
			copy(out.Unlocked[f], sol.Unlocked[i])
		}
		if f >= off {
			copy(out.Bottom[f-off], sol.Forecast[i])
		}
	}
	return out
}

func zeros(n, h int) [][]float64 {
	out := make([][]float64, n)
	for i := range out {
		out[i] = make([]float64, h)
	}
	return out
}
