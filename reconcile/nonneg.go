package reconcile

import (
	"fmt"
	"math"
	"sync/atomic"

	"gonum.org/v1/gonum/mat"

	"trueup/internal/crash"
)

// qpProblem is the non-negative projection written in the bottom
// forecasts b: minimize ½·bᵀPb − qᵀb subject to b ≥ 0, where P = SᵀW⁻¹S
// and q = SᵀW⁻¹ŷ. Its minimizer is the coherent forecast S·b closest to ŷ
// in the W⁻¹ metric among those with non-negative bottom series
// (Wickramasuriya, Panagiotelis, Athanasopoulos & Hyndman 2020, eq. 5).
type qpProblem interface {
	// linear returns q = SᵀW⁻¹·y.
	linear(y []float64) []float64
	// mul sets dst = P·v.
	mul(dst, v []float64)
	// solveFree solves P_FF·x_F = rhs_F with x = 0 off the free set,
	// where rhs = linear(y); an iterative solver stops at relative
	// residual tol.
	solveFree(free []bool, rhs, y []float64, tol float64) ([]float64, error)
	// solveFreeLocked is solveFree subject also to the locks: the sums
	// of the bottom series of nodes equal values. It returns the
	// solution and the locks' Lagrange multipliers μ, with which
	// P·x − q + Cᵀμ = 0 on the free set.
	solveFreeLocked(free []bool, rhs, y []float64, tol float64, nodes []int, values []float64) ([]float64, []float64, error)
	// exact reports whether the solves are direct, so that tol does not
	// apply.
	exact() bool
}

// pivotTol is the relative residual of the restricted solves before the
// free set is found: choosing the free set needs only the signs of the
// solution and of the multipliers, and the solve that confirms it is
// refined to the tolerance asked for (from where the rough one stopped).
// On BenchmarkMinTRetailLocked it saves about a third of the
// conjugate-gradient iterations.
const pivotTol = 1e-6

// comparisonTol is the relative residual to which the forecasts without
// locks are solved under non-negativity. They are reported beside the
// locks (run.json, the report), never written as forecasts. At 1e-6 they
// cost about half a full solve and agree with an unlocked run's within
// 1e-5 at aggregates and 3e-4 at single items
// (TestLockedNonnegativeLargeAgrees).
const comparisonTol = 1e-6

// nonnegative returns, column by column, the minimizer of the
// non-negative projection, and with locks (nil for none) also the
// minimizer without them, for Solution.Unlocked (nil without locks). A
// column whose unconstrained solution (moved onto the step's locks) is
// already non-negative is returned unchanged. Otherwise it runs block
// principal pivoting (activeSet) on the quadratic form, started from the
// free set of the unconstrained solution's positive entries; each step
// solves the projection restricted to the free bottom series (and to the
// locks), so the answer is exact to solver precision and satisfies the
// optimality conditions.
func nonnegative(g projector, base *mat.Dense, locks *lockPlan) (bottom, unlocked *mat.Dense, err error) {
	unc, err := g.apply(base, solveTol)
	if err != nil {
		return nil, nil, err
	}
	if locks == nil {
		bottom, err = nonnegativeFrom(g, base, unc, nil, solveTol)
		return bottom, nil, err
	}
	locked := mat.DenseCopyOf(unc)
	locks.apply(locked)
	if bottom, err = nonnegativeFrom(g, base, locked, locks, solveTol); err != nil {
		return nil, nil, err
	}
	// Without locks a step is the same problem: only the steps with locks
	// are solved again.
	unlocked = mat.DenseCopyOf(bottom)
	m, _ := unc.Dims()
	col := make([]float64, m)
	for k, s := range locks.steps {
		if s != nil {
			unlocked.SetCol(k, mat.Col(col, k, unc))
		}
	}
	unlocked, err = nonnegativeFrom(g, base, unlocked, nil, comparisonTol)
	return bottom, unlocked, err
}

