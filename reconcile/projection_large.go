package reconcile

import (
	"fmt"
	"math"
	"math/rand/v2"
	"sync"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"

	"trueup/hierarchy"
	"trueup/inputerr"
)

// largeProjector applies the projection without any n × n matrix, in the
// equivalent constraint form. With the k = n − m aggregation constraints
// Ucᵀy = 0 (Ucᵀy = y_agg − C·y_bottom), the W⁻¹-orthogonal projection onto
// the coherent subspace is
//
//	ỹ = y − W·Uc·(UcᵀWUc)⁻¹·Ucᵀy
//
// (the same projector as S(SᵀW⁻¹S)⁻¹SᵀW⁻¹: both are the projection onto
// range(S) = null(Ucᵀ) along W·range(Uc), common linear algebra;
// Wickramasuriya et al. 2019 state MinT in this form too, §2.3 as cited
// from memory). Q = UcᵀWUc is k × k
// with W = diag(Δ) + U·Uᵀ, so Q·z costs two sparse products with the
// summing matrix and two products with Y = UcᵀU (k × T). Q is solved by
// block preconditioned conjugate gradients (Hestenes & Stiefel 1952),
// preconditioned by diag(UcᵀΔUc) + Y·Yᵀ inverted through the Woodbury
// identity, which captures the rank-T part exactly. Memory is
// O(nnz(S)·r + nT) for r right-hand sides.
type largeProjector struct {
	st   *hierarchy.Structure
	w    *errCov
	n, m int
	k    int            // aggregation constraints (nodes that are not bottom)
	y    blas64.General // k × T, UcᵀU (nil rows when W is diagonal)
	// dq is D0 = diag(UcᵀΔUc), the diagonal part of the preconditioner;
	// core is I + Yᵀ·D0⁻¹·Y. When D0 has zeros (sample covariance) core
	// is nil and dq is the whole diagonal of Q (Jacobi).
	dq   []float64
	core *mat.Cholesky
	mu   sync.Mutex // guards iter: solves may run concurrently
	iter int        // most iterations any solve of solveQ needed
}

func newLargeProjector(st *hierarchy.Structure, w *errCov) (*largeProjector, error) {
	n, m := st.S.Dims()
	lp := &largeProjector{st: st, w: w, n: n, m: m, k: n - m}
	k := lp.k
	lp.dq = make([]float64, k)
	for a := 0; a < k; a++ {
		v := w.Delta[a]
		for _, j := range st.S.Row(a) {
			v += w.Delta[k+j]
		}
		lp.dq[a] = v
	}
	if T := w.rank(); T > 0 && k > 0 {
		lp.y = blas64.General{Rows: k, Cols: T, Stride: T, Data: make([]float64, k*T)}
		ys := blas64.General{Rows: k, Cols: T, Stride: T, Data: make([]float64, k*T)}
		for a := 0; a < k; a++ {
			dst := lp.y.Data[a*T : (a+1)*T]
			copy(dst, w.U[a*T:(a+1)*T])
			for _, j := range st.S.Row(a) {
				for t, x := range w.U[(k+j)*T : (k+j+1)*T] {
					dst[t] -= x
				}
			}
			f := 1 / math.Sqrt(lp.dq[a])
			for t, x := range dst {
				ys.Data[a*T+t] = f * x
			}
		}
		if lp.hasZero() {
			// D0 has zeros (the sample covariance): plain Jacobi on
			// diag(Q) = D0 + diag(Y·Yᵀ).
			for a := 0; a < k; a++ {
				for _, x := range lp.y.Data[a*T : (a+1)*T] {
					lp.dq[a] += x * x
				}
			}
			return lp, lp.checkDiag()
		}
		// core = I + Yᵀ·D0⁻¹·Y.
		var ok bool
		if lp.core, ok = identityPlusGram(ys); !ok {
			return nil, fmt.Errorf("reconcile: preconditioner core not positive definite")
		}
	}
	return lp, lp.checkDiag()
}

// hasZero reports whether D0 has a zero, so that D0⁻¹ does not exist.
func (lp *largeProjector) hasZero() bool {
	for _, v := range lp.dq {
		if !(v > 0) {
			return true
		}
	}
	return false
}

