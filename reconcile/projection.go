package reconcile

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"

	"trueup/hierarchy"
	"trueup/inputerr"
	"trueup/internal/crash"
)

// Covariance names the matrix W whose inverse weights a projection.
type Covariance string

// The covariance choices of --cov.
const (
	// CovIdentity: W = I, ordinary least squares (Hyndman, Ahmed,
	// Athanasopoulos & Shang 2011, "Optimal combination forecasts for
	// hierarchical time series", CSDA 55(9), eq. 7).
	CovIdentity Covariance = "identity"
	// CovStructural: W = diag(S·1), the number of bottom series in each
	// node (Athanasopoulos, Hyndman, Kourentzes & Petropoulos 2017,
	// "Forecasting with temporal hierarchies", EJOR 262(1), §3.3).
	CovStructural Covariance = "structural"
	// CovVariance: W = diag(W1), the one-step residual variances
	// (Wickramasuriya, Athanasopoulos & Hyndman 2019, §2.4, "WLS").
	CovVariance Covariance = "variance"
	// CovSample: W = W1, the sample covariance of the one-step residuals
	// (Wickramasuriya et al. 2019, "MinT(Sample)"); singular when there
	// are fewer residual periods than nodes.
	CovSample Covariance = "sample"
	// CovShrink: W = λD + (1−λ)W1 (Wickramasuriya et al. 2019,
	// "MinT(Shrink)"), λ from Schäfer & Strimmer (2005); see errCov.
	CovShrink Covariance = "shrink"
)

// CovNames lists the covariance estimators of the projection methods.
func CovNames() []string {
	return []string{string(CovIdentity), string(CovStructural), string(CovVariance), string(CovSample), string(CovShrink)}
}

func (c Covariance) valid() bool {
	for _, n := range CovNames() {
		if string(c) == n {
			return true
		}
	}
	return false
}

// Projection is the optimal-combination family:
//
//	ỹ = S·G·ŷ,  G = (Sᵀ W⁻¹ S)⁻¹ Sᵀ W⁻¹
//
// the W⁻¹-orthogonal projection of the base forecasts onto the coherent
// subspace (Wickramasuriya, Athanasopoulos & Hyndman 2019, "Optimal
// forecast reconciliation for hierarchical and grouped time series
// through trace minimization", JASA 114(526), Theorem 1). With
// Problem.Nonnegative the bottom forecasts are constrained to be ≥ 0 and
// the projection is solved as a quadratic programme in the same metric
// (Wickramasuriya, Panagiotelis, Athanasopoulos & Hyndman 2020,
// "Optimal non-negative forecast reconciliation", Statistics and
// Computing 30).
//
// Small structures use dense algebra; large ones an equivalent
// constraint form solved by conjugate gradients that never forms an
// n × n matrix (projection_large.go). Both give the same G to solver
// precision.
type Projection struct{ Cov Covariance }

var _ Method = Projection{}

// Name implements Method.
func (Projection) Name() string { return "mint" }

// weights builds the W of the projection as a diagonal plus low rank
// (errCov form). errc is the residual covariance, nil without residuals.
func (pr Projection) weights(p *Problem, errc *errCov, n int) (*errCov, error) {
	st := p.Structure
	switch pr.Cov {
	case CovIdentity, CovStructural:
		w := &errCov{n: n, Delta: make([]float64, n), D: make([]float64, n)}
		for i := range w.Delta {
			v := 1.0
			if pr.Cov == CovStructural {
				v = float64(len(st.S.Row(i)))
			}
			w.Delta[i], w.D[i] = v, v
		}
		return w, nil
	}
	if errc == nil {
		return nil, inputerr.ForOption("Cov", "covariance %s needs the in-sample residuals of every node", pr.Cov)
	}
	switch pr.Cov {
	case CovVariance:
		return &errCov{n: n, D: errc.D, Delta: errc.D}, nil
	case CovShrink:
		return errc, nil
	}
	// CovSample.
	if T := len(p.Residuals[0]); T < n {
		return nil, inputerr.ForOption("Cov", "covariance sample: the sample covariance of %d residual periods is singular for %d nodes (it needs at least as many periods as nodes); use the shrink covariance", T, n)
	}
	return newErrCov(p.Residuals, 0, st.Label)
}

