package reconcile

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"

	"trueup/inputerr"
)

// restricted is largeProjector's projection with some nodes fixed, as
// the non-negative programme's restricted solves need: the bound bottom
// series (held at zero) and the locked nodes (held at their values),
// together the set F with values v_F.
//
// Fixing them is conditioning on them. With d = y − x, whose F part is
// y_F − v_F whatever the other nodes are, the W⁻¹-norm splits as (Schur
// complement of W_FF, common linear algebra)
//
//	dᵀW⁻¹d = (d_R − W_RF·W_FF⁻¹·d_F)ᵀ·W'⁻¹·(d_R − W_RF·W_FF⁻¹·d_F) + const,
//	W' = W_RR − W_RF·W_FF⁻¹·W_FR,
//
// R the other nodes. So the restricted problem is the projection of
// y' = y_R − W_RF·W_FF⁻¹·(y_F − v_F) in the W'⁻¹ metric onto the x_R that
// are coherent together with x_F = v_F: largeProjector's constraint form
// with Uc_R (the rows of Uc outside F) and right-hand side
// Uc_Rᵀy' + Uc_Fᵀv_F. With W = diag(Δ) + U·Uᵀ both stay a diagonal plus
// rank T (the push-through and Woodbury identities):
//
//	W' = Δ_R + U_R·K_F⁻¹·U_Rᵀ,   y' = y_R − U_R·K_F⁻¹·U_FᵀΔ_F⁻¹·(y_F − v_F),
//	K_F = I + U_FᵀΔ_F⁻¹U_F (T × T),
//
// and the Woodbury preconditioner D0' + Y_R·K_F⁻¹·Y_Rᵀ (D0' the diagonal
// of Uc_RᵀΔUc_R, Y_R = Uc_RᵀU) still captures the low-rank part exactly.
// Writing the fixed nodes as constraints of their own instead (unit rows
// beside Uc) leaves their coupling to the aggregation constraints to the
// preconditioner: on BenchmarkMinTRetailLocked's non-negative case a
// restricted solve then took 164 conjugate-gradient iterations on
// average without locks and 195 with them, against 27 in this form, and
// the unlocked reconcile took 11.4 s against 3.7 s.
//
// Vectors over the nodes keep all n entries, those of F zero.
type restricted struct {
	lp    *largeProjector
	fixed []bool    // per node: in F
	value []float64 // per node: v_F on F, zero elsewhere
	nF    int
	T     int
	kf    *mat.Cholesky  // K_F; nil for the identity (F empty or T = 0)
	yR    blas64.General // k × T, Uc_RᵀU
	inv   []float64      // 1 / D0', 0 for a constraint with no node left
	core  *mat.Cholesky  // K_F + Y_RᵀD0'⁻¹Y_R; nil when T = 0
	agg   *fixedAggregates
	small []float64 // T scratch
	tmp   []float64 // k scratch
	vn    []float64 // n scratch of mulQ
	sm    []float64 // T scratch of mulQ
}

