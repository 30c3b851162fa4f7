package reconcile

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/mat"

	"trueup/hierarchy"

	"trueup/inputerr"
)

// denseSW returns S (n × m) and the projection's W (n × n), both formed
// densely from their definitions.
func denseSW(t *testing.T, p Problem, cov Covariance) (*mat.Dense, *mat.Dense) {
	t.Helper()
	st := p.Structure
	n, m := st.S.Dims()
	s := mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		for j := 0; j < m; j++ {
			s.Set(i, j, st.S.At(i, j))
		}
	}
	w := mat.NewDense(n, n, nil)
	switch cov {
	case CovStructural:
		for i := 0; i < n; i++ {
			w.Set(i, i, float64(len(st.S.Row(i))))
		}
	case CovShrink:
		errc, err := p.errorCov()
		if err != nil {
			t.Fatal(err)
		}
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				w.Set(i, j, errc.at(i, j))
			}
		}
	default:
		t.Fatalf("no dense W for %s", cov)
	}
	return s, w
}

func inverse(t *testing.T, a mat.Matrix) *mat.Dense {
	t.Helper()
	out, ok := tryInverse(a)
	if !ok {
		t.Fatal("singular matrix")
	}
	return out
}

// tryInverse inverts a, reporting false when it is singular.
func tryInverse(a mat.Matrix) (*mat.Dense, bool) {
	var out mat.Dense
	if err := out.Inverse(a); err != nil {
		return nil, false
	}
	return &out, true
}

// restrictedGLS is the locked MinT of one step written directly: the
// restricted least squares estimator (the closed form of least squares
// under linear equality constraints, as in Greene, Econometric Analysis,
// "restricted least squares"; from memory), here in the W⁻¹ metric of
// MinT, as Zhang et al. (2023, "Optimal forecast reconciliation with
// immutable forecasts", EJOR; from memory) state reconciliation with
// immutable forecasts:
//
//	b̂ = P⁻¹SᵀW⁻¹ŷ,  P = SᵀW⁻¹S
//	b̃ = b̂ − P⁻¹Cᵀ(CP⁻¹Cᵀ)⁻¹(Cb̂ − c)
//
// It returns b̃, M = I − P⁻¹Cᵀ(CP⁻¹Cᵀ)⁻¹C and G = P⁻¹SᵀW⁻¹ (the
// reconciled bottom error is M·G·e), and false when CP⁻¹Cᵀ is singular.
func restrictedGLS(t *testing.T, s, w *mat.Dense, yhat []float64, locked []int, values []float64) ([]float64, *mat.Dense, *mat.Dense, bool) {
	t.Helper()
	n, m := s.Dims()
	wi := inverse(t, w)
	var swi, pm mat.Dense
	swi.Mul(s.T(), wi) // SᵀW⁻¹
	pm.Mul(&swi, s)
	pi := inverse(t, &pm)
	var g mat.Dense
	g.Mul(pi, &swi) // G = P⁻¹SᵀW⁻¹
	var bhat mat.VecDense
	bhat.MulVec(&g, mat.NewVecDense(n, yhat))
	if len(locked) == 0 {
		return bhat.RawVector().Data, eye(m), &g, true
	}
	c := mat.NewDense(len(locked), m, nil)
	for a, i := range locked {
		c.SetRow(a, mat.Row(nil, i, s))
	}
	var pct, cpc mat.Dense
	pct.Mul(pi, c.T())
	cpc.Mul(c, &pct)
	cpci, ok := tryInverse(&cpc)
	if !ok {
		return nil, nil, nil, false
	}
	var r mat.VecDense
	r.MulVec(c, &bhat)
	r.SubVec(&r, mat.NewVecDense(len(values), values))
	var adj, corr mat.VecDense
	adj.MulVec(cpci, &r)
	corr.MulVec(&pct, &adj)
	var bt mat.VecDense
	bt.SubVec(&bhat, &corr)
	var k1, k, mm mat.Dense
	k1.Mul(&pct, cpci)
	k.Mul(&k1, c)
	mm.Sub(eye(m), &k)
	return bt.RawVector().Data, &mm, &g, true
}