// checkDiag refuses a singular Q, seen as a zero on its diagonal.
func (lp *largeProjector) checkDiag() error {
	for a, v := range lp.dq {
		if !(v > 0) {
			return inputerr.ForOption("Cov", "the covariance W is singular at %s; use the shrink covariance", lp.st.Label(a))
		}
	}
	return nil
}

// ucMul sets dst (n × r) = Uc·z for z (k × r).
func (lp *largeProjector) ucMul(dst, z []float64, r int) {
	k := lp.k
	copy(dst[:k*r], z)
	clear(dst[k*r:])
	if r == 1 {
		for a := 0; a < k; a++ {
			za := z[a]
			for _, j := range lp.st.S.Row(a) {
				dst[k+j] -= za
			}
		}
		return
	}
	for a := 0; a < k; a++ {
		za := z[a*r : (a+1)*r]
		for _, j := range lp.st.S.Row(a) {
			floats.Sub(dst[(k+j)*r:(k+j+1)*r], za)
		}
	}
}

// ucTMul sets dst (k × r) = Ucᵀ·v for v (n × r).
func (lp *largeProjector) ucTMul(dst, v []float64, r int) {
	k := lp.k
	copy(dst, v[:k*r])
	if r == 1 {
		for a := 0; a < k; a++ {
			s := dst[a]
			for _, j := range lp.st.S.Row(a) {
				s -= v[k+j]
			}
			dst[a] = s
		}
		return
	}
	for a := 0; a < k; a++ {
		d := dst[a*r : (a+1)*r]
		for _, j := range lp.st.S.Row(a) {
			floats.Sub(d, v[(k+j)*r:(k+j+1)*r])
		}
	}
}

// qMul sets dst = Q·z = UcᵀΔUc·z + Y·(Yᵀ·z), with scratch of n × r.
func (lp *largeProjector) qMul(dst, z, scratch, small []float64, r int) {
	lp.ucMul(scratch, z, r)
	for i, d := range lp.w.Delta {
		floats.Scale(d, scratch[i*r:(i+1)*r])
	}
	lp.ucTMul(dst, scratch, r)
	if lp.y.Data != nil {
		T := lp.y.Cols
		zm := blas64.General{Rows: lp.k, Cols: r, Stride: r, Data: z}
		sm := blas64.General{Rows: T, Cols: r, Stride: r, Data: small}
		blas64.Gemm(blas.Trans, blas.NoTrans, 1, lp.y, zm, 0, sm)
		dm := blas64.General{Rows: lp.k, Cols: r, Stride: r, Data: dst}
		blas64.Gemm(blas.NoTrans, blas.NoTrans, 1, lp.y, sm, 1, dm)
	}
}

// precond sets dst = (D0 + Y·Yᵀ)⁻¹·v by the Woodbury identity:
// D0⁻¹v − D0⁻¹Y·(I + YᵀD0⁻¹Y)⁻¹·YᵀD0⁻¹v, with scratch small (T × r) and
// tmp (k × r).
func (lp *largeProjector) precond(dst, v, small, tmp []float64, inv []float64, r int) {
	if r == 1 { // the same with matrix-vector products
		woodburyVec(dst, v, inv, lp.y, lp.core, small, tmp)
		return
	}
	for a := 0; a < lp.k; a++ {
		f := inv[a]
		for q := a * r; q < (a+1)*r; q++ {
			dst[q] = f * v[q]
		}
	}
	if lp.core == nil {
		return
	}
	T := lp.y.Cols
	dm := blas64.General{Rows: lp.k, Cols: r, Stride: r, Data: dst}
	sm := blas64.General{Rows: T, Cols: r, Stride: r, Data: small}
	blas64.Gemm(blas.Trans, blas.NoTrans, 1, lp.y, dm, 0, sm)
	x := mat.NewDense(T, r, small)
	if err := lp.core.SolveTo(x, x); err != nil {
		panic("reconcile: preconditioner solve: " + err.Error())
	}
	tmp = tmp[:lp.k*r]
	tm := blas64.General{Rows: lp.k, Cols: r, Stride: r, Data: tmp}
	blas64.Gemm(blas.NoTrans, blas.NoTrans, 1, lp.y, blas64.General{Rows: T, Cols: r, Stride: r, Data: x.RawMatrix().Data}, 0, tm)
	for a := 0; a < lp.k; a++ {
		f := inv[a]
		for q := a * r; q < (a+1)*r; q++ {
			dst[q] -= f * tmp[q]
		}
	}
}