// restrict builds the restricted projection for the free bottom series
// (the others are bound at zero) and the locked nodes (outside the bound
// series, nil for none) at their values.
func (q *largeQP) restrict(free []bool, nodes []int, values []float64) (*restricted, error) {
	lp := q.lp
	k, n, T := lp.k, lp.n, q.T
	d := lp.w.Delta
	r := &restricted{lp: lp, fixed: make([]bool, n), value: make([]float64, n), T: T,
		small: make([]float64, T), tmp: make([]float64, k), vn: make([]float64, n), sm: make([]float64, T)}
	for j, f := range free {
		r.fixed[k+j] = !f
	}
	for l, i := range nodes {
		r.fixed[i], r.value[i] = true, values[l]
	}
	var fixedRows []int
	for i, f := range r.fixed {
		if f {
			fixedRows = append(fixedRows, i)
		}
	}
	r.nF = len(fixedRows)
	// D0' and Y_R differ from D0 and Y only in the rows of fixed
	// aggregates and of aggregates with a fixed bottom series.
	var changed []int
	for a := 0; a < k; a++ {
		hit := r.fixed[a]
		for _, j := range lp.st.S.Row(a) {
			hit = hit || r.fixed[k+j]
		}
		if hit {
			changed = append(changed, a)
		}
	}
	dq := append([]float64(nil), lp.dq...)
	for _, a := range changed {
		v := 0.0
		if !r.fixed[a] {
			v = d[a]
		}
		for _, j := range lp.st.S.Row(a) {
			if !r.fixed[k+j] {
				v += d[k+j]
			}
		}
		dq[a] = v
	}
	// A constraint with no node left outside F (a locked aggregate whose
	// series are all fixed) constrains nothing the solve can change: it
	// holds, or the fixed values contradict each other.
	r.inv = make([]float64, k)
	rhs := make([]float64, k)
	lp.ucTMul(rhs, r.value, 1)
	for a, v := range dq {
		switch {
		case v > 0:
			r.inv[a] = 1 / v
		case math.Abs(rhs[a]) > 1e-9*(math.Abs(r.value[a])+1):
			return nil, inputerr.New("the locks on %s and on the series under it cannot hold with the series that must stay at zero", lp.st.Label(a))
		}
	}
	if T == 0 || k == 0 {
		var err error
		r.agg, err = r.fixAggregates()
		return r, err
	}
	u := lp.w.U
	r.yR = blas64.General{Rows: k, Cols: T, Stride: T, Data: append([]float64(nil), lp.y.Data...)}
	for _, a := range changed {
		row := r.yR.Data[a*T : (a+1)*T]
		if r.fixed[a] {
			floats.Sub(row, u[a*T:(a+1)*T])
		}
		for _, j := range lp.st.S.Row(a) {
			if r.fixed[k+j] {
				floats.Add(row, u[(k+j)*T:(k+j+1)*T])
			}
		}
	}
	// K_F = I + U_FᵀΔ_F⁻¹U_F, and the preconditioner's core: K_F plus
	// Y_RᵀD0'⁻¹Y_R, updated from Q's YᵀD0⁻¹Y in the changed rows while
	// they are fewer than half.
	core := blas64.Symmetric{N: T, Stride: T, Uplo: blas.Upper, Data: make([]float64, T*T)}
	for t := 0; t < T; t++ {
		core.Data[t*T+t] = 1
	}
	if r.nF > 0 {
		blas64.Syrk(blas.Trans, 1, scaledRows(u, T, fixedRows, func(i int) float64 { return 1 / math.Sqrt(d[i]) }), 1, core)
		var kf mat.SymDense
		kf.SetRawSymmetric(blas64.Symmetric{N: T, Stride: T, Uplo: blas.Upper, Data: append([]float64(nil), core.Data...)})
		r.kf = &mat.Cholesky{}
		if !r.kf.Factorize(&kf) {
			return nil, fmt.Errorf("reconcile: I + U_FᵀΔ_F⁻¹U_F not positive definite")
		}
	}
	scale := func(inv []float64) func(int) float64 {
		return func(a int) float64 { return math.Sqrt(inv[a]) }
	}
	invQ := make([]float64, k)
	for a, v := range lp.dq {
		invQ[a] = 1 / v
	}
	if 2*len(changed) < k {
		floats.Add(core.Data, q.gram)
		if len(changed) > 0 {
			blas64.Syrk(blas.Trans, -1, scaledRows(lp.y.Data, T, changed, scale(invQ)), 1, core)
			blas64.Syrk(blas.Trans, 1, scaledRows(r.yR.Data, T, changed, scale(r.inv)), 1, core)
		}
	} else {
		all := make([]int, k)
		for a := range all {
			all[a] = a
		}
		blas64.Syrk(blas.Trans, 1, scaledRows(r.yR.Data, T, all, scale(r.inv)), 1, core)
	}
	var cs mat.SymDense
	cs.SetRawSymmetric(core)
	r.core = &mat.Cholesky{}
	if !r.core.Factorize(&cs) {
		return nil, fmt.Errorf("reconcile: restricted preconditioner core not positive definite")
	}
	var err error
	r.agg, err = r.fixAggregates()
	return r, err
}

// scaledRows stacks the given rows of the row-major matrix x (T columns),
// each times its factor, into a new matrix.
func scaledRows(x []float64, T int, rows []int, factor func(int) float64) blas64.General {
	data := make([]float64, 0, len(rows)*T)
	for _, i := range rows {
		f := factor(i)
		for _, v := range x[i*T : (i+1)*T] {
			data = append(data, f*v)
		}
	}
	return blas64.General{Rows: len(rows), Cols: T, Stride: T, Data: data}
}

// kfSolve sets s = K_F⁻¹·s.
func (r *restricted) kfSolve(s []float64) {
	if r.kf == nil {
		return
	}
	sv := mat.NewVecDense(len(s), s)
	if err := r.kf.SolveVecTo(sv, sv); err != nil {
		panic("reconcile: K_F solve: " + err.Error())
	}
}

// ucMul sets dst (n) = Uc_R·z for z (k).
func (r *restricted) ucMul(dst, z []float64) {
	r.lp.ucMul(dst, z, 1)
	for i, f := range r.fixed {
		if f {
			dst[i] = 0
		}
	}
}