// TestLockedMinTMatchesDenseFormula checks locked MinT on both solvers
// against restrictedGLS, forecasts and variances to 1e-8: the variance
// of node i at step k is the diagonal of S·M·G·C_h·W1·C_h·Gᵀ·Mᵀ·Sᵀ (see
// Solution.Variance: G·C_h·e is the unlocked bottom error at step h, C_h
// every node's growth, and M moves it onto the locks), zero
// at locked nodes. Locks: the total at step 1; a region, a category and
// one bottom series at step 2; nothing at step 3.
func TestLockedMinTMatchesDenseFormula(t *testing.T) {
	st := grouped(t, 2, 3, 3)
	for _, cov := range []Covariance{CovShrink, CovStructural} {
		p := problemFor(st, 40, 3, 7)
		region, _ := st.Lookup([]string{"R1", "", ""})
		cat, _ := st.Lookup([]string{"", "", "C2"})
		leaf, _ := st.Lookup([]string{"R0", "R0S1", "C0"})
		p.Locks = []Lock{
			{Node: 0, Step: 0, Value: 1.1 * p.Base[0][0]},
			{Node: region, Step: 1, Value: 0.8 * p.Base[region][1]},
			{Node: cat, Step: 1, Value: p.Base[cat][1] + 25},
			{Node: leaf, Step: 1, Value: 0},
		}
		s, w := denseSW(t, p, cov)
		vc, _ := p.varianceCov()
		n, m := s.Dims()
		w1 := mat.NewDense(n, n, nil)
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				w1.Set(i, j, vc.at(i, j))
			}
		}
		for _, solver := range []Solver{SolverDense, SolverLarge} {
			p.Solver = solver
			sol, err := Projection{Cov: cov}.Reconcile(p)
			if err != nil {
				t.Fatal(err)
			}
			checkCoherent(t, st, sol)
			free := Problem{Structure: st, Base: p.Base, BaseVar: p.BaseVar, Residuals: p.Residuals, Solver: solver}
			unl, err := Projection{Cov: cov}.Reconcile(free)
			if err != nil {
				t.Fatal(err)
			}
			for k := 0; k < 3; k++ {
				var locked []int
				var values []float64
				for _, l := range p.Locks {
					if l.Step == k {
						locked, values = append(locked, l.Node), append(values, l.Value)
					}
				}
				yhat := make([]float64, n)
				for i := range yhat {
					yhat[i] = p.Base[i][k]
				}
				bt, mm, g, ok := restrictedGLS(t, s, w, yhat, locked, values)
				if !ok {
					t.Fatal("singular locks")
				}
				var y mat.VecDense
				y.MulVec(s, mat.NewVecDense(m, bt))
				// Variance: F = M·G·C_h, V = diag(S·F·W1·Fᵀ·Sᵀ).
				cg := mat.DenseCopyOf(g)
				for j := 0; j < m; j++ {
					row := cg.RawRowView(j)
					for i := range row {
						row[i] *= math.Sqrt(p.BaseVar[i][k] / vc.D[i])
					}
				}
				var f, sf, v mat.Dense
				f.Mul(mm, cg)
				sf.Mul(s, &f)
				v.Mul(&sf, w1)
				for i := 0; i < n; i++ {
					want := mat.Dot(v.RowView(i), sf.RowView(i))
					if d := relDiff(sol.Forecast[i][k], y.AtVec(i)); d > 1e-8 {
						t.Errorf("%s %v: %s step %d: forecast %g, dense formula %g", cov, solver, st.Label(i), k+1, sol.Forecast[i][k], y.AtVec(i))
					}
					if d := relDiff(sol.Variance[i][k], want); d > 1e-8 {
						t.Errorf("%s %v: %s step %d: variance %g, dense formula %g", cov, solver, st.Label(i), k+1, sol.Variance[i][k], want)
					}
					if relDiff(sol.Unlocked[i][k], unl.Forecast[i][k]) > 1e-10 {
						t.Errorf("%s %v: %s step %d: unlocked %g, reconcile without locks %g", cov, solver, st.Label(i), k+1, sol.Unlocked[i][k], unl.Forecast[i][k])
					}
				}
				for a, i := range locked {
					if sol.Forecast[i][k] != values[a] || sol.Variance[i][k] != 0 {
						t.Errorf("%s %v: locked %s step %d: %g ± %g, want exactly %g ± 0", cov, solver, st.Label(i), k+1, sol.Forecast[i][k], sol.Variance[i][k], values[a])
					}
				}
			}
		}
	}
}