// Reconcile implements Method.
func (pr Projection) Reconcile(p Problem) (Solution, error) {
	n, _, h, err := p.dims()
	if err != nil {
		return Solution{}, err
	}
	var errc *errCov
	if p.Residuals != nil {
		if errc, err = p.errorCov(); err != nil {
			return Solution{}, err
		}
	}
	wg, err := pr.weights(&p, errc, n)
	if err != nil {
		return Solution{}, err
	}
	solver := p.Solver
	if solver == SolverAuto {
		solver = SolverLarge
		if n <= DenseMaxNodes {
			solver = SolverDense
		}
	}
	if len(p.Locks) > 0 {
		if err := checkLocks(&p, n, h); err != nil {
			return Solution{}, err
		}
		if p.Nonnegative {
			if err := CheckNonnegativeLocks(p.Structure, p.Locks, p.StepLabel); err != nil {
				return Solution{}, err
			}
		}
	}
	var g projector
	if solver == SolverDense {
		g, err = newDenseProjector(p.Structure, wg)
	} else {
		g, err = newLargeProjector(p.Structure, wg)
	}
	if err != nil {
		return Solution{}, err
	}
	// The variances need only G and the locks, not the forecasts: they
	// are solved in a goroutine of their own, beside the locks' columns
	// and the forecasts, and take the locks when they need them.
	type variances struct {
		v          [][]float64
		joint      *Joint
		paths      int
		nodeGrowth bool
		err        error
	}
	vdone := make(chan variances, 1)
	planned := make(chan *lockPlan, 1)
	if p.wantVariance() {
		go func() {
			var out variances
			defer func() { vdone <- out }()
			defer crash.Catch(&out.err)
			out.v, out.joint, out.paths, out.nodeGrowth, out.err = projectionVariance(&p, g, h, planned)
		}()
	} else {
		vdone <- variances{}
	}
	var locks *lockPlan
	if len(p.Locks) > 0 {
		if locks, err = newLockPlan(&p, g, wg, h); err != nil {
			planned <- nil
			<-vdone
			return Solution{}, err
		}
	}
	planned <- locks
	base := mat.NewDense(n, h, nil)
	for i, row := range p.Base {
		base.SetRow(i, row)
	}
	var bottom, unlocked *mat.Dense
	if p.Nonnegative {
		bottom, unlocked, err = nonnegative(g, base, locks)
	} else if bottom, err = g.apply(base, p.tolerance()); err == nil && locks != nil {
		unlocked = mat.DenseCopyOf(bottom)
		locks.apply(bottom)
	}
	vr := <-vdone
	if err != nil {
		return Solution{}, err
	}
	if vr.err != nil {
		return Solution{}, vr.err
	}
	sol := coherent(p.Structure, denseRows(bottom))
	if locks != nil {
		sol.Unlocked = coherent(p.Structure, denseRows(unlocked)).Forecast
		exactLocks(&sol, p.Structure, p.Locks)
	}
	if errc != nil && pr.Cov == CovShrink {
		// Only the shrink covariance is shrunk: with any other the λ
		// estimated on the way is used nowhere and is not reported.
		sol.Notes["shrinkage"] = errc.lambda
	}
	sol.Variance, sol.Joint = vr.v, vr.joint
	if vr.paths > 0 {
		sol.Notes["variance_paths"] = float64(vr.paths)
	}
	if vr.v != nil {
		// 1: every node's growth in the variances; 0: the bottom series'
		// (above exactGrowthMaxWork).
		sol.Notes["variance_node_growth"] = 0
		if vr.nodeGrowth {
			sol.Notes["variance_node_growth"] = 1
		}
	}
	for k, v := range g.notes() {
		sol.Notes[k] = v
	}
	return sol, nil
}