// woodburyVec sets dst = (D + Y·C⁻¹·Yᵀ)⁻¹·v for one vector by the
// Woodbury identity: D⁻¹v − D⁻¹Y·(C + YᵀD⁻¹Y)⁻¹·YᵀD⁻¹v, where core is
// the Cholesky factor of C + YᵀD⁻¹Y (nil: no Y term) and D⁻¹ = inv (rows
// where inv is 0 get 0). small (Y's columns) and tmp (Y's rows) are
// scratch. Both the projector's preconditioner (C = I) and the restricted
// one's (C = K_F) use it.
func woodburyVec(dst, v, inv []float64, y blas64.General, core *mat.Cholesky, small, tmp []float64) {
	for a, f := range inv {
		dst[a] = f * v[a]
	}
	if core == nil {
		return
	}
	sv := blas64.Vector{N: y.Cols, Inc: 1, Data: small}
	blas64.Gemv(blas.Trans, 1, y, blas64.Vector{N: y.Rows, Inc: 1, Data: dst}, 0, sv)
	x := mat.NewVecDense(y.Cols, small[:y.Cols])
	if err := core.SolveVecTo(x, x); err != nil {
		panic("reconcile: preconditioner solve: " + err.Error())
	}
	blas64.Gemv(blas.NoTrans, 1, y, sv, 0, blas64.Vector{N: y.Rows, Inc: 1, Data: tmp})
	for a, f := range inv {
		dst[a] -= f * tmp[a]
	}
}

// maxCGIter caps the conjugate-gradient iterations of one solve.
const maxCGIter = 2000

// solveQ solves Q·Z = B (k × r) column by column, all columns sharing each
// product with Q, to relative residual tol per column.
func (lp *largeProjector) solveQ(b []float64, r int, tol float64) ([]float64, error) {
	k := lp.k
	x := make([]float64, k*r)
	if k == 0 {
		return x, nil
	}
	res := append([]float64(nil), b...)
	z := make([]float64, k*r)
	p := make([]float64, k*r)
	qp := make([]float64, k*r)
	scratch := make([]float64, lp.n*r)
	T := 0
	if lp.y.Data != nil {
		T = lp.y.Cols
	}
	small := make([]float64, T*r)
	tmp := make([]float64, k*r)
	inv := make([]float64, k)
	for a := range inv {
		inv[a] = 1 / lp.dq[a]
	}
	bnorm := colNorms(b, r)
	rz := make([]float64, r)
	done := make([]bool, r)
	ndone := 0
	for q := range done {
		if bnorm[q] == 0 {
			done[q] = true
			ndone++
		}
	}
	lp.precond(z, res, small, tmp, inv, r)
	copy(p, z)
	colDots(rz, res, z, r)
	pq := make([]float64, r)
	var it int
	for it = 0; ndone < r && it < maxCGIter; it++ {
		lp.qMul(qp, p, scratch, small, r)
		colDots(pq, p, qp, r)
		for a := 0; a < k; a++ {
			for q := 0; q < r; q++ {
				if done[q] {
					continue
				}
				alpha := rz[q] / pq[q]
				x[a*r+q] += alpha * p[a*r+q]
				res[a*r+q] -= alpha * qp[a*r+q]
			}
		}
		rn := colNorms(res, r)
		for q := 0; q < r; q++ {
			if !done[q] && rn[q] <= tol*bnorm[q] {
				done[q] = true
				ndone++
			}
		}
		lp.precond(z, res, small, tmp, inv, r)
		old := append([]float64(nil), rz...)
		colDots(rz, res, z, r)
		for a := 0; a < k; a++ {
			for q := 0; q < r; q++ {
				if !done[q] {
					p[a*r+q] = z[a*r+q] + rz[q]/old[q]*p[a*r+q]
				}
			}
		}
	}
	lp.mu.Lock()
	lp.iter = max(lp.iter, it)
	lp.mu.Unlock()
	if ndone < r {
		rn := colNorms(res, r)
		worst := 0.0
		for q := range rn {
			if !done[q] {
				worst = math.Max(worst, rn[q]/bnorm[q])
			}
		}
		return nil, fmt.Errorf("reconcile: conjugate gradients stopped after %d iterations at relative residual %.3g", it, worst)
	}
	return x, nil
}

