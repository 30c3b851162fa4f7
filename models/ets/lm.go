package ets

import (
	"math"
	"sync"

	"gonum.org/v1/gonum/floats"
)

// lmProblem is a bounded nonlinear least-squares problem: minimise Σ r_i(x)²
// over lo ≤ x ≤ hi. resid writes r(x) into r and reports false where x is
// outside the model's domain (a non-positive multiplicative state, say).
type lmProblem struct {
	n, p   int
	lo, hi []float64
	resid  func(x, r []float64) bool
}

// lmWork holds the buffers of levenbergMarquardt so repeated fits allocate
// nothing per iteration.
type lmWork struct {
	r, rt, jac   []float64 // residuals, trial residuals, n×p Jacobian (column-major)
	a, chol      []float64 // p×p normal matrix and its damped Cholesky factor
	g, d, xt, xh []float64
	free         []bool
}

// lmPool keeps lmWork buffers between fits: the automatic form search and
// the validation fit dozens of forms per series.
var lmPool = sync.Pool{New: func() any { return new(lmWork) }}

// getLMWork returns buffers for n residuals and p parameters from lmPool;
// putLMWork returns them. levenbergMarquardt writes every buffer before it
// reads it, so their old contents do not matter.
func getLMWork(n, p int) *lmWork {
	w := lmPool.Get().(*lmWork)
	size := func(s []float64, k int) []float64 {
		if cap(s) < k {
			return make([]float64, k)
		}
		return s[:k]
	}
	w.r, w.rt, w.jac = size(w.r, n), size(w.rt, n), size(w.jac, n*p)
	w.a, w.chol = size(w.a, p*p), size(w.chol, p*p)
	w.g, w.d, w.xt, w.xh = size(w.g, p), size(w.d, p), size(w.xt, p), size(w.xh, p)
	if cap(w.free) < p {
		w.free = make([]bool, p)
	}
	w.free = w.free[:p]
	return w
}

func putLMWork(w *lmWork) { lmPool.Put(w) }

func sumSq(r []float64) float64 {
	s := 0.0
	for _, v := range r {
		s += v * v
	}
	return s
}

// levenbergMarquardt minimises Σr² from x (overwritten with the result) by
// the Levenberg–Marquardt method (Levenberg 1944; Marquardt 1963, "An
// algorithm for least-squares estimation of nonlinear parameters", SIAM J.
// Appl. Math. 11:431–441) with Marquardt's diagonal scaling, a
// forward-difference Jacobian, and bounds handled by projection: a
// coordinate at a bound whose gradient points outward is held fixed for
// the iteration, and trial points are clipped to the box. It returns the
// final sum of squares, +Inf if x itself is infeasible.
func levenbergMarquardt(pr *lmProblem, w *lmWork, x []float64, maxIter int) float64 {
	n, p := pr.n, pr.p
	if !pr.resid(x, w.r) {
		return math.Inf(1)
	}
	f := sumSq(w.r)
	lambda := 1e-3
	for iter := 0; iter < maxIter; iter++ {
		// Jacobian by forward (or, at the upper bound, backward) differences.
		for j := 0; j < p; j++ {
			copy(w.xh, x)
			h := 1e-7 * math.Max(1, math.Abs(x[j]))
			if x[j]+h > pr.hi[j] {
				h = -h
			}
			w.xh[j] += h
			col := w.jac[j*n : (j+1)*n]
			if !pr.resid(w.xh, w.rt) {
				w.xh[j] = x[j] - h
				if !pr.resid(w.xh, w.rt) {
					for i := range col {
						col[i] = 0
					}
					continue
				}
				h = -h
			}
			for i := range col {
				col[i] = (w.rt[i] - w.r[i]) / h
			}
		}
		// Normal equations A = JᵀJ, g = Jᵀr.
		for j := 0; j < p; j++ {
			cj := w.jac[j*n : (j+1)*n]
			w.g[j] = floats.Dot(cj, w.r)
			for k := 0; k <= j; k++ {
				s := floats.Dot(cj, w.jac[k*n:(k+1)*n])
				w.a[j*p+k], w.a[k*p+j] = s, s
			}
		}
		anyFree := false
		for j := 0; j < p; j++ {
			w.free[j] = !((x[j] <= pr.lo[j] && w.g[j] > 0) || (x[j] >= pr.hi[j] && w.g[j] < 0)) && w.a[j*p+j] > 0
			anyFree = anyFree || w.free[j]
		}
		if !anyFree {
			break
		}
		accepted := false
		var ft float64
		for try := 0; try < 12; try++ {
			if !dampedSolve(w, p, lambda) {
				lambda *= 10
				continue
			}
			for j := range w.xt {
				w.xt[j] = math.Min(math.Max(x[j]+w.d[j], pr.lo[j]), pr.hi[j])
			}
			if pr.resid(w.xt, w.rt) {
				ft = sumSq(w.rt)
				if ft < f {
					accepted = true
					break
				}
			}
			lambda *= 10
		}
		if !accepted {
			break
		}
		copy(x, w.xt)
		copy(w.r, w.rt)
		rel := (f - ft) / math.Max(f, 1e-300)
		f = ft
		lambda = math.Max(lambda/10, 1e-10)
		// Stop when the log-likelihood, −n/2·ln Σr² + const, gains less
		// than 1e-6.
		if float64(n)/2*rel < 1e-6 {
			break
		}
	}
	return f
}

// dampedSolve solves (A + λ·diag(A)) d = −g over the free coordinates by
// Cholesky factorisation, setting d = 0 for held coordinates. It reports
// false if the damped matrix is not positive definite.
func dampedSolve(w *lmWork, p int, lambda float64) bool {
	l := w.chol
	for i := range l {
		l[i] = 0
	}
	for j := 0; j < p; j++ {
		if !w.free[j] {
			continue
		}
		for k := 0; k <= j; k++ {
			if !w.free[k] {
				continue
			}
			s := w.a[j*p+k]
			if k == j {
				s += lambda*w.a[j*p+j] + 1e-12
			}
			for i := 0; i < k; i++ {
				s -= l[j*p+i] * l[k*p+i]
			}
			if k == j {
				if s <= 0 {
					return false
				}
				l[j*p+j] = math.Sqrt(s)
			} else {
				l[j*p+k] = s / l[k*p+k]
			}
		}
	}
	// Forward then back substitution on the free coordinates.
	for j := 0; j < p; j++ {
		if !w.free[j] {
			w.d[j] = 0
			continue
		}
		s := -w.g[j]
		for i := 0; i < j; i++ {
			s -= l[j*p+i] * w.d[i]
		}
		w.d[j] = s / l[j*p+j]
	}
	for j := p - 1; j >= 0; j-- {
		if !w.free[j] {
			continue
		}
		s := w.d[j]
		for i := j + 1; i < p; i++ {
			s -= l[i*p+j] * w.d[i]
		}
		w.d[j] = s / l[j*p+j]
	}
	return true
}
