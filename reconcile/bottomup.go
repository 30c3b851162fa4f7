package reconcile

import "trueup/inputerr"

// BottomUp keeps the bottom-level base forecasts and adds them up:
// ỹ = S·b̂ (common practice; see e.g. Hyndman & Athanasopoulos, Forecasting:
// Principles and Practice, 3rd ed., §11.2). Its variance is that of the
// bottom errors added up: for node i,
//
//	var_i = Σ_{j,k∈i} c_j c_k W_jk = (1/T) Σ_t (Σ_{j∈i} c_j √D_j x_tj)²
//
// with W the sample covariance of the bottom residuals (no missing
// residuals; see Solution.Variance), computed in O(nnz(S)·T) per step.
type BottomUp struct{}

var _ Method = BottomUp{}

// Name implements Method.
func (BottomUp) Name() string { return "bottom-up" }

// Reconcile implements Method.
func (BottomUp) Reconcile(p Problem) (Solution, error) {
	_, m, h, err := p.dims()
	if err != nil {
		return Solution{}, err
	}
	if err := refuseLocks(&p, "bottom-up"); err != nil {
		return Solution{}, err
	}
	if p.Nonnegative {
		return Solution{}, inputerr.ForOption("Nonnegative", "non-negative reconciliation applies to %s only (bottom-up keeps the bottom base forecasts)", nonNegativeOnly())
	}
	st := p.Structure
	prop := newRows(m, h)
	for j := range prop {
		for k := range prop[j] {
			prop[j][k] = 1
		}
	}
	return newSplitPlan(st, len(st.Levels)-1).solve(&p, prop, h)
}
