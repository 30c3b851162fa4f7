package reconcile

import (
	"fmt"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// TestNonnegative checks the non-negative projection by its optimality
// conditions (Karush–Kuhn–Tucker for min ½bᵀPb − qᵀb, b ≥ 0: with
// g = P·b − q, b ≥ 0, g ≥ 0 where b = 0 and g = 0 where b > 0;
// Wickramasuriya et al. 2020, §3), on both solvers, and that it returns
// the unconstrained answer when that is already non-negative.
func TestNonnegative(t *testing.T) {
	st := grouped(t, 2, 2, 3)
	p := problemFor(st, 30, 2, 31)
	off := st.BottomOffset()
	// Push some bottom base forecasts well below zero.
	for j := 0; j < st.NumBottom(); j += 2 {
		p.Base[off+j][0] = -60
		p.Base[off+j][1] = -20
	}
	p.Nonnegative = true
	var first Solution
	for _, solver := range []Solver{SolverDense, SolverLarge} {
		p.Solver = solver
		sol, err := Projection{Cov: CovShrink}.Reconcile(p)
		if err != nil {
			t.Fatal(err)
		}
		checkCoherent(t, st, sol)
		errc, _ := p.errorCov()
		g, _ := newDenseProjector(st, errc)
		qp, _ := g.qp()
		zeros := 0
		for k := 0; k < 2; k++ {
			b := make([]float64, st.NumBottom())
			for j := range b {
				b[j] = sol.Bottom[j][k]
				if b[j] < 0 {
					t.Fatalf("bottom %d step %d negative: %g", j, k+1, b[j])
				}
			}
			q := qp.linear(mat.Col(nil, k, mat.NewDense(len(p.Base), 2, flatten(p.Base))))
			grad := make([]float64, len(b))
			qp.mul(grad, b)
			for j := range grad {
				grad[j] -= q[j]
				if b[j] == 0 {
					zeros++
					if grad[j] < -1e-8*(1+abs(q[j])) {
						t.Errorf("step %d: bound bottom %d has gradient %g < 0", k+1, j, grad[j])
					}
				} else if abs(grad[j]) > 1e-7*(1+abs(q[j])) {
					t.Errorf("step %d: free bottom %d has gradient %g ≠ 0", k+1, j, grad[j])
				}
			}
		}
		if zeros == 0 {
			t.Fatal("test does not exercise the constraint")
		}
		if solver == SolverDense {
			first = sol
		} else {
			for i := range sol.Forecast {
				for k := range sol.Forecast[i] {
					if relDiff(sol.Forecast[i][k], first.Forecast[i][k]) > 1e-7 {
						t.Errorf("%s: dense %g large %g", st.Label(i), first.Forecast[i][k], sol.Forecast[i][k])
					}
				}
			}
		}
	}
	// Already non-negative: identical to the unconstrained projection.
	q := problemFor(st, 30, 2, 31)
	q.Solver = SolverDense
	unc, _ := Projection{Cov: CovShrink}.Reconcile(q)
	q.Nonnegative = true
	nn, _ := Projection{Cov: CovShrink}.Reconcile(q)
	for i := range unc.Forecast {
		for k := range unc.Forecast[i] {
			if unc.Forecast[i][k] != nn.Forecast[i][k] {
				t.Fatalf("non-negative case changed: %g vs %g", unc.Forecast[i][k], nn.Forecast[i][k])
			}
		}
	}
	if _, err := (BottomUp{}).Reconcile(q); err == nil {
		t.Error("bottom-up accepted Nonnegative")
	}
}

func flatten(rows [][]float64) []float64 {
	var out []float64
	for _, r := range rows {
		out = append(out, r...)
	}
	return out
}

func abs(x float64) float64 {
	if x < 0 {
		return -x
	}
	return x
}

// TestNonnegativeLargeAgrees: at about 2,000 nodes, with bottom series
// pushed below zero at different steps, the large path's restricted
// solves (constraint form) give the dense path's non-negative answer.
func TestNonnegativeLargeAgrees(t *testing.T) {
	st := retail(t, 2, 3, 2, 4, 26) // 1,971 nodes, 1,248 bottom
	p := problemFor(st, 60, 3, 41)
	off := st.BottomOffset()
	for j := 0; j < st.NumBottom(); j += 7 {
		p.Base[off+j][j%3] = -40
	}
	p.Nonnegative = true
	d, l := denseAndLarge(t, Projection{Cov: CovShrink}, p)
	zeros := 0
	for j := range d.Bottom {
		for k, v := range d.Bottom[j] {
			if v == 0 {
				zeros++
			}
			if l.Bottom[j][k] < 0 {
				t.Fatalf("bottom %d step %d negative: %g", j, k+1, l.Bottom[j][k])
			}
		}
	}
	if zeros == 0 {
		t.Fatal("test does not exercise the constraint")
	}
	for i := range d.Forecast {
		for k := range d.Forecast[i] {
			if relDiff(l.Forecast[i][k], d.Forecast[i][k]) > 1e-7 {
				t.Errorf("%s step %d: dense %g large %g", st.Label(i), k+1, d.Forecast[i][k], l.Forecast[i][k])
			}
		}
	}
}

// TestLockedNonnegativeLargeAgrees: TestNonnegativeLargeAgrees with locks
// on the total (5% above its base), a state, a category and five items at
// zero at every step. The large path fixes the locked nodes in its
// restricted solves (with a coarse correction for the locked aggregates)
// and gets the locks' multipliers from W⁻¹(y − x); the dense path solves
// the Karush–Kuhn–Tucker system directly. They must agree to 1e-7. The
// comparison without locks is solved to comparisonTol, a relative
// residual over all constraints together: per node it came within 9e-6
// of the dense answer at aggregates and 2.4e-4 at single items, checked
// here at 1e-3.
func TestLockedNonnegativeLargeAgrees(t *testing.T) {
	st := retail(t, 2, 3, 2, 4, 26) // 1,971 nodes, 1,248 bottom
	p := problemFor(st, 60, 3, 41)
	off := st.BottomOffset()
	for j := 0; j < st.NumBottom(); j += 7 {
		p.Base[off+j][j%3] = -40
	}
	state, _ := st.Lookup([]string{"S0", "", "", "", ""})
	cat, _ := st.Lookup([]string{"", "", "C1", "", ""})
	for k := 0; k < 3; k++ {
		p.Locks = append(p.Locks, Lock{Node: 0, Step: k, Value: 1.05 * p.Base[0][k]},
			Lock{Node: state, Step: k, Value: p.Base[state][k]}, Lock{Node: cat, Step: k, Value: p.Base[cat][k]})
		for q := 0; q < 5; q++ {
			item, _ := st.Lookup([]string{"S1", "S1T2", "C0", "C0D3", fmt.Sprintf("C0D3I%d", q)})
			p.Locks = append(p.Locks, Lock{Node: item, Step: k})
		}
	}
	p.Nonnegative = true
	d, l := denseAndLarge(t, Projection{Cov: CovShrink}, p)
	for i := range d.Forecast {
		for k := range d.Forecast[i] {
			if relDiff(l.Forecast[i][k], d.Forecast[i][k]) > 1e-7 {
				t.Errorf("%s step %d: dense %g large %g", st.Label(i), k+1, d.Forecast[i][k], l.Forecast[i][k])
			}
			if relDiff(l.Unlocked[i][k], d.Unlocked[i][k]) > 1e-3 {
				t.Errorf("%s step %d without locks: dense %g large %g", st.Label(i), k+1, d.Unlocked[i][k], l.Unlocked[i][k])
			}
		}
	}
	for j := range l.Bottom {
		for k, v := range l.Bottom[j] {
			if v < 0 {
				t.Fatalf("bottom %d step %d negative: %g", j, k+1, v)
			}
		}
	}
	for _, lk := range p.Locks {
		if l.Forecast[lk.Node][lk.Step] != lk.Value {
			t.Errorf("%s step %d is %g, locked to %g", st.Label(lk.Node), lk.Step+1, l.Forecast[lk.Node][lk.Step], lk.Value)
		}
	}
}