// TestLockContradictions checks that locks no forecast can meet are
// input errors naming the nodes, and that a lock implied by others (a
// parent locked to exactly the sum of its locked children) is accepted.
func TestLockContradictions(t *testing.T) {
	st := grouped(t, 2, 2, 2)
	r0, _ := st.Lookup([]string{"R0", "", ""})
	r1, _ := st.Lookup([]string{"R1", "", ""})
	for _, c := range []struct {
		name    string
		nonneg  bool
		locks   []Lock
		want    []string // in the message; nil: accepted
		implied bool
	}{
		{"total against both regions", false, []Lock{{0, 0, 100}, {r0, 0, 30}, {r1, 0, 60}},
			[]string{"step 1", "total is locked to 100", "region=R0 (30)", "region=R1 (60)", "fix it at 90"}, false},
		{"total equal to both regions", false, []Lock{{0, 1, 90}, {r0, 1, 30}, {r1, 1, 60}}, nil, true},
		{"total below one region, non-negative", true, []Lock{{0, 0, 20}, {r0, 0, 30}},
			[]string{"step 1", "total", "20", "region=R0 (30)"}, false},
		{"total below one region, signed", false, []Lock{{0, 0, 20}, {r0, 0, 30}}, nil, false},
		{"negative lock, non-negative", true, []Lock{{r1, 0, -1}},
			[]string{"region=R1", "below zero"}, false},
	} {
		p := problemFor(st, 30, 2, 5)
		p.Locks, p.Nonnegative = c.locks, c.nonneg
		for _, solver := range []Solver{SolverDense, SolverLarge} {
			p.Solver = solver
			sol, err := Projection{Cov: CovShrink}.Reconcile(p)
			if c.want == nil {
				if err != nil {
					t.Errorf("%s: %v", c.name, err)
					continue
				}
				for _, l := range c.locks {
					if math.Abs(sol.Forecast[l.Node][l.Step]-l.Value) > 1e-9*math.Max(1, math.Abs(l.Value)) {
						t.Errorf("%s: %s is %g, locked to %g", c.name, st.Label(l.Node), sol.Forecast[l.Node][l.Step], l.Value)
					}
				}
				continue
			}
			if err == nil || !inputerr.Is(err) {
				t.Errorf("%s: got %v, want an input error", c.name, err)
				continue
			}
			for _, w := range c.want {
				if !strings.Contains(err.Error(), w) {
					t.Errorf("%s: %q does not name %q", c.name, err, w)
				}
			}
		}
	}
}

// TestLockedNonnegative checks locked, non-negative MinT against an
// exhaustive solution of the same quadratic programme: for every set of
// bottom series held at zero, the equality-constrained minimizer (the
// restricted least squares closed form of restrictedGLS on the free
// series); the answer is the feasible one (non-negative) of least
// objective. Both solvers must find it, to 1e-7.
func TestLockedNonnegative(t *testing.T) {
	st := grouped(t, 2, 2, 2) // 8 bottom series: 256 sets
	p := problemFor(st, 30, 1, 11)
	off := st.BottomOffset()
	for j := 0; j < st.NumBottom(); j += 3 {
		p.Base[off+j][0] = -40
	}
	r0, _ := st.Lookup([]string{"R0", "", ""})
	c1, _ := st.Lookup([]string{"", "", "C1"})
	closed, _ := st.Lookup([]string{"R1", "R1S1", ""}) // a store locked to zero
	p.Nonnegative = true
	// Bottom series 0 (R0, R0S0, C0) has a base of −40: locking its store
	// to 30 and its sibling to 25 leaves it 5, which the programme must
	// free from zero.
	store, _ := st.Lookup([]string{"R0", "R0S0", ""})
	t.Run("aggregates", func(t *testing.T) {
		checkLockedNonnegative(t, st, p, []Lock{{Node: 0, Step: 0, Value: 120}, {Node: r0, Step: 0, Value: 70}, {Node: c1, Step: 0, Value: 20}, {Node: closed, Step: 0, Value: 0}})
	})
	t.Run("a parent and a child", func(t *testing.T) {
		checkLockedNonnegative(t, st, p, []Lock{{Node: store, Step: 0, Value: 30}, {Node: off + 1, Step: 0, Value: 25}})
	})
}