// nonnegativeFrom runs activeSet on the columns of the unconstrained
// solution unc that have a negative entry and replaces them (in place),
// solved to relative residual tol.
func nonnegativeFrom(g projector, base, unc *mat.Dense, locks *lockPlan, tol float64) (*mat.Dense, error) {
	m, h := unc.Dims()
	var todo []int
	for k := 0; k < h; k++ {
		for j := 0; j < m; j++ {
			if unc.At(j, k) < 0 {
				todo = append(todo, k)
				break
			}
		}
	}
	// Steps are independent: two workers, each with its own scratch,
	// taking the next step when done with one, and each step's answer
	// kept apart (deterministic).
	const workers = 2
	errs := make([]error, len(todo))
	cols := make([][]float64, len(todo))
	var next atomic.Int64
	var grp crash.Group
	for w := 0; w < workers && w < len(todo); w++ {
		grp.Go(func() {
			qp, err := g.qp()
			for t := int(next.Add(1)) - 1; t < len(todo); t = int(next.Add(1)) - 1 {
				if err != nil {
					errs[t] = err
					continue
				}
				k := todo[t]
				cols[t], errs[t] = activeSet(qp, mat.Col(nil, k, base), mat.Col(nil, k, unc), locks.equalities(k), tol)
				if errs[t] != nil {
					errs[t] = fmt.Errorf("non-negative reconciliation, step %d: %w", k+1, errs[t])
				}
			}
		})
	}
	grp.Wait()
	for t, k := range todo {
		if errs[t] != nil {
			return nil, errs[t]
		}
		unc.SetCol(k, cols[t])
	}
	return unc, nil
}

// activeSet solves the problem as the linear complementarity problem
// w = P·b − q ≥ 0, b ≥ 0, bᵀw = 0 by block principal pivoting (Júdice &
// Pires 1994, "A block principal pivoting algorithm for large-scale
// strictly monotone linear complementarity problems", Computers & OR
// 21:587–596; in the form of Kim & Park 2011, "Fast nonnegative matrix
// factorization: an active-set-like method and comparisons", SIAM J. Sci.
// Comput. 33:3261–3281, Alg. 2). Each step solves the projection
// restricted to the free set F (b = 0 off it), then moves every
// infeasible variable at once — a free one that came out negative, a bound
// one whose multiplier w_j is negative — instead of one per solve as the
// Lawson–Hanson method does. When the number of infeasible variables stops
// falling for three steps it moves only the one of largest index (the
// backup rule), which guarantees termination because P is positive
// definite. The answer is exact to solver precision; entries of b below
// zero by rounding are set to 0.
//
// With locks (eq, nil for none) each restricted solve also meets the
// locks C·b = c (equalities.solve) and the multiplier of a bound variable
// is w = P·b − q + Cᵀμ, μ the locks' multipliers: the optimality
// conditions of the problem with both kinds of constraint. The series
// under a lock of zero can only be zero; they are held there throughout.
//
// An iterative solver's restricted solves stop at pivotTol until a free
// set passes the check, then at tol (at least as tight); the check's
// thresholds follow the solve's tolerance.
func activeSet(qp qpProblem, y, start []float64, eq *equalities, tol float64) ([]float64, error) {
	m := len(start)
	q := qp.linear(y)
	scale := 0.0
	for _, v := range q {
		scale = math.Max(scale, math.Abs(v))
	}
	cur := tol
	if !qp.exact() {
		cur = math.Max(tol, pivotTol)
	}
	free := make([]bool, m)
	for j, v := range start {
		free[j] = v > 0
	}
	// A lock of zero holds non-negative series at zero: they are bound
	// from the start and stay so (flipping them on rounding noise would
	// only cycle).
	var zero []bool
	if eq != nil {
		zero = eq.zeroed(m)
		for j, z := range zero {
			free[j] = free[j] && !z
		}
	}
	x := start
	w := make([]float64, m)
	fewest, backup := m+1, 3
	var infeasible []int
	for iter := 0; iter < 3*m+10; iter++ {
		var s, mu []float64
		var err error
		if eq == nil {
			s, err = qp.solveFree(free, q, y, cur)
		} else {
			var freed bool
			if s, mu, freed, err = eq.solve(qp, free, q, y, cur); freed {
				continue // a lock had no free series left: some were freed
			}
		}
		if err != nil {
			return nil, err
		}
		x = s
		qp.mul(w, x)
		if eq != nil {
			eq.addMultipliers(w, mu)
		}
		xscale := 0.0
		for j := range x {
			if free[j] {
				xscale = math.Max(xscale, math.Abs(x[j]))
			}
		}
		// Thresholds for rounding: 1e-12 of the solution and 1e-10 of
		// q at the forecasts' tolerance, as much looser as the solve.
		slack := math.Max(1, cur/solveTol)
		infeasible = infeasible[:0]
		for j := range x {
			if zero != nil && zero[j] {
				continue
			}
			if free[j] && x[j] < -1e-12*slack*xscale || !free[j] && w[j]-q[j] < -1e-10*slack*scale {
				infeasible = append(infeasible, j)
			}
		}
		if len(infeasible) == 0 && cur > tol {
			cur = tol // confirm the free set at the tolerance asked for
			continue
		}
		if len(infeasible) == 0 {
			for j := range x {
				if !free[j] || x[j] < 0 {
					x[j] = 0
				}
			}
			return x, nil
		}
		switch {
		case len(infeasible) < fewest:
			fewest, backup = len(infeasible), 3
		case backup > 0:
			backup--
		default:
			infeasible = infeasible[len(infeasible)-1:]
		}
		for _, j := range infeasible {
			free[j] = !free[j]
		}
	}
	return nil, fmt.Errorf("block principal pivoting did not finish in %d steps", 3*m+10)
}

