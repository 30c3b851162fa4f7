package reconcile

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"

	"trueup/hierarchy"
)

// TestTwoChildOLS is the worked example of a total with two children A, B.
// S = [1 1; 1 0; 0 1], so SᵀS = [2 1; 1 2], (SᵀS)⁻¹ = (1/3)[2 −1; −1 2] and
// Sᵀŷ = (ŷ_T + ŷ_A, ŷ_T + ŷ_B). Hence
//
//	b̃_A = (2(ŷ_T+ŷ_A) − (ŷ_T+ŷ_B))/3 = (ŷ_T + 2ŷ_A − ŷ_B)/3
//	b̃_B = (ŷ_T − ŷ_A + 2ŷ_B)/3
//	ỹ_T = b̃_A + b̃_B = (2ŷ_T + ŷ_A + ŷ_B)/3
//
// (Hyndman, Ahmed, Athanasopoulos & Shang 2011, eq. 7 with W = I.)
func TestTwoChildOLS(t *testing.T) {
	st, err := hierarchy.Build([]hierarchy.Chain{{"item"}}, [][]string{{"A"}, {"B"}})
	if err != nil {
		t.Fatal(err)
	}
	yt, ya, yb := 100.0, 70.0, 20.0
	p := Problem{Structure: st, Base: [][]float64{{yt}, {ya}, {yb}}}
	for _, solver := range []Solver{SolverDense, SolverLarge} {
		p.Solver = solver
		sol, err := Projection{Cov: CovIdentity}.Reconcile(p)
		if err != nil {
			t.Fatal(err)
		}
		want := []float64{(2*yt + ya + yb) / 3, (yt + 2*ya - yb) / 3, (yt - ya + 2*yb) / 3}
		for i, w := range want {
			if relDiff(sol.Forecast[i][0], w) > 1e-12 {
				t.Errorf("solver %d %s: %g, want %g", solver, st.Label(i), sol.Forecast[i][0], w)
			}
		}
	}
}

var allCovs = []Covariance{CovIdentity, CovStructural, CovVariance, CovSample, CovShrink}

// TestDenseAndLargeAgree holds the two solvers to 1e-8 relative on every
// covariance choice, and checks coherence.
func TestDenseAndLargeAgree(t *testing.T) {
	st := grouped(t, 2, 3, 3) // 48 nodes
	for _, cov := range allCovs {
		T := 20
		if cov == CovSample {
			T = 80
		}
		d, l := denseAndLarge(t, Projection{Cov: cov}, problemFor(st, T, 3, 21))
		checkCoherent(t, st, d)
		checkCoherent(t, st, l)
		for i := range d.Forecast {
			for k := range d.Forecast[i] {
				if relDiff(d.Forecast[i][k], l.Forecast[i][k]) > 1e-8 {
					t.Fatalf("%s %s: dense %.12g large %.12g", cov, st.Label(i), d.Forecast[i][k], l.Forecast[i][k])
				}
			}
		}
	}
}

// TestStatisticsTolerance: a Problem marked Statistics (the in-sample
// errors behind the intervals' shape) is solved on the large path to
// StatisticsTol; its answers agree with the dense path's exact ones to a
// small multiple of that fraction of the problem's scale, and stay
// exactly coherent.
func TestStatisticsTolerance(t *testing.T) {
	st := grouped(t, 3, 8, 6) // 3 regions × 8 stores × 6 categories
	p := problemFor(st, 40, 5, 8)
	p.Statistics = true
	var scale float64
	for _, row := range p.Base {
		for _, v := range row {
			scale = math.Max(scale, math.Abs(v))
		}
	}
	d, l := denseAndLarge(t, Projection{Cov: CovShrink}, p)
	checkCoherent(t, st, l)
	for i := range d.Forecast {
		for k := range d.Forecast[i] {
			if diff := math.Abs(d.Forecast[i][k] - l.Forecast[i][k]); diff > 100*StatisticsTol*scale {
				t.Fatalf("%s step %d: dense %.12g large %.12g, %.2g of the scale", st.Label(i), k+1, d.Forecast[i][k], l.Forecast[i][k], diff/scale)
			}
		}
	}
}