func colNorms(v []float64, r int) []float64 {
	out := make([]float64, r)
	colDots(out, v, v, r)
	for q := range out {
		out[q] = math.Sqrt(out[q])
	}
	return out
}

func colDots(dst, a, b []float64, r int) {
	clear(dst)
	for i := 0; i < len(a); i += r {
		for q := 0; q < r; q++ {
			dst[q] += a[i+q] * b[i+q]
		}
	}
}

// apply returns G·Y: the bottom rows of Y − W·Uc·Q⁻¹·Ucᵀ·Y.
func (lp *largeProjector) apply(ym *mat.Dense, tol float64) (*mat.Dense, error) {
	n, r := ym.Dims()
	yv := make([]float64, n*r)
	for i := 0; i < n; i++ {
		for q := 0; q < r; q++ {
			yv[i*r+q] = ym.At(i, q)
		}
	}
	rhs := make([]float64, lp.k*r)
	lp.ucTMul(rhs, yv, r)
	z, err := lp.solveQ(rhs, r, tol)
	if err != nil {
		return nil, err
	}
	// W·Uc·z, bottom rows only.
	uz := make([]float64, n*r)
	lp.ucMul(uz, z, r)
	out := mat.NewDense(lp.m, r, nil)
	raw := out.RawMatrix()
	k := lp.k
	for j := 0; j < lp.m; j++ {
		d := lp.w.Delta[k+j]
		for q := 0; q < r; q++ {
			raw.Data[j*raw.Stride+q] = yv[(k+j)*r+q] - d*uz[(k+j)*r+q]
		}
	}
	if T := lp.w.rank(); T > 0 {
		// Uᵀ·Uc·z = Yᵀ·z (T × r), then subtract U_bottom·that.
		small := blas64.General{Rows: T, Cols: r, Stride: r, Data: make([]float64, T*r)}
		blas64.Gemm(blas.Trans, blas.NoTrans, 1, lp.y, blas64.General{Rows: k, Cols: r, Stride: r, Data: z}, 0, small)
		ub := blas64.General{Rows: lp.m, Cols: T, Stride: T, Data: lp.w.U[k*T:]}
		blas64.Gemm(blas.NoTrans, blas.NoTrans, -1, ub, small, 1, raw)
	}
	return out, nil
}

// errorFactor returns the factor of G·W·Gᵀ for the variance covariance
// W = diag(Δ) + U·Uᵀ (the sample covariance W1: Δ_i = D_i·(1 − T_i/T) is
// zero for every node with a residual in each period). The rank-T part is
// exact: the T columns G·U. The diagonal part needs one column
// G·√Δ_i·e_i per node with Δ_i > 0 (a node whose residuals start late):
// exact as well while there are at most paths such nodes, which costs no
// more than the sampled estimate would. Above that, it is estimated from
// paths reconciled sample paths G·diag(√Δ)·z_s/√paths, z_s seeded
// standard normal n-vectors, whose outer products estimate
// G·diag(Δ)·Gᵀ (Panagiotelis, Gamakumara, Athanasopoulos & Hyndman 2023,
// "Probabilistic forecast reconciliation: properties, evaluation and
// score optimisation", EJOR 306(2), §5: reconcile sample paths by the
// same G), sharpened by a control variate (factorVariance). All columns
// are solved together, to the forecasts' tolerance.
func (lp *largeProjector) errorFactor(w *errCov, a []float64, paths int, seed uint64) (*factor, error) {
	if paths <= 0 {
		paths = DefaultPaths
	}
	T := w.rank()
	var late []int
	for i, d := range w.Delta {
		if d > 0 {
			late = append(late, i)
		}
	}
	sampled := len(late) > paths
	extra := len(late)
	if sampled {
		extra = paths
	}
	r := T + extra
	rhs := mat.NewDense(lp.n, r, nil)
	raw := rhs.RawMatrix()
	for i := 0; i < lp.n; i++ {
		floats.ScaleTo(raw.Data[i*raw.Stride:i*raw.Stride+T], a[i], w.U[i*T:(i+1)*T])
	}
	var ctrl *mat.Dense
	if sampled {
		ctrl = mat.NewDense(lp.m, paths, nil)
		rng := rand.New(rand.NewPCG(seed, 0x7275e0b))
		scale := 1 / math.Sqrt(float64(paths))
		for i := 0; i < lp.n; i++ {
			s := math.Sqrt(w.Delta[i]) * scale
			for q := 0; q < paths; q++ {
				v := a[i] * s * rng.NormFloat64()
				rhs.Set(i, T+q, v)
				if i >= lp.k {
					ctrl.Set(i-lp.k, q, v)
				}
			}
		}
	} else {
		for q, i := range late {
			rhs.Set(i, T+q, a[i]*math.Sqrt(w.Delta[i]))
		}
	}
	if r == 0 {
		return &factor{}, nil
	}
	f, err := lp.apply(rhs, solveTol)
	if err != nil {
		return nil, err
	}
	if !sampled {
		return &factor{exact: f}, nil
	}
	out := &factor{paths: f.Slice(0, lp.m, T, r).(*mat.Dense), ctrl: ctrl, deltaB: w.Delta[lp.k:]}
	if T > 0 {
		out.exact = f.Slice(0, lp.m, 0, T).(*mat.Dense)
	}
	return out, nil
}

