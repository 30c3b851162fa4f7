package reconcile

import (
	"math"
	"testing"
)

// TestMapIsTheProjection: the projection's map, set up once, gives the
// forecasts Reconcile gives for the same base columns, on the dense and
// the large path, for every covariance: to 1e-9 at Reconcile's own
// solver tolerance, and to 1e-4 at the looser one bootstrap draws use.
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
			for _, c := range []struct{ tol, agree float64 }{{solveTol, 1e-9}, {1e-6, 1e-4}} {
				apply, err := Projection{Cov: cov}.Map(Problem{Structure: st, Residuals: p.Residuals, Solver: solver}, c.tol)
				if err != nil {
					t.Fatal(err)
				}
				got, err := apply(p.Base)
				if err != nil {
					t.Fatal(err)
				}
				for i := range got {
					for k := range got[i] {
						if d := math.Abs(got[i][k] - want.Forecast[i][k]); d > c.agree*math.Max(1, math.Abs(want.Forecast[i][k])) {
							t.Fatalf("solver %d, %s, tolerance %g: node %d step %d: map %g, Reconcile %g", solver, cov, c.tol, i, k+1, got[i][k], want.Forecast[i][k])
						}
					}
				}
			}
		}
	}
}