// projectionVariance returns the reconciled variances of a projection
// (see Solution.Variance), their joint distribution when p.Joint asks for
// it (without the locks' correction: the backtest, its one user, ignores
// locks), the number of sample paths behind them (0 when exact), and
// whether they take every node's growth (every; see exactGrowthMaxWork).
//
// The locks arrive on planned (nil for none), once their plan is made.
func projectionVariance(p *Problem, g projector, h int, planned <-chan *lockPlan) (v [][]float64, j *Joint, paths int, every bool, err error) {
	vc, err := p.varianceCov()
	if err != nil {
		return nil, nil, 0, false, err
	}
	st := p.Structure
	off := st.BottomOffset()
	var step func(k int) (*factor, error)
	var joint func() *Joint
	every = nodeGrowth(len(st.Nodes), h, vc.rank())
	if every {
		// One factor of G·C_k·W·C_k·Gᵀ per step, made when the step's
		// variances are (factorVariance's workers) and kept only for the
		// joint distribution.
		all := make([]int, len(st.Nodes))
		for i := range all {
			all[i] = i
		}
		c := growth(p, vc, all, h)
		var fs []*factor
		if p.Joint {
			fs = make([]*factor, h)
		}
		step = func(k int) (*factor, error) {
			a := make([]float64, len(all))
			for i := range a {
				a[i] = c[i][k]
			}
			f, err := g.errorFactor(vc, a, p.Paths, p.Seed)
			if err != nil {
				return nil, err
			}
			if f.deltaB != nil {
				d := make([]float64, len(f.deltaB))
				for j, v := range f.deltaB {
					d[j] = a[off+j] * a[off+j] * v
				}
				f.deltaB = d
			}
			if fs != nil {
				fs[k] = f
			}
			return f, nil
		}
		joint = func() *Joint { return stepsJoint(st, fs) }
	} else {
		ones := make([]float64, len(st.Nodes))
		for i := range ones {
			ones[i] = 1
		}
		f, err := g.errorFactor(vc, ones, p.Paths, p.Seed)
		if err != nil {
			return nil, nil, 0, false, err
		}
		bidx := make([]int, st.NumBottom())
		for j := range bidx {
			bidx[j] = off + j
		}
		c := growth(p, vc, bidx, h)
		step = func(k int) (*factor, error) { return scaledFactor(f, c, k), nil }
		joint = func() *Joint { return projectionJoint(st, f, c) }
	}
	locks := <-planned
	if locks == nil && len(p.Locks) > 0 {
		return nil, nil, 0, false, nil // the locks were refused; Reconcile reports why
	}
	if v, paths, err = factorVariance(st, step, h, locks); err != nil {
		return nil, nil, 0, false, err
	}
	if p.Joint {
		j = joint()
	}
	return v, j, paths, every, nil
}

// projector applies G for one choice of W. Its methods may be called
// from concurrent goroutines.
type projector interface {
	// apply returns G·Y for Y with n rows (any number of columns), to a
	// relative tolerance tol where the solver is iterative.
	apply(y *mat.Dense, tol float64) (*mat.Dense, error)
	// errorFactor returns the factor of G·diag(a)·W·diag(a)·Gᵀ for the
	// residual covariance W and node multipliers a (one per node): exact,
	// except on the large path when more than paths nodes have a
	// diagonal part in W (residuals that start late), where that part is
	// represented by paths seeded Gaussian sample paths; its deltaB is
	// the bottom rows of Δ, without a.
	errorFactor(w *errCov, a []float64, paths int, seed uint64) (*factor, error)
	// qp returns the quadratic programme of the non-negative projection.
	qp() (qpProblem, error)
	notes() map[string]float64
}

// solveTol is the relative residual the iterative solvers reach for
// forecasts; tests hold dense and large paths to 1e-8 relative.
const solveTol = 1e-12

// tolerance is the relative residual of the plain projection's solves:
// solveTol, or StatisticsTol for a Problem marked Statistics.
func (p *Problem) tolerance() float64 {
	if p.Statistics {
		return StatisticsTol
	}
	return solveTol
}

// denseProjector forms G = (SᵀW⁻¹S)⁻¹SᵀW⁻¹ explicitly.
type denseProjector struct {
	st *hierarchy.Structure
	g  *mat.Dense // m × n
	p  *mat.SymDense
	sw *mat.Dense // n × m: W⁻¹S
}

// denseS returns S as a dense n × m matrix.
func denseS(st *hierarchy.Structure) *mat.Dense {
	n, m := st.S.Dims()
	s := mat.NewDense(n, m, nil)
	for i := 0; i < n; i++ {
		for _, j := range st.S.Row(i) {
			s.Set(i, j, 1)
		}
	}
	return s
}

// denseW forms W = diag(Δ) + U·Uᵀ.
func denseW(w *errCov) *mat.SymDense {
	n := len(w.Delta)
	out := mat.NewSymDense(n, nil)
	if r := w.rank(); r > 0 {
		u := mat.NewDense(n, r, w.U)
		out.SymOuterK(1, u)
	}
	for i, d := range w.Delta {
		out.SetSym(i, i, out.At(i, i)+d)
	}
	return out
}