// checkLockedNonnegative is TestLockedNonnegative for one set of locks.
func checkLockedNonnegative(t *testing.T, st *hierarchy.Structure, p Problem, locks []Lock) {
	p.Locks = locks
	off := st.BottomOffset()
	s, w := denseSW(t, p, CovShrink)
	n, m := s.Dims()
	wi := inverse(t, w)
	y := make([]float64, n)
	for i := range y {
		y[i] = p.Base[i][0]
	}
	objective := func(b []float64) float64 { // (y − Sb)ᵀW⁻¹(y − Sb)
		var e mat.VecDense
		e.MulVec(s, mat.NewVecDense(m, b))
		e.SubVec(mat.NewVecDense(n, y), &e)
		return mat.Inner(&e, wi, &e)
	}
	best, bestObj := []float64(nil), math.Inf(1)
	for mask := 0; mask < 1<<m; mask++ {
		var freeCols []int
		for j := 0; j < m; j++ {
			if mask&(1<<j) == 0 {
				freeCols = append(freeCols, j)
			}
		}
		if len(freeCols) == 0 {
			continue
		}
		sf := mat.NewDense(n, len(freeCols), nil)
		for a, j := range freeCols {
			sf.SetCol(a, mat.Col(nil, j, s))
		}
		// The locks as rows of S restricted to the free series; a lock
		// with no free series left holds if it is zero, and makes this
		// set infeasible otherwise.
		var locked []int
		var values []float64
		ok := true
		for _, l := range p.Locks {
			any := false
			for _, a := range freeCols {
				any = any || s.At(l.Node, a) != 0
			}
			if any {
				locked, values = append(locked, l.Node), append(values, l.Value)
			}
			ok = ok && (any || l.Value == 0)
		}
		if !ok {
			continue
		}
		// restrictedGLS works on the structure's rows; the free series'
		// S is sf, and its rows at the locked nodes are C_F.
		var pm mat.Dense
		var swi mat.Dense
		swi.Mul(sf.T(), wi)
		pm.Mul(&swi, sf)
		if mat.Det(&pm) == 0 {
			continue
		}
		bf, _, _, ok := restrictedGLS(t, sf, w, y, locked, values)
		if !ok {
			continue // the locks are dependent on these free series
		}
		b := make([]float64, m)
		feasible := true
		for a, j := range freeCols {
			b[j] = bf[a]
			feasible = feasible && bf[a] >= -1e-9
		}
		// Locks that contradict each other on these free series (two
		// locked rows equal here) leave a near-singular system whose
		// solution does not meet them: such a set is infeasible.
		for _, l := range p.Locks {
			var sum float64
			for _, j := range st.S.Row(l.Node) {
				sum += b[j]
			}
			feasible = feasible && math.Abs(sum-l.Value) <= 1e-8*math.Max(1, math.Abs(l.Value))
		}
		if feasible {
			if o := objective(b); o < bestObj {
				best, bestObj = b, o
			}
		}
	}
	if best == nil {
		t.Fatal("no feasible set: the test's locks cannot hold")
	}

	zeros := 0
	for _, v := range best {
		if v < 1e-9 {
			zeros++
		}
	}
	if zeros == 0 {
		t.Fatal("test does not exercise non-negativity")
	}
	for _, solver := range []Solver{SolverDense, SolverLarge} {
		p.Solver = solver
		sol, err := Projection{Cov: CovShrink}.Reconcile(p)
		if err != nil {
			t.Fatal(err)
		}
		// A locked forecast is its value exactly; its parts sum to it to
		// the solver's relative residual (solveTol, 1e-12 of the base's
		// incoherence), which can come to a little over 1e-12 of the
		// value.
		checkCoherentWithin(t, st, sol, 1e-10)
		for j, v := range best {
			if d := math.Abs(sol.Bottom[j][0] - v); d > 1e-7*math.Max(1, math.Abs(v)) {
				t.Errorf("%v: bottom %s is %g, exhaustive search %g", solver, st.Label(off+j), sol.Bottom[j][0], v)
			}
		}
		for _, l := range p.Locks {
			if sol.Forecast[l.Node][0] != l.Value {
				t.Errorf("%v: %s is %g, locked to %g", solver, st.Label(l.Node), sol.Forecast[l.Node][0], l.Value)
			}
		}
		free := p
		free.Locks = nil
		unl, err := Projection{Cov: CovShrink}.Reconcile(free)
		if err != nil {
			t.Fatal(err)
		}
		// The comparison is solved to comparisonTol (an iterative
		// solver's relative residual; the dense path is exact); here it
		// agrees to about 5e-8.
		for i := range unl.Forecast {
			if relDiff(sol.Unlocked[i][0], unl.Forecast[i][0]) > comparisonTol {
				t.Errorf("%v: %s: unlocked %g, non-negative reconcile without locks %g", solver, st.Label(i), sol.Unlocked[i][0], unl.Forecast[i][0])
			}
		}
	}
}