// qp implements projector for the dense path.
func (d *denseProjector) qp() (qpProblem, error) { return denseQP{d}, nil }

type denseQP struct{ d *denseProjector }

func (q denseQP) linear(y []float64) []float64 {
	out := make([]float64, q.d.st.NumBottom())
	mat.NewVecDense(len(out), out).MulVec(q.d.sw.T(), mat.NewVecDense(len(y), y))
	return out
}

func (q denseQP) mul(dst, v []float64) {
	mat.NewVecDense(len(dst), dst).MulVec(q.d.p, mat.NewVecDense(len(v), v))
}

// solveFreeLocked solves the restricted problem with the locks by its
// Karush–Kuhn–Tucker system [P_FF C_Fᵀ; C_F 0]·[x_F; μ] = [q_F; c].
func (denseQP) exact() bool { return true }

func (q denseQP) solveFreeLocked(free []bool, rhs, _ []float64, _ float64, nodes []int, values []float64) ([]float64, []float64, error) {
	var idx []int
	pos := make([]int, len(free))
	for j, f := range free {
		pos[j] = -1
		if f {
			pos[j] = len(idx)
			idx = append(idx, j)
		}
	}
	nf, L := len(idx), len(nodes)
	kkt := mat.NewDense(nf+L, nf+L, nil)
	b := mat.NewVecDense(nf+L, nil)
	for a, i := range idx {
		b.SetVec(a, rhs[i])
		for c, j := range idx {
			kkt.Set(a, c, q.d.p.At(i, j))
		}
	}
	for l, node := range nodes {
		b.SetVec(nf+l, values[l])
		for _, j := range q.d.st.S.Row(node) {
			if a := pos[j]; a >= 0 {
				kkt.Set(a, nf+l, 1)
				kkt.Set(nf+l, a, 1)
			}
		}
	}
	var sol mat.VecDense
	if err := sol.SolveVec(kkt, b); err != nil {
		return nil, nil, fmt.Errorf("restricted problem with locks: %w", err)
	}
	out := make([]float64, len(free))
	for a, i := range idx {
		out[i] = sol.AtVec(a)
	}
	mu := make([]float64, L)
	for l := range mu {
		mu[l] = sol.AtVec(nf + l)
	}
	return out, mu, nil
}

func (q denseQP) solveFree(free []bool, rhs, _ []float64, _ float64) ([]float64, error) {
	var idx []int
	for j, f := range free {
		if f {
			idx = append(idx, j)
		}
	}
	out := make([]float64, len(free))
	if len(idx) == 0 {
		return out, nil
	}
	sub := mat.NewSymDense(len(idx), nil)
	b := mat.NewVecDense(len(idx), nil)
	for a, i := range idx {
		b.SetVec(a, rhs[i])
		for c := a; c < len(idx); c++ {
			sub.SetSym(a, c, q.d.p.At(i, idx[c]))
		}
	}
	var ch mat.Cholesky
	if !ch.Factorize(sub) {
		return nil, fmt.Errorf("restricted SᵀW⁻¹S not positive definite")
	}
	var x mat.VecDense
	if err := ch.SolveVecTo(&x, b); err != nil {
		return nil, err
	}
	for a, i := range idx {
		out[i] = x.AtVec(a)
	}
	return out, nil
}