// denseG returns G for a covariance choice through the dense path.
func denseG(t *testing.T, p Problem, cov Covariance) *mat.Dense {
	t.Helper()
	errc, err := p.errorCov()
	if err != nil {
		t.Fatal(err)
	}
	wg, err := Projection{Cov: cov}.weights(&p, errc, len(p.Structure.Nodes))
	if err != nil {
		t.Fatal(err)
	}
	g, err := newDenseProjector(p.Structure, wg)
	if err != nil {
		t.Fatal(err)
	}
	return g.g
}

// TestProjectionIdentities: S·G·S = S for every projection (G·S = I,
// Wickramasuriya et al. 2019, Lemma 1), and OLS is the orthogonal
// projection onto range(S): Sᵀ(ŷ − ỹ) = 0.
func TestProjectionIdentities(t *testing.T) {
	st := tree(t, 2, 2, 3)
	p := problemFor(st, 60, 1, 4)
	s := denseS(st)
	n, m := s.Dims()
	for _, cov := range allCovs {
		g := denseG(t, p, cov)
		var sgs, gs mat.Dense
		gs.Mul(g, s)
		sgs.Mul(s, &gs)
		if !mat.EqualApprox(&sgs, s, 1e-10) {
			t.Errorf("%s: S·G·S ≠ S", cov)
		}
		// The large path's G·S = I, column by column.
		errc, _ := p.errorCov()
		wg, _ := Projection{Cov: cov}.weights(&p, errc, n)
		lp, err := newLargeProjector(st, wg)
		if err != nil {
			t.Fatal(err)
		}
		lgs, err := lp.apply(s, solveTol)
		if err != nil {
			t.Fatal(err)
		}
		if !mat.EqualApprox(lgs, eye(m), 1e-9) {
			t.Errorf("%s: large path G·S ≠ I", cov)
		}
	}
	p.Solver = SolverDense
	sol, err := Projection{Cov: CovIdentity}.Reconcile(p)
	if err != nil {
		t.Fatal(err)
	}
	d := make([]float64, n)
	for i := range d {
		d[i] = p.Base[i][0] - sol.Forecast[i][0]
	}
	for j, v := range st.S.MulTransVec(nil, d) {
		if math.Abs(v) > 1e-9 {
			t.Errorf("OLS residual not orthogonal to column %d of S: %g", j, v)
		}
	}
}

func eye(m int) *mat.Dense {
	e := mat.NewDense(m, m, nil)
	for i := 0; i < m; i++ {
		e.Set(i, i, 1)
	}
	return e
}

// TestMinTTrace: when G is built from the same W the variances use (the
// sample covariance W1, and base variances equal to its diagonal so that
// W_1 = W), MinT's reconciled variance has a trace no larger than that of
// OLS, WLS, the shrinkage projection or bottom-up (Wickramasuriya et al.
// 2019, Theorem 1: MinT minimizes tr(S·G·W·Gᵀ·Sᵀ) over G with S·G·S = S).
func TestMinTTrace(t *testing.T) {
	st := grouped(t, 2, 3, 4)
	p := problemFor(st, 60, 1, 9)
	w, _ := p.varianceCov()
	for i := range p.BaseVar {
		p.BaseVar[i][0] = w.D[i]
	}
	p.Solver = SolverDense
	trace := func(cov Covariance) float64 {
		sol, err := Projection{Cov: cov}.Reconcile(p)
		if err != nil {
			t.Fatal(err)
		}
		var s float64
		for i := range sol.Variance {
			s += sol.Variance[i][0]
		}
		return s
	}
	mint := trace(CovSample)
	for _, cov := range []Covariance{CovIdentity, CovStructural, CovVariance, CovShrink} {
		if o := trace(cov); !(mint <= o*(1+1e-12)) {
			t.Errorf("trace MinT %g > trace %s %g", mint, cov, o)
		}
	}
	// Bottom-up is a G with S·G·S = S too.
	bu, _ := BottomUp{}.Reconcile(p)
	var s float64
	for i := range bu.Variance {
		s += bu.Variance[i][0]
	}
	if !(mint <= s) {
		t.Errorf("trace MinT %g > bottom-up %g", mint, s)
	}
}

