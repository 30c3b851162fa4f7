package numeric

import (
	"errors"
	"math"
)

// ErrNotStable reports that a Lyapunov equation has no bounded solution
// because the transition matrix has an eigenvalue on or outside the unit
// circle (as far as the iteration can tell).
var ErrNotStable = errors.New("numeric: transition matrix is not stable")

// Lyapunov solves the discrete Lyapunov equation P = A P Aᵀ + Q for the
// n×n matrices A and Q (row-major, Q symmetric) and writes P into dst.
// That P is the stationary covariance of the state of x_{t+1} = A x_t + η_t
// with Var(η_t) = Q.
//
// It uses the doubling algorithm (Smith 1968; Anderson & Moore 1979, §6.7):
// P_{k+1} = P_k + A_k P_k A_kᵀ, A_{k+1} = A_k², which after k steps has
// summed 2^k terms of the series Σ A^j Q (Aᵀ)^j. Each step costs three n×n
// products, so the solve is O(n³ log(1/(1−ρ))) for spectral radius ρ, far
// cheaper than the n²×n² Kronecker system. work must have length ≥ 3n².
// A and Q are not modified.
func Lyapunov(dst, a, q []float64, n int, work []float64) error {
	if len(dst) < n*n || len(a) < n*n || len(q) < n*n || len(work) < 3*n*n {
		panic("numeric: Lyapunov slice too short")
	}
	ak := work[:n*n]
	t := work[n*n : 2*n*n]
	u := work[2*n*n : 3*n*n]
	copy(ak, a[:n*n])
	copy(dst, q[:n*n])
	const maxIter = 60
	for it := 0; it < maxIter; it++ {
		// t = A_k P_k, u = t A_kᵀ.
		matMul(t, ak, dst, n)
		matMulT(u, t, ak, n)
		var inc, size float64
		for i := 0; i < n*n; i++ {
			inc = math.Max(inc, math.Abs(u[i]))
			dst[i] += u[i]
			size = math.Max(size, math.Abs(dst[i]))
		}
		if math.IsNaN(size) || math.IsInf(size, 0) || size > 1e12 {
			return ErrNotStable
		}
		if inc <= 1e-13*size {
			symmetrize(dst, n)
			return nil
		}
		matMul(t, ak, ak, n)
		copy(ak, t)
	}
	return ErrNotStable
}

// matMul sets c = a·b for n×n row-major matrices; c must not alias a or b.
func matMul(c, a, b []float64, n int) {
	for i := 0; i < n; i++ {
		ci := c[i*n : i*n+n]
		for j := range ci {
			ci[j] = 0
		}
		for k := 0; k < n; k++ {
			aik := a[i*n+k]
			if aik == 0 {
				continue
			}
			bk := b[k*n : k*n+n]
			for j, v := range bk {
				ci[j] += aik * v
			}
		}
	}
}

// matMulT sets c = a·bᵀ for n×n row-major matrices; c must not alias a or b.
func matMulT(c, a, b []float64, n int) {
	for i := 0; i < n; i++ {
		ai := a[i*n : i*n+n]
		for j := 0; j < n; j++ {
			bj := b[j*n : j*n+n]
			var s float64
			for k, v := range ai {
				s += v * bj[k]
			}
			c[i*n+j] = s
		}
	}
}

func symmetrize(p []float64, n int) {
	for i := 0; i < n; i++ {
		for j := i + 1; j < n; j++ {
			m := 0.5 * (p[i*n+j] + p[j*n+i])
			p[i*n+j], p[j*n+i] = m, m
		}
	}
}
