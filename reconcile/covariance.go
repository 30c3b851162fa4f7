package reconcile

import (
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"

	"trueup/inputerr"
)

// errCov is the one-step forecast-error covariance of every node, held as a
// diagonal plus a rank-T part so that it is never formed as an n × n matrix:
//
//	W = diag(Delta) + U·Uᵀ,  U = √((1−λ)/T) · D^{1/2} · X
//
// where D holds each node's one-step residual variance and X (n × T) its
// standardized residuals.
//
// It is the shrinkage estimator of Schäfer & Strimmer (2005), "A
// shrinkage approach to large-scale covariance matrix estimation",
// Statistical Applications in Genetics and Molecular Biology 4(1), art. 32,
// target D ("target D" of their Table 2), as used for MinT by
// Wickramasuriya, Athanasopoulos & Hyndman (2019), JASA 114(526), §2.4:
//
//	W1 = (1/T) Σ_t e_t e_tᵀ   (uncentred)
//	W  = λ·D + (1−λ)·W1,      D = diag(W1)
//
// Missing residuals (NaN, a node that started late) follow one rule: a
// node's own variance D_i uses only its T_i observed periods, and a missing
// residual counts as zero in every cross moment, which is still divided by
// T. The standardized residual x_ti = e_ti/√D_i is therefore 0 where e_ti
// is missing, the sample correlation of a late node with any other is
// damped by the share of periods it was observed, and the correlation
// matrix keeps its unit diagonal by adding 1 − T_i/T there. That keeps W1
// positive semi-definite (it is a Gram matrix plus a non-negative
// diagonal), which per-pair counts would not, and keeps the low-rank form.
// With no missing residuals every formula is exactly the published one.
type errCov struct {
	n, T   int
	lambda float64
	// D is the residual variance per node (diagonal of W).
	D []float64
	// Delta is the diagonal part of W: D_i·(λ + (1−λ)(1 − T_i/T)).
	Delta []float64
	// X holds standardized residuals, n × T row-major (0 where missing).
	X []float64
	// U is the low-rank factor, n × T row-major; nil when λ = 1.
	U []float64
}

// varianceFloor is the smallest residual variance a node may have,
// relative to the mean residual variance of all nodes. A node whose every
// residual is zero, or that has no residual at all (a series that never
// had a sale, forecast as zero), would otherwise make W singular; at the
// floor it counts as known almost exactly, which is what a zero residual
// history says. Callers that cannot vouch for a node without residuals
// (trueup reconcile) refuse it before it gets here.
const varianceFloor = 1e-10

// standardize computes D and X from residuals (n rows × T periods, NaN
// where missing) and returns the number of observed periods per node.
func standardize(res [][]float64, label func(int) string) (D, X []float64, obs []int, err error) {
	n := len(res)
	T := len(res[0])
	D = make([]float64, n)
	X = make([]float64, n*T)
	obs = make([]int, n)
	var sum float64
	var pos int
	for i, r := range res {
		if len(r) != T {
			return nil, nil, nil, inputerr.New("residuals of %s: %d periods, others have %d", label(i), len(r), T)
		}
		var ss float64
		for _, e := range r {
			if math.IsInf(e, 0) {
				return nil, nil, nil, inputerr.New("residuals of %s: infinite value", label(i))
			}
			if e == e {
				ss += e * e
				obs[i]++
			}
		}
		if obs[i] > 0 {
			D[i] = ss / float64(obs[i])
		}
		if D[i] > 0 {
			sum += D[i]
			pos++
		}
	}
	floor := 1.0
	if pos > 0 {
		floor = sum / float64(pos)
	}
	floor *= varianceFloor
	for i, r := range res {
		if D[i] < floor {
			D[i] = floor
		}
		s := 1 / math.Sqrt(D[i])
		row := X[i*T : (i+1)*T]
		for t, e := range r {
			if e == e {
				row[t] = e * s
			}
		}
	}
	return D, X, obs, nil
}