func (lp *largeProjector) notes() map[string]float64 {
	lp.mu.Lock()
	defer lp.mu.Unlock()
	return map[string]float64{"cg_iterations": float64(lp.iter)}
}

// qp implements projector for the large path: P = SᵀW⁻¹S applied with
// W⁻¹ = Δ⁻¹ − Δ⁻¹U·K⁻¹·UᵀΔ⁻¹, K = I + UᵀΔ⁻¹U (the Woodbury identity),
// for q and for the optimality check; restricted solves in the constraint
// form (largeQP.solveFree).
func (lp *largeProjector) qp() (qpProblem, error) {
	w := lp.w
	for i, d := range w.Delta {
		if !(d > 0) {
			return nil, inputerr.New("non-negative reconciliation needs W⁻¹, and W is singular at %s; use the shrink covariance", lp.st.Label(i))
		}
	}
	q := &largeQP{lp: lp, T: w.rank()}
	T := q.T
	if T == 0 {
		return q, nil
	}
	q.u = blas64.General{Rows: lp.n, Cols: T, Stride: T, Data: w.U}
	ud := blas64.General{Rows: lp.n, Cols: T, Stride: T, Data: make([]float64, lp.n*T)}
	for i := 0; i < lp.n; i++ {
		floats.ScaleTo(ud.Data[i*T:(i+1)*T], 1/math.Sqrt(w.Delta[i]), w.U[i*T:(i+1)*T])
	}
	var ok bool
	if q.k, ok = identityPlusGram(ud); !ok {
		return nil, fmt.Errorf("reconcile: I + UᵀΔ⁻¹U not positive definite")
	}
	q.s = make([]float64, T)
	g := blas64.Symmetric{N: T, Stride: T, Uplo: blas.Upper, Data: make([]float64, T*T)}
	all := make([]int, lp.k)
	for a := range all {
		all[a] = a
	}
	blas64.Syrk(blas.Trans, 1, scaledRows(lp.y.Data, T, all, func(a int) float64 { return 1 / math.Sqrt(lp.dq[a]) }), 0, g)
	q.gram = g.Data
	return q, nil
}

type largeQP struct {
	lp *largeProjector
	T  int
	u  blas64.General // U, n × T
	k  *mat.Cholesky  // K = I + UᵀΔ⁻¹U
	s  []float64      // T scratch
	t1 []float64      // n scratch
	t2 []float64      // n scratch
	t3 []float64      // n scratch
	// gram is YᵀD0⁻¹Y (T × T, upper triangle), the low-rank part of the
	// preconditioner's core, which restricted solves update.
	gram []float64
	// warm keeps the aggregation constraints' part x_k of the last
	// restricted solve of each right-hand side, by its first element's
	// address: the next solve of the same column starts from it.
	warm map[*float64][]float64
}

// winv sets dst = W⁻¹·v (n-vectors).
func (q *largeQP) winv(dst, v []float64) {
	w := q.lp.w
	for i, d := range w.Delta {
		dst[i] = v[i] / d
	}
	if q.T == 0 {
		return
	}
	s := blas64.Vector{N: q.T, Inc: 1, Data: q.s}
	blas64.Gemv(blas.Trans, 1, q.u, blas64.Vector{N: len(dst), Inc: 1, Data: dst}, 0, s)
	sv := mat.NewVecDense(q.T, q.s)
	if err := q.k.SolveVecTo(sv, sv); err != nil {
		panic("reconcile: Woodbury core solve: " + err.Error())
	}
	if q.t1 == nil {
		q.t1 = make([]float64, len(dst))
	}
	blas64.Gemv(blas.NoTrans, 1, q.u, s, 0, blas64.Vector{N: len(dst), Inc: 1, Data: q.t1})
	for i, d := range w.Delta {
		dst[i] -= q.t1[i] / d
	}
}

