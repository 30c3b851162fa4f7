// Package reconcile turns base forecasts of every node of a grouped
// structure into coherent forecasts, in which every aggregate equals the
// sum of its parts, and attaches coherent prediction intervals.
package reconcile

import "trueup/hierarchy"

// Problem is what a reconciliation method works on. Rows of every matrix
// follow hierarchy.Structure.Nodes (n rows); bottom nodes are the last m.
type Problem struct {
	Structure *hierarchy.Structure
	// Base holds base forecasts, n rows × h steps.
	Base [][]float64
	// BaseVar holds base forecast-error variances, n × h (may be nil for
	// methods that do not need them).
	BaseVar [][]float64
	// Residuals holds in-sample one-step residuals, n rows × T periods, NaN
	// where a node has no residual (before it existed). May be nil.
	Residuals [][]float64
	// History holds the observed node series, n × T, NaN before a node
	// existed. Used by the top-down methods. May be nil.
	History [][]float64
}

// Solution is a coherent forecast.
type Solution struct {
	// Bottom holds the reconciled bottom forecasts, m × h.
	Bottom [][]float64
	// Forecast holds S·Bottom, n × h: coherent by construction.
	Forecast [][]float64
	// Notes records method facts worth keeping in run.json (such as the
	// shrinkage intensity λ), keyed by name.
	Notes map[string]float64
}

// Method is one reconciliation method.
type Method interface {
	// Name is the value of --method that selects it.
	Name() string
	Reconcile(p Problem) (Solution, error)
}

// coherent completes a solution from its bottom forecasts.
func coherent(st *hierarchy.Structure, bottom [][]float64) Solution {
	n := len(st.Nodes)
	h := 0
	if len(bottom) > 0 {
		h = len(bottom[0])
	}
	_, m := st.S.Dims()
	out := make([][]float64, n)
	for i := range out {
		out[i] = make([]float64, h)
	}
	b := make([]float64, m)
	y := make([]float64, n)
	for k := 0; k < h; k++ {
		for j := 0; j < m; j++ {
			b[j] = bottom[j][k]
		}
		st.S.MulVec(y, b)
		for i := 0; i < n; i++ {
			out[i][k] = y[i]
		}
	}
	return Solution{Bottom: bottom, Forecast: out}
}