// TestRestrictedPieces checks the restricted solve's pieces against
// dense matrices formed here from their definitions, with some bottom
// series bound at zero and some nodes locked (F, values v_F). W' is the
// conditional covariance W_RR − W_RF·W_FF⁻¹·W_FR and
// y' = y_R − W_RF·W_FF⁻¹·(y_F − v_F), both formed with a dense inverse
// (common linear algebra, the Schur complement); restricted computes them
// through K_F and the Woodbury identity. Q' = Uc_RᵀW'Uc_R, the Woodbury
// preconditioner P̃ = D0' + Uc_Rᵀ(W' − Δ_R)Uc_R and M (P̃ with the rows
// and columns of the locked aggregates exact) are formed term by term;
// applied to P̃·v and M·v the preconditioners must give v back. A wrong sign or a missing term in the
// preconditioner breaks the identity; the solves would still converge,
// only slower, so the non-negative tests cannot see it.
func TestRestrictedPieces(t *testing.T) {
	st := tree(t, 2, 2, 3)
	p := problemFor(st, 60, 1, 4)
	n := len(st.Nodes)
	off := st.BottomOffset()
	nodes := []int{0, 1, off + 1} // the total, an aggregate, a bottom series
	values := []float64{50, 20, 3}
	free := make([]bool, st.NumBottom())
	for j := range free {
		free[j] = j%3 != 0
	}
	for _, cov := range []Covariance{CovShrink, CovVariance} {
		errc, err := p.errorCov()
		if err != nil {
			t.Fatal(err)
		}
		w, err := Projection{Cov: cov}.weights(&p, errc, n)
		if err != nil {
			t.Fatal(err)
		}
		lp, err := newLargeProjector(st, w)
		if err != nil {
			t.Fatal(err)
		}
		qp, err := lp.qp()
		if err != nil {
			t.Fatal(err)
		}
		r, err := qp.(*largeQP).restrict(free, nodes, values)
		if err != nil {
			t.Fatal(err)
		}
		k := lp.k
		v := make([]float64, n)
		fixed := make([]bool, n)
		for j, f := range free {
			fixed[off+j] = !f
		}
		for l, i := range nodes {
			fixed[i], v[i] = true, values[l]
		}
		var rIdx, fIdx []int
		for i, f := range fixed {
			if f {
				fIdx = append(fIdx, i)
			} else {
				rIdx = append(rIdx, i)
			}
		}
		sub := func(rows, cols []int) *mat.Dense {
			m := mat.NewDense(len(rows), len(cols), nil)
			for a, i := range rows {
				for b, j := range cols {
					m.Set(a, b, w.at(i, j))
				}
			}
			return m
		}
		var wffInv, tmp, cond mat.Dense
		if err := wffInv.Inverse(sub(fIdx, fIdx)); err != nil {
			t.Fatal(err)
		}
		tmp.Mul(sub(rIdx, fIdx), &wffInv)
		cond.Mul(&tmp, sub(fIdx, rIdx))
		// y' against the dense conditional mean.
		y := make([]float64, n)
		for i := range y {
			y[i] = 10 * math.Cos(float64(i))
		}
		dF := make([]float64, len(fIdx))
		for a, i := range fIdx {
			dF[a] = y[i] - v[i]
		}
		var shift mat.VecDense
		shift.MulVec(&tmp, mat.NewVecDense(len(dF), dF))
		got := r.target(y)
		for a, i := range rIdx {
			if want := y[i] - shift.AtVec(a); math.Abs(got[i]-want) > 1e-9*math.Max(1, math.Abs(want)) {
				t.Errorf("%s: y' at %s = %g, dense %g", cov, st.Label(i), got[i], want)
			}
		}
		for _, i := range fIdx {
			if got[i] != 0 {
				t.Errorf("%s: y' at fixed %s = %g", cov, st.Label(i), got[i])
			}
		}
		// The low-rank part of W' at full size (zero on F): W' − Δ_R.
		lowRank := mat.NewDense(n, n, nil)
		for a, i := range rIdx {
			for b, j := range rIdx {
				x := w.at(i, j) - cond.At(a, b)
				if i == j {
					x -= w.Delta[i]
				}
				lowRank.Set(i, j, x)
			}
		}
		ucR := mat.NewDense(n, k, nil) // Uc_R: Uc with the rows of F zero
		for a := 0; a < k; a++ {
			if !fixed[a] {
				ucR.Set(a, a, 1)
			}
			for _, j := range st.S.Row(a) {
				if !fixed[off+j] {
					ucR.Set(off+j, a, -1)
				}
			}
		}
		var pre, lu, q, wu mat.Dense
		lu.Mul(lowRank, ucR)
		pre.Mul(ucR.T(), &lu)
		for a := 0; a < k; a++ {
			var d0 float64
			for i := 0; i < n; i++ {
				d0 += ucR.At(i, a) * ucR.At(i, a) * w.Delta[i]
			}
			pre.Set(a, a, pre.At(a, a)+d0)
		}
		wr := mat.DenseCopyOf(lowRank) // W' = lowRank + Δ_R
		for _, i := range rIdx {
			wr.Set(i, i, wr.At(i, i)+w.Delta[i])
		}
		wu.Mul(wr, ucR)
		q.Mul(ucR.T(), &wu) // Q' = Uc_RᵀW'Uc_R
		x := make([]float64, k)
		for i := range x {
			x[i] = math.Sin(float64(3*i + 1))
		}
		var px mat.VecDense
		px.MulVec(&pre, mat.NewVecDense(k, x))
		back := make([]float64, k)
		r.woodbury(back, px.RawVector().Data, r.inv, r.core)
		for i := range x {
			if math.Abs(back[i]-x[i]) > 1e-9 {
				t.Errorf("%s: entry %d: P̃⁻¹·P̃·x = %g, x = %g", cov, i, back[i], x[i])
			}
		}
		// The balancing preconditioner with Z the unit columns of the
		// locked aggregates (the total and node 1), formed densely:
		// (I − Z·E⁻¹·ZᵀQ')·P̃⁻¹·(I − Q'Z·E⁻¹·Zᵀ) + Z·E⁻¹·Zᵀ, E = ZᵀQ'Z.
		if r.agg == nil || len(r.agg.rows) != 2 || r.agg.rows[0] != 0 || r.agg.rows[1] != 1 {
			t.Fatalf("%s: the coarse correction is not on the locked aggregates", cov)
		}
		z := mat.NewDense(k, 2, nil)
		z.Set(0, 0, 1)
		z.Set(1, 1, 1)
		var qz, e, eInv, pInv, ze, zezq, left, right, bal, zez mat.Dense
		qz.Mul(&q, z)
		e.Mul(z.T(), &qz)
		if err := eInv.Inverse(&e); err != nil {
			t.Fatal(err)
		}
		if err := pInv.Inverse(&pre); err != nil {
			t.Fatal(err)
		}
		ze.Mul(z, &eInv)
		zezq.Mul(&ze, qz.T())
		id := mat.NewDense(k, k, nil)
		for i := 0; i < k; i++ {
			id.Set(i, i, 1)
		}
		left.Sub(id, &zezq)
		right.Mul(&left, &pInv)
		bal.Mul(&right, left.T())
		zez.Mul(&ze, z.T())
		bal.Add(&bal, &zez)
		var wantB mat.VecDense
		wantB.MulVec(&bal, mat.NewVecDense(k, x))
		gotB := make([]float64, k)
		r.precond(gotB, x)
		for i := range x {
			if math.Abs(gotB[i]-wantB.AtVec(i)) > 1e-9*math.Max(1, math.Abs(wantB.AtVec(i))) {
				t.Errorf("%s: entry %d: balancing preconditioner %g, dense %g", cov, i, gotB[i], wantB.AtVec(i))
			}
		}
		// Q' itself, against mulQ.
		qx := make([]float64, k)
		r.mulQ(qx, x)
		var want mat.VecDense
		want.MulVec(&q, mat.NewVecDense(k, x))
		for i := range x {
			if math.Abs(qx[i]-want.AtVec(i)) > 1e-9*math.Max(1, math.Abs(want.AtVec(i))) {
				t.Errorf("%s: (Q'·x)_%d = %g, dense %g", cov, i, qx[i], want.AtVec(i))
			}
		}
	}
}