// TestProjectionVarianceExact checks the dense variance against the
// direct matrix product diag(S·G·C_k·W1·C_k·Gᵀ·Sᵀ), G from the shrinkage
// W, W1 the sample covariance and C_k every node's growth at step k; and,
// above exactGrowthMaxWork (lowered here), against
// diag(S·C_k·G·W1·Gᵀ·C_k·Sᵀ) with the bottom series' growth.
func TestProjectionVarianceExact(t *testing.T) {
	st := grouped(t, 2, 2, 3)
	p := problemFor(st, 30, 2, 13)
	p.Solver = SolverDense
	g := denseG(t, p, CovShrink)
	w, _ := p.varianceCov()
	wd := denseW(w)
	s := denseS(st)
	n := len(st.Nodes)
	for _, every := range []bool{true, false} {
		if !every {
			bottomGrowthOnly(t)
		}
		sol, err := Projection{Cov: CovShrink}.Reconcile(p)
		if err != nil {
			t.Fatal(err)
		}
		if got, want := sol.Notes["variance_node_growth"] == 1, every; got != want {
			t.Errorf("every node's growth %v: note variance_node_growth %v", every, sol.Notes["variance_node_growth"])
		}
		for k := 0; k < 2; k++ {
			c := mat.NewDiagDense(n, nil)
			for i := 0; i < n; i++ {
				c.SetDiag(i, math.Sqrt(p.BaseVar[i][k]/w.D[i]))
			}
			var sg, a, b, v mat.Dense
			if every {
				sg.Mul(s, g)
				a.Mul(&sg, c)
			} else {
				cb := mat.NewDiagDense(st.NumBottom(), c.RawBand().Data[st.BottomOffset():])
				sg.Mul(s, cb)
				a.Mul(&sg, g)
			}
			b.Mul(&a, wd)
			v.Mul(&b, a.T())
			for i := range st.Nodes {
				if relDiff(sol.Variance[i][k], v.At(i, i)) > 1e-9 {
					t.Fatalf("every node's growth %v: %s: variance %g, direct %g", every, st.Label(i), sol.Variance[i][k], v.At(i, i))
				}
			}
		}
	}
}

// bottomGrowthOnly makes the rest of the test treat every structure as
// above exactGrowthMaxWork.
func bottomGrowthOnly(t *testing.T) {
	old := exactGrowthMaxWork
	exactGrowthMaxWork = 0
	t.Cleanup(func() { exactGrowthMaxWork = old })
}

// lateStarts marks every step-th node's residuals missing (NaN) before a
// seeded start, so that those nodes have a diagonal part in the sample
// covariance W1 (Δ_i = D_i·(1 − T_i/T)).
func lateStarts(p *Problem, step int, seed uint64) int {
	rng := rand.New(rand.NewPCG(seed, 3))
	late := 0
	for i := 0; i < len(p.Residuals); i += step {
		row := p.Residuals[i]
		for t := range row[:1+rng.IntN(len(row)/2)] {
			row[t] = math.NaN()
		}
		late++
	}
	return late
}