func newDenseProjector(st *hierarchy.Structure, wg *errCov) (*denseProjector, error) {
	n, m := st.S.Dims()
	var ch mat.Cholesky
	if !ch.Factorize(denseW(wg)) {
		return nil, inputerr.ForOption("Cov", "the covariance W is singular, so the projection is not defined; use the shrink covariance")
	}
	s := denseS(st)
	sw := mat.NewDense(n, m, nil)
	if err := ch.SolveTo(sw, s); err != nil {
		return nil, inputerr.ForOption("Cov", "the covariance W is numerically singular; use the shrink covariance")
	}
	var pm mat.Dense
	pm.Mul(s.T(), sw)
	p := mat.NewSymDense(m, nil)
	for i := 0; i < m; i++ {
		for j := i; j < m; j++ {
			p.SetSym(i, j, 0.5*(pm.At(i, j)+pm.At(j, i)))
		}
	}
	var pc mat.Cholesky
	if !pc.Factorize(p) {
		return nil, inputerr.New("SᵀW⁻¹S is singular; use the shrink covariance")
	}
	g := mat.NewDense(m, n, nil)
	if err := pc.SolveTo(g, sw.T()); err != nil {
		return nil, inputerr.New("SᵀW⁻¹S is numerically singular; use the shrink covariance")
	}
	return &denseProjector{st: st, g: g, p: p, sw: sw}, nil
}

func (d *denseProjector) apply(y *mat.Dense, _ float64) (*mat.Dense, error) {
	var out mat.Dense
	out.Mul(d.g, y)
	return &out, nil
}

func (d *denseProjector) errorFactor(w *errCov, a []float64, _ int, _ uint64) (*factor, error) {
	m, _ := d.g.Dims()
	r := w.rank()
	var late []int
	for i, v := range w.Delta {
		if v > 0 {
			late = append(late, i)
		}
	}
	if len(late)+r == 0 {
		return &factor{}, nil
	}
	// F = G·diag(a)·[diag(√Δ), U], the first block only where Δ > 0: G's
	// columns of those nodes, scaled.
	f := mat.NewDense(m, len(late)+r, nil)
	for j := 0; j < m; j++ {
		for q, i := range late {
			f.Set(j, q, d.g.At(j, i)*a[i]*math.Sqrt(w.Delta[i]))
		}
	}
	if r > 0 {
		n := len(w.Delta)
		au := mat.NewDense(n, r, nil)
		for i := 0; i < n; i++ {
			floats.ScaleTo(au.RawRowView(i), a[i], w.U[i*r:(i+1)*r])
		}
		gu := f.Slice(0, m, len(late), len(late)+r).(*mat.Dense)
		gu.Mul(d.g, au)
	}
	return &factor{exact: f}, nil
}

func (d *denseProjector) notes() map[string]float64 { return nil }

func denseRows(d *mat.Dense) [][]float64 {
	r, c := d.Dims()
	out := newRows(r, c)
	for i := range out {
		mat.Row(out[i], i, d)
	}
	return out
}

// Map returns the projection's linear map y ↦ S·G·y for the structure,
// residuals and covariance of p (its Base is not read), set up once: the
// covariance, its shrinkage and the solver are built here, and each call
// of the map only solves for its columns (y has one row per node and any
// number of columns). It leaves out non-negativity and locks, which are
// not linear. For reconciling many sample paths at once (probabilistic
// reconciliation, Panagiotelis, Gamakumara, Athanasopoulos & Hyndman
// 2023): Reconcile would build the same setup for every batch.
//
// tol is the relative residual the iterative solver of the large path
// reaches for each column (the dense path solves exactly); Reconcile
// uses 1e-12. Sample paths can take a looser one: their quantiles carry
// a Monte Carlo error far above it.
func (pr Projection) Map(p Problem, tol float64) (func(y [][]float64) ([][]float64, error), error) {
	n := len(p.Structure.Nodes)
	var errc *errCov
	if p.Residuals != nil {
		var err error
		if errc, err = p.errorCov(); err != nil {
			return nil, err
		}
	}
	wg, err := pr.weights(&p, errc, n)
	if err != nil {
		return nil, err
	}
	var g projector
	if p.Solver == SolverDense || (p.Solver == SolverAuto && n <= DenseMaxNodes) {
		g, err = newDenseProjector(p.Structure, wg)
	} else {
		g, err = newLargeProjector(p.Structure, wg)
	}
	if err != nil {
		return nil, err
	}
	return func(y [][]float64) ([][]float64, error) {
		if len(y) != n || n == 0 || len(y[0]) == 0 {
			return nil, fmt.Errorf("reconcile: map of %d rows for %d nodes, or of no columns", len(y), n)
		}
		ym := mat.NewDense(n, len(y[0]), nil)
		for i, row := range y {
			ym.SetRow(i, row)
		}
		bottom, err := g.apply(ym, tol)
		if err != nil {
			return nil, err
		}
		return coherent(p.Structure, denseRows(bottom)).Forecast, nil
	}, nil
}
