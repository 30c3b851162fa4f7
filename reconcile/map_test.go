package reconcile

import (
	"math"
	"testing"
)

// TestMapIsTheProjection: the projection's map, set up once, gives the
// forecasts Reconcile gives for the same base columns, on the dense and
// the large path, for every covariance.
func TestMapIsTheProjection(t *testing.T) {
	st := retail(t, 2, 2, 2, 3, 10)
	p := problemFor(st, 60, 5, 1)
	p.BaseVar = nil
	for _, solver := range []Solver{SolverDense, SolverLarge} {
		for _, cov := range []Covariance{CovShrink, CovVariance, CovStructural} {
			p.Solver = solver
			want, err := Projection{Cov: cov}.Reconcile(p)
			if err != nil {
				t.Fatal(err)
			}
			apply, err := Projection{Cov: cov}.Map(Problem{Structure: st, Residuals: p.Residuals, Solver: solver})
			if err != nil {
				t.Fatal(err)
			}
			got, err := apply(p.Base)
			if err != nil {
				t.Fatal(err)
			}
			for i := range got {
				for k := range got[i] {
					if d := math.Abs(got[i][k] - want.Forecast[i][k]); d > 1e-9*math.Max(1, math.Abs(want.Forecast[i][k])) {
						t.Fatalf("solver %d, %s: node %d step %d: map %g, Reconcile %g", solver, cov, i, k+1, got[i][k], want.Forecast[i][k])
					}
				}
			}
		}
	}
}