// TestLargeVarianceExact: with as many nodes whose residuals start late
// as Problem.Paths or fewer, the large path's variances are exact: equal
// to the dense path's to 1e-9 relative at about 2,000 nodes.
func TestLargeVarianceExact(t *testing.T) {
	st := retail(t, 2, 3, 2, 4, 26) // 1,971 nodes, 1,248 bottom
	p := problemFor(st, 60, 3, 23)
	if late := lateStarts(&p, 13, 5); late > DefaultPaths || late == 0 {
		t.Fatalf("%d late nodes: the test wants 1 to %d", late, DefaultPaths)
	}
	d, l := denseAndLarge(t, Projection{Cov: CovShrink}, p)
	if _, ok := l.Notes["variance_paths"]; ok {
		t.Error("variance sampled with fewer late nodes than paths")
	}
	worst := 0.0
	for i := range d.Variance {
		for k, v := range d.Variance[i] {
			worst = math.Max(worst, math.Abs(l.Variance[i][k]-v)/v)
		}
	}
	t.Logf("%d nodes: large-path variances within %.2g relative of dense", len(st.Nodes), worst)
	if worst > 1e-9 {
		t.Errorf("large-path variance differs from dense by %.3g relative", worst)
	}
}

// TestLargeVarianceEstimate: with more late-starting nodes than paths,
// the diagonal part of W1 is sampled, and the variances stay close to the
// exact ones (the rank-T part is exact; only the diagonal part is
// sampled, with a control variate).
func TestLargeVarianceEstimate(t *testing.T) {
	st := grouped(t, 2, 3, 3)
	p := problemFor(st, 30, 1, 17)
	late := lateStarts(&p, 1, 7)
	p.Solver = SolverDense
	d, err := Projection{Cov: CovShrink}.Reconcile(p)
	if err != nil {
		t.Fatal(err)
	}
	p.Solver = SolverLarge
	p.Paths = late - 1
	l, err := Projection{Cov: CovShrink}.Reconcile(p)
	if err != nil {
		t.Fatal(err)
	}
	if l.Notes["variance_paths"] != float64(p.Paths) {
		t.Errorf("variance_paths %v, want %d", l.Notes["variance_paths"], p.Paths)
	}
	worst := 0.0
	for i := range d.Variance {
		r := l.Variance[i][0] / d.Variance[i][0]
		worst = math.Max(worst, math.Abs(r-1))
	}
	t.Logf("%d late nodes, %d paths: worst variance ratio off by %.3f", late, p.Paths, worst)
	if worst > 0.3 {
		t.Errorf("sampled variance off by %.3f relative", worst)
	}
}

func TestSampleRefusedWhenSingular(t *testing.T) {
	st := grouped(t, 2, 3, 3)
	p := problemFor(st, 20, 1, 1)
	if _, err := (Projection{Cov: CovSample}).Reconcile(p); err == nil {
		t.Error("sample covariance with T < n accepted")
	}
}

// TestDeterministic: the same problem gives bit-identical forecasts and
// variances on the large path (seeded paths, goroutines writing disjoint
// steps).
func TestDeterministic(t *testing.T) {
	st := grouped(t, 2, 3, 3)
	p := problemFor(st, 30, 4, 19)
	p.Solver = SolverLarge
	a, err := Projection{Cov: CovShrink}.Reconcile(p)
	if err != nil {
		t.Fatal(err)
	}
	b, _ := Projection{Cov: CovShrink}.Reconcile(p)
	for i := range a.Forecast {
		for k := range a.Forecast[i] {
			if a.Forecast[i][k] != b.Forecast[i][k] || a.Variance[i][k] != b.Variance[i][k] {
				t.Fatalf("%s step %d differs between runs", st.Label(i), k+1)
			}
		}
	}
}

// denseAndLarge reconciles p by pr on the dense path and on the
// large-structure path.
func denseAndLarge(t *testing.T, pr Projection, p Problem) (dense, large Solution) {
	t.Helper()
	p.Solver = SolverDense
	dense, err := pr.Reconcile(p)
	if err != nil {
		t.Fatalf("%s dense: %v", pr.Cov, err)
	}
	p.Solver = SolverLarge
	if large, err = pr.Reconcile(p); err != nil {
		t.Fatalf("%s large: %v", pr.Cov, err)
	}
	return dense, large
}
