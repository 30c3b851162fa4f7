package reconcile

import (
	"math"
	"testing"
)

// TestBottomUp checks ỹ = S·b̂ (the definition) and the variance against
// the direct double sum var_i = Σ_{j,k∈i} c_j c_k W_jk over the sample
// covariance W1 of the residuals, with c_j = √(BaseVar_j/D_j) (the
// documented horizon scaling).
func TestBottomUp(t *testing.T) {
	st := grouped(t, 2, 3, 3)
	p := problemFor(st, 25, 4, 11)
	// One bottom series starts late: its missing residuals follow errCov's rule.
	for k := 0; k < 9; k++ {
		p.Residuals[st.BottomOffset()+2][k] = math.NaN()
	}
	sol, err := BottomUp{}.Reconcile(p)
	if err != nil {
		t.Fatal(err)
	}
	checkCoherent(t, st, sol)
	off := st.BottomOffset()
	w, _ := p.varianceCov()
	for i := range st.Nodes {
		for k := 0; k < 4; k++ {
			var want, v float64
			for _, j := range st.S.Row(i) {
				want += p.Base[off+j][k]
				cj := math.Sqrt(p.BaseVar[off+j][k] / w.D[off+j])
				for _, l := range st.S.Row(i) {
					cl := math.Sqrt(p.BaseVar[off+l][k] / w.D[off+l])
					v += cj * cl * w.at(off+j, off+l)
				}
			}
			if relDiff(sol.Forecast[i][k], want) > 1e-12 {
				t.Fatalf("%s: bottom-up %g, S·b̂ %g", st.Label(i), sol.Forecast[i][k], want)
			}
			if relDiff(sol.Variance[i][k], v) > 1e-10 {
				t.Fatalf("%s step %d: variance %g, direct sum %g", st.Label(i), k+1, sol.Variance[i][k], v)
			}
		}
	}
	// A bottom node's variance at step h is its own base variance.
	j := off + 4
	if relDiff(sol.Variance[j][3], p.BaseVar[j][3]) > 1e-12 {
		t.Errorf("bottom variance %g, base %g", sol.Variance[j][3], p.BaseVar[j][3])
	}
}

// TestQuantilesDoNotAdd: with a joint distribution the upper bound of a
// total is below the sum of its children's upper bounds whenever the
// children are not perfectly correlated (Panagiotelis et al. 2023, §2).
func TestQuantilesDoNotAdd(t *testing.T) {
	st := grouped(t, 1, 3, 2)
	p := problemFor(st, 30, 2, 5)
	sol, err := BottomUp{}.Reconcile(p)
	if err != nil {
		t.Fatal(err)
	}
	z := 1.6448536269514722 // 95% one-sided normal quantile (common practice)
	upper := func(i int) float64 { return sol.Forecast[i][1] + z*math.Sqrt(sol.Variance[i][1]) }
	var sum float64
	for j := 0; j < st.NumBottom(); j++ {
		sum += upper(st.BottomOffset() + j)
	}
	if !(upper(0) < sum-1e-9) {
		t.Errorf("upper bound of total %g, sum of bottom upper bounds %g: quantiles added up", upper(0), sum)
	}
}
