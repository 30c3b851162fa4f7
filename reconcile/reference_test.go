package reconcile

import (
	"encoding/json"
	"os"
	"testing"

	"trueup/hierarchy"
)

// TestAgainstR compares with values computed by R 4.2.2 (Debian
// r-base-core, base R only) from the published formulas with dense
// matrices: fixtures/reference/reconcile/mint.R, output in mint.json. The
// structure is region × category (9 nodes), T = 10 residuals.
func TestAgainstR(t *testing.T) {
	data, err := os.ReadFile("../fixtures/reference/reconcile/mint.json")
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Residuals [][]float64
		Base      []float64
		Lambda    float64
		Identity  struct{ Forecast, Variance []float64 }
		Structural,
		Variance,
		Shrink struct{ Forecast, Variance []float64 }
	}
	if err := json.Unmarshal(data, &ref); err != nil {
		t.Fatal(err)
	}
	st, err := hierarchy.Build([]hierarchy.Chain{{"region"}, {"category"}},
		[][]string{{"R1", "C1"}, {"R1", "C2"}, {"R2", "C1"}, {"R2", "C2"}})
	if err != nil {
		t.Fatal(err)
	}
	// The R script's S, row by row in trueup's node order.
	wantRows := [][]int{{0, 1, 2, 3}, {0, 2}, {1, 3}, {0, 1}, {2, 3}, {0}, {1}, {2}, {3}}
	for i, row := range wantRows {
		got := st.S.Row(i)
		if len(got) != len(row) {
			t.Fatalf("node %s: S row %v, R script has %v", st.Label(i), got, row)
		}
		for k := range row {
			if got[k] != row[k] {
				t.Fatalf("node %s: S row %v, R script has %v", st.Label(i), got, row)
			}
		}
	}
	n := len(st.Nodes)
	p := Problem{Structure: st, Residuals: ref.Residuals, Base: make([][]float64, n), BaseVar: make([][]float64, n)}
	w, err := p.errorCov()
	if err != nil {
		t.Fatal(err)
	}
	if relDiff(w.lambda, ref.Lambda) > 1e-12 {
		t.Errorf("λ = %.17g, R %.17g", w.lambda, ref.Lambda)
	}
	for i := range p.Base {
		p.Base[i] = []float64{ref.Base[i]}
		p.BaseVar[i] = []float64{w.D[i]} // one step: W_1 = W
	}
	for _, tc := range []struct {
		cov      Covariance
		fc, vari []float64
	}{
		{CovIdentity, ref.Identity.Forecast, ref.Identity.Variance},
		{CovStructural, ref.Structural.Forecast, ref.Structural.Variance},
		{CovVariance, ref.Variance.Forecast, ref.Variance.Variance},
		{CovShrink, ref.Shrink.Forecast, ref.Shrink.Variance},
	} {
		for _, solver := range []Solver{SolverDense, SolverLarge} {
			p.Solver = solver
			sol, err := Projection{Cov: tc.cov}.Reconcile(p)
			if err != nil {
				t.Fatal(err)
			}
			for i := range st.Nodes {
				if relDiff(sol.Forecast[i][0], tc.fc[i]) > 1e-9 {
					t.Errorf("%s solver %d %s: forecast %.15g, R %.15g", tc.cov, solver, st.Label(i), sol.Forecast[i][0], tc.fc[i])
				}
				if solver == SolverDense && relDiff(sol.Variance[i][0], tc.vari[i]) > 1e-9 {
					t.Errorf("%s %s: variance %.15g, R %.15g", tc.cov, st.Label(i), sol.Variance[i][0], tc.vari[i])
				}
			}
		}
	}
}