// precond applies the preconditioner of Q' to v (k-vectors): the
// Woodbury one, with the rows of fixed aggregates coupled exactly
// (fixedAggregates) when there are any.
func (r *restricted) precond(dst, v []float64) {
	if r.agg != nil {
		r.agg.apply(r, dst, v)
		return
	}
	r.woodbury(dst, v, r.inv, r.core)
}

// woodbury sets dst = (D + Y_R·K_F⁻¹·Y_Rᵀ)⁻¹·v (k-vectors), D⁻¹ = inv:
// woodburyVec with core = K_F + Y_RᵀD⁻¹Y_R. Rows where inv is 0 get 0.
func (r *restricted) woodbury(dst, v, inv []float64, core *mat.Cholesky) {
	woodburyVec(dst, v, inv, r.yR, core, r.small, r.tmp)
}

// fixedAggregates is the part of the preconditioner for the constraints
// of locked aggregates. Fixing an aggregate removes its own term from its
// constraint, which then ties only bottom series shared with every
// aggregate below it, a coupling the Woodbury preconditioner P̃ (a
// diagonal plus rank T) does not see. Their rows L are few, so their
// directions are solved exactly by a coarse correction, the balancing
// preconditioner (Tang, Nabben, Vuik & Erlangga 2009, "Comparison of
// two-level preconditioners derived from deflation, domain decomposition
// and multigrid methods", J. Sci. Comput. 39:340–370, P_BNN; cited from
// memory) with Z = E_L, E = ZᵀQ'Z = Q'_LL:
//
//	M⁻¹ = (I − Z·E⁻¹·ZᵀQ')·P̃⁻¹·(I − Q'Z·E⁻¹·Zᵀ) + Z·E⁻¹·Zᵀ,
//
// symmetric and positive definite with P̃. It needs Q'Z (one product with
// Q' per locked aggregate) and costs O(k·L) more per application. On
// BenchmarkMinTRetailLocked's non-negative case (the total, a state and a
// category locked) it took the solves at the final tolerance from 33
// iterations to 23 (20 without those locks). An exact block elimination
// of those rows with P̃ for the others was tried first: its Schur
// complement is indefinite there, P̃ being too coarse an approximation of
// the other rows for the strong coupling.
type fixedAggregates struct {
	rows []int       // the constraints of fixed aggregates
	qz   [][]float64 // per row of L: Q'·e_l
	e    mat.Cholesky
	v    *mat.VecDense // L scratch
	t    []float64     // k scratch
}

// fixAggregates returns the coarse correction for the fixed aggregates'
// constraints, or nil when there are none.
func (r *restricted) fixAggregates() (*fixedAggregates, error) {
	k := r.lp.k
	c := &fixedAggregates{}
	for a := 0; a < k; a++ {
		if r.fixed[a] && r.inv[a] > 0 {
			c.rows = append(c.rows, a)
		}
	}
	L := len(c.rows)
	if L == 0 {
		return nil, nil
	}
	e := make([]float64, k)
	c.qz = make([][]float64, L)
	em := mat.NewSymDense(L, nil)
	for l, a := range c.rows {
		e[a] = 1
		c.qz[l] = make([]float64, k)
		r.mulQ(c.qz[l], e)
		e[a] = 0
	}
	for l := range c.rows {
		for m := l; m < L; m++ {
			em.SetSym(l, m, 0.5*(c.qz[l][c.rows[m]]+c.qz[m][c.rows[l]]))
		}
	}
	if !c.e.Factorize(em) {
		return nil, fmt.Errorf("reconcile: the locked aggregates' block of the restricted system is not positive definite")
	}
	c.v = mat.NewVecDense(L, nil)
	c.t = make([]float64, k)
	return c, nil
}

// apply sets dst = M⁻¹·v.
func (c *fixedAggregates) apply(r *restricted, dst, v []float64) {
	// c.v = E⁻¹·Zᵀv; t = v − Q'Z·c.v.
	for l, a := range c.rows {
		c.v.SetVec(l, v[a])
	}
	c.solveE()
	copy(c.t, v)
	for l := range c.rows {
		floats.AddScaled(c.t, -c.v.AtVec(l), c.qz[l])
	}
	coarse := make([]float64, len(c.rows))
	for l := range coarse {
		coarse[l] = c.v.AtVec(l)
	}
	r.woodbury(dst, c.t, r.inv, r.core)
	// dst −= Z·E⁻¹·(Q'Z)ᵀ·dst, then += Z·E⁻¹·Zᵀv.
	for l := range c.rows {
		c.v.SetVec(l, floats.Dot(c.qz[l], dst))
	}
	c.solveE()
	for l, a := range c.rows {
		dst[a] += coarse[l] - c.v.AtVec(l)
	}
}