// shrinkageLambda is the Schäfer & Strimmer (2005) intensity for target D,
// their eq. for λ* with the correlation-scale variances of their
// Appendix A, computed from T × T Gram matrices in O(nT²) time and O(T²)
// extra memory instead of the O(n²T) double sum over pairs:
//
//	w_tij = x_ti x_tj,  w̄_ij = (1/T) Σ_t w_tij = r_ij
//	Var̂(r_ij) = T/(T−1)³ Σ_t (w_tij − w̄_ij)²
//	λ = clip(Σ_{i≠j} Var̂(r_ij) / Σ_{i≠j} r_ij², 0, 1)
//
// Using Σ_t (w_tij − w̄_ij)² = Σ_t w_tij² − T w̄_ij²:
//
//	Σ_{i,j} Σ_t w_tij² = Σ_t (Σ_i x_ti²)²
//	Σ_{i,j} w̄_ij²     = ‖XᵀX‖_F² / T²
//
// and the i = j terms are subtracted explicitly. X is n × T row-major.
func shrinkageLambda(X []float64, n, T int) float64 {
	if T < 2 || n < 2 {
		return 1
	}
	gram := blas64.General{Rows: T, Cols: T, Stride: T, Data: make([]float64, T*T)}
	xm := blas64.General{Rows: n, Cols: T, Stride: T, Data: X}
	blas64.Gemm(blas.Trans, blas.NoTrans, 1, xm, xm, 0, gram)

	var diagW2, diagMean2 float64 // Σ_i Σ_t x_ti⁴ and Σ_i w̄_ii²
	colSq := make([]float64, T)   // Σ_i x_ti²
	for i := 0; i < n; i++ {
		row := X[i*T : (i+1)*T]
		var m float64
		for t, x := range row {
			x2 := x * x
			colSq[t] += x2
			diagW2 += x2 * x2
			m += x2
		}
		m /= float64(T)
		diagMean2 += m * m
	}
	var allW2 float64
	for _, c := range colSq {
		allW2 += c * c
	}
	var fro float64
	for _, g := range gram.Data {
		fro += g * g
	}
	Tf := float64(T)
	offMean2 := fro/(Tf*Tf) - diagMean2 // Σ_{i≠j} r_ij²
	offW2 := allW2 - diagW2             // Σ_{i≠j} Σ_t w_tij²
	num := Tf / math.Pow(Tf-1, 3) * (offW2 - Tf*offMean2)
	if !(offMean2 > 0) {
		return 1 // no correlation to shrink: the target is the estimate
	}
	return math.Min(1, math.Max(0, num/offMean2))
}

// newErrCov estimates W from the residuals with shrinkage intensity λ. If
// lambda is negative the Schäfer–Strimmer intensity is used; lambda = 0
// gives the sample covariance W1.
func newErrCov(res [][]float64, lambda float64, label func(int) string) (*errCov, error) {
	D, X, obs, err := standardize(res, label)
	if err != nil {
		return nil, err
	}
	n, T := len(res), len(res[0])
	if lambda < 0 {
		lambda = shrinkageLambda(X, n, T)
	}
	c := &errCov{n: n, T: T, lambda: lambda, D: D, X: X, Delta: make([]float64, n)}
	for i := range c.Delta {
		c.Delta[i] = D[i] * (lambda + (1-lambda)*(1-float64(obs[i])/float64(T)))
	}
	if lambda < 1 {
		c.U = make([]float64, n*T)
		f := math.Sqrt((1 - lambda) / float64(T))
		for i := 0; i < n; i++ {
			s := f * math.Sqrt(D[i])
			for t := 0; t < T; t++ {
				c.U[i*T+t] = s * X[i*T+t]
			}
		}
	}
	return c, nil
}

// rank is the number of columns of U (0 when W is diagonal).
func (c *errCov) rank() int {
	if c.U == nil {
		return 0
	}
	return c.T
}