// TestLockedSampledVariance: on the large path with more late-starting
// nodes than sample paths, the late nodes' part of each variance is
// sampled (factorVariance), and the locks' correction M is applied to the
// sampled columns as to the exact ones. Locked nodes come out with zero
// variance exactly, and every other variance agrees with the dense path's
// exact one (itself checked against the published formula by
// TestLockedMinTMatchesDenseFormula) within the sampling error.
//
// The tolerance: a node's sampled part is the mean of N squared Gaussian
// path values, whose relative standard deviation is √(2/N) (the variance
// of χ²_N/N is 2/N; common statistics); the control variate only lowers
// it, and the exact rank-T part adds no error, so the relative error of
// the whole variance is at most that of the sampled part. Five standard
// deviations, 5·√(2/N), bound every node's error here: a chance of about
// 6e-7 a node under a normal approximation, and the paths are seeded, so
// the outcome does not vary between runs.
func TestLockedSampledVariance(t *testing.T) {
	st := retail(t, 2, 3, 2, 4, 26) // 1,971 nodes, 1,248 bottom
	p := problemFor(st, 60, 3, 29)
	late := lateStarts(&p, 1, 11)
	const paths = 1000
	if late <= paths {
		t.Fatalf("%d late nodes: the test wants more than %d, so that the variances are sampled", late, paths)
	}
	p.Paths = paths
	state, _ := st.Lookup([]string{"S1", "", "", "", ""})
	dept, _ := st.Lookup([]string{"", "", "C0", "C0D2", ""})
	item, _ := st.Lookup([]string{"S0", "S0T1", "C1", "C1D3", "C1D3I7"})
	p.Locks = []Lock{
		{Node: 0, Step: 0, Value: 1.05 * p.Base[0][0]},
		{Node: state, Step: 1, Value: 0.9 * p.Base[state][1]},
		{Node: dept, Step: 1, Value: p.Base[dept][1] + 10},
		{Node: item, Step: 1, Value: 0},
	}
	d, l := denseAndLarge(t, Projection{Cov: CovShrink}, p)
	if l.Notes["variance_paths"] != paths {
		t.Fatalf("variance_paths %v, want %d: the variances were not sampled", l.Notes["variance_paths"], paths)
	}
	locked := map[[2]int]bool{}
	for _, lk := range p.Locks {
		locked[[2]int{lk.Node, lk.Step}] = true
		if v := l.Variance[lk.Node][lk.Step]; v != 0 {
			t.Errorf("locked %s step %d: sampled variance %g, want 0", st.Label(lk.Node), lk.Step+1, v)
		}
	}
	tol := 5 * math.Sqrt(2.0/paths)
	worst := 0.0
	for i := range d.Variance {
		for k, v := range d.Variance[i] {
			if locked[[2]int{i, k}] {
				continue
			}
			r := math.Abs(l.Variance[i][k]-v) / v
			worst = math.Max(worst, r)
			if r > tol {
				t.Errorf("%s step %d: sampled variance %g, dense %g (%.3f relative, bound %.3f)", st.Label(i), k+1, l.Variance[i][k], v, r, tol)
			}
		}
	}
	t.Logf("%d late nodes, %d paths: worst relative error %.4f, bound %.3f", late, paths, worst, tol)
}

// TestLockFreesSeriesItNeeds: a store locked to 30 with one of its two
// series locked to 25 needs the other at 5; on a free set that holds that
// other one at zero the restricted solve could not meet the store's lock,
// so equalities.solve frees it (and asks for another solve) instead.
func TestLockFreesSeriesItNeeds(t *testing.T) {
	eq := &equalities{nodes: []int{10, 21}, rows: [][]int{{0, 1}, {1}}, values: []float64{30, 25}}
	free := []bool{false, true, true}
	if _, _, freed, err := eq.solve(nil, free, nil, nil, 0); err != nil || !freed {
		t.Fatalf("freed %v, err %v; want the held series freed", freed, err)
	}
	if !free[0] {
		t.Fatal("series 0 is still held at zero")
	}
}