func (c *fixedAggregates) solveE() {
	if err := c.e.SolveVecTo(c.v, c.v); err != nil {
		panic("reconcile: coarse correction solve: " + err.Error())
	}
}

// target returns y' (n entries, zero on F).
func (r *restricted) target(y []float64) []float64 {
	u, T := r.lp.w.U, r.T
	out := append([]float64(nil), y...)
	s := make([]float64, T)
	for i, f := range r.fixed {
		if f {
			if T > 0 {
				floats.AddScaled(s, (y[i]-r.value[i])/r.lp.w.Delta[i], u[i*T:(i+1)*T])
			}
			out[i] = 0
		}
	}
	if T == 0 || r.nF == 0 {
		return out
	}
	r.kfSolve(s)
	for i, f := range r.fixed {
		if !f {
			out[i] -= floats.Dot(u[i*T:(i+1)*T], s)
		}
	}
	return out
}

// vmul sets r.vn = Uc_R·x and, with T > 0, r.sm = K_F⁻¹·Uᵀ·Uc_R·x.
func (r *restricted) vmul(x []float64) {
	r.ucMul(r.vn, x)
	if r.T == 0 {
		return
	}
	blas64.Gemv(blas.Trans, 1, r.yR, blas64.Vector{N: r.lp.k, Inc: 1, Data: x}, 0, blas64.Vector{N: r.T, Inc: 1, Data: r.sm})
	r.kfSolve(r.sm)
}

// mulQ sets dst = Q'·x (k-vectors), through r.vn and r.sm.
func (r *restricted) mulQ(dst, x []float64) {
	r.vmul(x)
	for i, di := range r.lp.w.Delta {
		r.vn[i] *= di
	}
	r.lp.ucTMul(dst, r.vn, 1)
	if r.T > 0 {
		blas64.Gemv(blas.NoTrans, 1, r.yR, blas64.Vector{N: r.T, Inc: 1, Data: r.sm}, 1, blas64.Vector{N: r.lp.k, Inc: 1, Data: dst})
	}
	for a, f := range r.inv {
		if f == 0 {
			dst[a] = 0 // a constraint with no node left
		}
	}
}

// solve solves the restricted projection of y to relative residual tol:
// Q'·z = Uc_Rᵀ(y' + v) with Q' = Uc_RᵀW'Uc_R, by preconditioned conjugate
// gradients started from z0 (the z of an earlier solve, nil for zero). It
// returns the bottom series (the fixed ones at their values) and z.
func (r *restricted) solve(y []float64, tol float64, z0 []float64) (bottom, z []float64, err error) {
	lp := r.lp
	k, m, T := lp.k, lp.m, r.T
	d := lp.w.Delta
	u := lp.w.U
	yr := r.target(y)
	vn, sm, mulQ := r.vn, r.sm, r.mulQ
	b := make([]float64, k)
	for i, f := range r.fixed {
		if f {
			yr[i] = r.value[i] // y' + v, for the right-hand side only
		}
	}
	lp.ucTMul(b, yr, 1)
	for i, f := range r.fixed {
		if f {
			yr[i] = 0
		}
	}
	for a, f := range r.inv {
		if f == 0 {
			b[a] = 0
		}
	}
	x := make([]float64, k)
	copy(x, z0)
	res := make([]float64, k)
	mulQ(res, x)
	for i := range res {
		res[i] = b[i] - res[i]
	}
	bn := math.Sqrt(dot(b, b))
	zr := make([]float64, k)
	ap := make([]float64, k)
	if bn > 0 {
		r.precond(zr, res)
		p := append([]float64(nil), zr...)
		rz := dot(res, zr)
		for it := 0; math.Sqrt(dot(res, res)) > tol*bn; it++ {
			if it == maxCGIter {
				return nil, nil, fmt.Errorf("conjugate gradients did not converge in %d iterations", maxCGIter)
			}
			mulQ(ap, p)
			alpha := rz / dot(p, ap)
			floats.AddScaled(x, alpha, p)
			floats.AddScaled(res, -alpha, ap)
			r.precond(zr, res)
			old := rz
			rz = dot(res, zr)
			for i := range p {
				p[i] = zr[i] + rz/old*p[i]
			}
		}
	}
	// Bottom rows of x_R = y' − W'·Uc_R·z; the fixed ones at their values.
	r.vmul(x)
	bottom = make([]float64, m)
	for j := range bottom {
		if r.fixed[k+j] {
			bottom[j] = r.value[k+j]
			continue
		}
		v := yr[k+j] - d[k+j]*vn[k+j]
		if T > 0 {
			v -= floats.Dot(u[(k+j)*T:(k+j+1)*T], sm)
		}
		bottom[j] = v
	}
	return bottom, x, nil
}