func (q *largeQP) linear(y []float64) []float64 {
	t := make([]float64, q.lp.n)
	q.winv(t, y)
	return q.lp.st.S.MulTransVec(nil, t)
}

func (q *largeQP) mul(dst, v []float64) {
	if q.t2 == nil {
		q.t2 = make([]float64, q.lp.n)
		q.t3 = make([]float64, q.lp.n)
	}
	sv := q.lp.st.S.MulVec(q.t2, v)
	q.winv(q.t3, sv)
	q.lp.st.S.MulTransVec(dst, q.t3)
}

// solveFree solves the projection restricted to the free bottom series
// (restricted), started from the last restricted solve of the same
// right-hand side.
func (q *largeQP) solveFree(free []bool, _, y []float64, tol float64) ([]float64, error) {
	b, _, err := q.solveFixed(free, y, tol, nil, nil)
	return b, err
}

// solveFreeLocked implements qpProblem's locked solve: the locked nodes
// are fixed at their values like the bound series (restricted).
func (q *largeQP) solveFreeLocked(free []bool, _, y []float64, tol float64, nodes []int, values []float64) ([]float64, []float64, error) {
	return q.solveFixed(free, y, tol, nodes, values)
}

func (*largeQP) exact() bool { return false }

// solveFixed is the restricted solve, to relative residual tol, with the
// locked nodes (nil for none) fixed at their values; it returns the
// bottom series and the locks' Lagrange multipliers μ. The aggregation
// constraints' multipliers z are kept per right-hand side (by its first
// element's address) to start the next solve of the same column: between
// free sets that differ in a few series they change little.
//
// The multipliers: the optimality conditions of the projection in the
// nodes with F fixed are W⁻¹(y − x) = Uc·z + E_F·ν, x the reconciled
// forecasts, so ν_F = [W⁻¹(y − x)]_F − (Uc·z)_F. In the bottom form
// P·b − q = −SᵀW⁻¹(y − x) = −SᵀE_F·ν (SᵀUc = 0), so on the free series
// P·b − q + Cᵀμ = 0 with μ the ν of the locked nodes.
func (q *largeQP) solveFixed(free []bool, y []float64, tol float64, nodes []int, values []float64) ([]float64, []float64, error) {
	r, err := q.restrict(free, nodes, values)
	if err != nil {
		return nil, nil, err
	}
	bottom, z, err := r.solve(y, tol, q.warm[&y[0]])
	if err != nil {
		return nil, nil, err
	}
	if q.warm == nil {
		q.warm = map[*float64][]float64{}
	}
	q.warm[&y[0]] = z
	if len(nodes) == 0 {
		return bottom, nil, nil
	}
	n := q.lp.n
	x := q.lp.st.S.MulVec(make([]float64, n), bottom)
	for i := range x {
		x[i] = y[i] - x[i]
	}
	g := make([]float64, n)
	q.winv(g, x)
	ucz := make([]float64, n)
	q.lp.ucMul(ucz, z, 1)
	mu := make([]float64, len(nodes))
	for l, i := range nodes {
		mu[l] = g[i] - ucz[i]
	}
	return bottom, mu, nil
}

func dot(a, b []float64) float64 { return floats.Dot(a, b) }

// identityPlusGram returns the Cholesky factor of I + XᵀX for an r × T
// matrix X: the T × T core of a Woodbury inverse of a diagonal plus a rank-T
// term. It reports false when the core is not positive definite.
func identityPlusGram(x blas64.General) (*mat.Cholesky, bool) {
	T := x.Cols
	c := blas64.Symmetric{N: T, Stride: T, Uplo: blas.Upper, Data: make([]float64, T*T)}
	for t := 0; t < T; t++ {
		c.Data[t*T+t] = 1
	}
	blas64.Syrk(blas.Trans, 1, x, 1, c)
	var cs mat.SymDense
	cs.SetRawSymmetric(c)
	var ch mat.Cholesky
	return &ch, ch.Factorize(&cs)
}
