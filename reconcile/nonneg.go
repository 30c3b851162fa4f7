package reconcile

import (
	"fmt"
	"math"
	"sync"

	"gonum.org/v1/gonum/mat"
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
	// solveFree solves P_FF·x_F = rhs_F with x = 0 off the free set;
	// x0, when not nil, is a starting guess for iterative solvers.
	solveFree(free []bool, rhs, x0 []float64) ([]float64, error)
}

// nonnegative returns, column by column, the minimizer of the
// non-negative projection. A column whose unconstrained solution is
// already non-negative is returned unchanged. Otherwise it runs the
// active-set method of Lawson & Hanson (1974, Solving Least Squares
// Problems, ch. 23, algorithm NNLS) on the quadratic form, started from
// the free set of the unconstrained solution's positive entries; each
// step solves the projection restricted to the free bottom series, so
// the answer is exact to solver precision and satisfies the optimality
// conditions P·b − q ≥ 0 where b = 0.
func nonnegative(g projector, base *mat.Dense) (*mat.Dense, error) {
	unc, err := g.apply(base, solveTol)
	if err != nil {
		return nil, err
	}
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
	// Steps are independent: two workers, each with its own scratch, and
	// each step's answer written to its own column (deterministic).
	const workers = 2
	errs := make([]error, len(todo))
	cols := make([][]float64, len(todo))
	var wg sync.WaitGroup
	for w := 0; w < workers && w < len(todo); w++ {
		wg.Add(1)
		go func(w int) {
			defer wg.Done()
			qp, err := g.qp()
			for t := w; t < len(todo); t += workers {
				if err != nil {
					errs[t] = err
					continue
				}
				k := todo[t]
				cols[t], errs[t] = activeSet(qp, mat.Col(nil, k, base), mat.Col(nil, k, unc))
				if errs[t] != nil {
					errs[t] = fmt.Errorf("non-negative reconciliation, step %d: %w", k+1, errs[t])
				}
			}
		}(w)
	}
	wg.Wait()
	for t, k := range todo {
		if errs[t] != nil {
			return nil, errs[t]
		}
		unc.SetCol(k, cols[t])
	}
	return unc, nil
}

// activeSet is Lawson–Hanson NNLS generalized to a positive definite
// quadratic form (the gradient q − P·x replaces Aᵀ(y − A·x)).
func activeSet(qp qpProblem, y, start []float64) ([]float64, error) {
	m := len(start)
	q := qp.linear(y)
	scale := 0.0
	for _, v := range q {
		scale = math.Max(scale, math.Abs(v))
	}
	tol := 1e-10 * scale
	free := make([]bool, m)
	for j, v := range start {
		free[j] = v > 0
	}
	// Initial feasible point: drop non-positive entries until the
	// restricted optimum is positive on the free set.
	var x []float64
	guess := start
	for {
		s, err := qp.solveFree(free, q, guess)
		guess = s
		if err != nil {
			return nil, err
		}
		dropped := false
		for j := range s {
			if free[j] && s[j] <= 0 {
				free[j] = false
				dropped = true
			}
		}
		if !dropped {
			x = s
			break
		}
	}
	grad := make([]float64, m)
	for iter := 0; iter < 3*m+10; iter++ {
		qp.mul(grad, x)
		best, bj := tol, -1
		for j := range grad {
			grad[j] = q[j] - grad[j]
			if !free[j] && grad[j] > best {
				best, bj = grad[j], j
			}
		}
		if bj < 0 {
			for j := range x {
				if !free[j] {
					x[j] = 0
				}
			}
			return x, nil
		}
		free[bj] = true
		for {
			s, err := qp.solveFree(free, q, x)
			if err != nil {
				return nil, err
			}
			alpha := 1.0
			for j := range s {
				if free[j] && s[j] <= 0 {
					alpha = math.Min(alpha, x[j]/(x[j]-s[j]))
				}
			}
			if alpha >= 1 {
				x = s
				break
			}
			for j := range x {
				if free[j] {
					x[j] += alpha * (s[j] - x[j])
					if x[j] <= 0 {
						x[j], free[j] = 0, false
					}
				}
			}
		}
	}
	return nil, fmt.Errorf("active-set method did not finish in %d steps", 3*m+10)
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

func (q denseQP) solveFree(free []bool, rhs, _ []float64) ([]float64, error) {
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
