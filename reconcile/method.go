// Package reconcile turns base forecasts of every node of a grouped
// structure into coherent forecasts, in which every aggregate equals the
// sum of its parts, and attaches coherent forecast-error variances from
// one joint Gaussian distribution, so that intervals are coherent too.
//
// Every method has the form ỹ = S·G·ŷ for an m × n matrix G: bottom-up,
// top-down and middle-out pick G from proportions, the projections
// (MinT and its special cases) from a covariance choice. Variances are the
// diagonal of S·G·W_h·Gᵀ·Sᵀ; see Solution.Variance for how W_h is built.
package reconcile

import (
	"fmt"
	"math"

	"trueup/hierarchy"
	"trueup/inputerr"
)

// Problem is what a reconciliation method works on. Rows of every matrix
// follow hierarchy.Structure.Nodes (n rows); bottom nodes are the last m.
type Problem struct {
	Structure *hierarchy.Structure
	// Base holds base forecasts, n rows × h steps.
	Base [][]float64
	// BaseVar holds base forecast-error variances, n × h (may be nil for
	// methods that do not need them).
	BaseVar [][]float64
	// Residuals holds in-sample one-step residuals, n rows × T periods, NaN
	// where a node has no residual (before it existed). May be nil.
	Residuals [][]float64
	// History holds the observed node series, n × T, NaN before a node
	// existed. Used by the top-down methods. May be nil.
	History [][]float64
	// Temporal holds base forecasts of every node at coarser temporal
	// grains (TemporalFactors of the seasonal period), for the methods
	// whose MethodInfo.Temporal is set. Nil otherwise.
	Temporal []TemporalBase

	// Nonnegative asks the projection methods for non-negative bottom
	// forecasts (see Projection). Other methods refuse it.
	Nonnegative bool
	// Solver chooses the linear algebra of the projections; the zero value
	// picks dense algebra up to DenseMaxNodes nodes and the large-n path
	// above.
	Solver Solver
	// Paths bounds the cost of the variances on the large-n projection
	// path (0: DefaultPaths). The sample covariance W1 behind variances
	// has a diagonal part only at nodes whose residuals start late; up to
	// Paths such nodes it is computed exactly (one extra solved column
	// each), above that it is estimated from Paths Gaussian sample paths.
	Paths int
	// Seed seeds those paths (any fixed value gives identical output).
	Seed uint64
	// Joint asks for the joint distribution of the errors in
	// Solution.Joint (for scoring the joint forecast; it keeps a factor
	// of m × rank floats alive with the solution).
	Joint bool
	// Locks fix the reconciled forecasts of some nodes at some steps
	// (see Lock); the projection reconciles the other nodes around them.
	// Other methods refuse locks.
	Locks []Lock
	// StepLabel names forecast step k (0-based) in messages, such as its
	// period; nil means "step k+1".
	StepLabel func(k int) string
	// Statistics marks forecasts that feed a statistic rather than a plan
	// (the in-sample errors behind the intervals' shape): the large-n
	// projection's iterative solves may then stop at a relative residual
	// of StatisticsTol instead of 1e-12. Locks and non-negativity are
	// solved as always.
	Statistics bool
}

// StatisticsTol is the relative residual of the large-n projection's
// solves for a Problem marked Statistics: the answers agree with the
// exact ones to about this fraction of the problem's scale, far below
// the sampling error of any quantile of them.
const StatisticsTol = 1e-6

// stepLabel names step k for messages (see Problem.StepLabel).
func (p *Problem) stepLabel(k int) string {
	if p.StepLabel == nil {
		return fmt.Sprintf("step %d", k+1)
	}
	return p.StepLabel(k)
}

// Solver selects the linear algebra of the projection methods.
type Solver int

const (
	// SolverAuto uses SolverDense up to DenseMaxNodes nodes, else SolverLarge.
	SolverAuto Solver = iota
	// SolverDense forms n × n matrices and factorizes them.
	SolverDense
	// SolverLarge never forms an n × n matrix (see projection_large.go).
	SolverLarge
)

// DenseMaxNodes is the largest structure SolverAuto reconciles with dense
// algebra. Dense needs O(n²) memory and O(n³) time: at n = 1,971 it takes
// many times as long as the large-n path (BenchmarkMinT), whose variances
// are as exact (see Problem.Paths for the one exception).
const DenseMaxNodes = 600

// DefaultPaths is Problem.Paths when it is 0: up to 200 nodes whose
// residuals start late, variances are exact; above, the late nodes' part
// of each variance is estimated from 200 sample paths, whose error shrinks
// as 1/√paths.
const DefaultPaths = 200

// Solution is a coherent forecast.
type Solution struct {
	// Bottom holds the reconciled bottom forecasts, m × h.
	Bottom [][]float64
	// Forecast holds S·Bottom, n × h: coherent by construction.
	Forecast [][]float64
	// Variance holds the reconciled forecast-error variance of every node,
	// n × h, or is nil when the problem has no BaseVar or no Residuals.
	// The variances are the diagonal of one joint Gaussian distribution
	// of the reconciled errors, S·G·W_h·Gᵀ·Sᵀ, so the interval of a total
	// is not the sum of its parts' intervals. W (one step) is always the
	// sample covariance W1 of the residuals (errCov with λ = 0), whatever
	// covariance a projection uses for its weights: shrinkage steadies the
	// inverse W⁻¹ that the weights need, but the variance needs no inverse,
	// and shrinking the correlations towards zero understates the spread
	// of every aggregate whose members' errors move together (on the demo
	// chain's backtest the total's 80% intervals covered 35% of outcomes
	// with the shrinkage covariance, 58% with W1). The h-step covariance
	// W_h scales W per series by c_hi = √(BaseVar[i][h]/D_i), the growth
	// of that series' base standard deviation from its one-step residual
	// one, W_h = C_h·W·C_h: the covariance of the base forecasts' h-step
	// errors with each series' own h-step variance and the one-step
	// correlations. The variance is S·G·W_h·Gᵀ·Sᵀ, so that every series
	// the method draws on brings its own growth: the named level's for
	// top-down (the total) and middle-out, the bottom series' for
	// bottom-up, and every node's for the projections, whose aggregates'
	// base models see persistent shocks common to their members that the
	// one-step correlations of the members understate. (Scaling the
	// projections' reconciled bottom series by their own growth instead,
	// S·C_h·G·W·Gᵀ·C_h·Sᵀ with bottom c_h, held the demo chain's 80%
	// intervals at the total to 60% of outcomes over a 12-origin
	// backtest; this formula, 81%.) It needs one factor of G per step, so
	// above exactGrowthMaxWork the projections fall back to the bottom
	// series' growth (notes: variance_node_growth 0). When every c_hi is
	// 1 both are exactly S·G·W·Gᵀ·Sᵀ. Intervals are
	// forecast ± z·√Variance.
	Variance [][]float64
	// Joint is the joint Gaussian distribution behind Variance, set when
	// Problem.Joint asks for it and the variances exist.
	Joint *Joint
	// Notes records method facts worth keeping in run.json (such as the
	// shrinkage intensity λ), keyed by name.
	Notes map[string]float64
	// Unlocked holds, when the problem has locks, the forecasts the same
	// method gives without them (n × h), so that what the locks moved
	// can be shown; nil otherwise.
	Unlocked [][]float64
}

// Method is one reconciliation method.
type Method interface {
	// Name is the name ByName selects it by.
	Name() string
	Reconcile(p Problem) (Solution, error)
}

// maxResidual bounds residual magnitudes so that sums of squares and
// cross products stay finite.
const maxResidual = 1e150

// dims checks the shapes and values of the problem and returns n, m, h.
func (p *Problem) dims() (n, m, h int, err error) {
	st := p.Structure
	n = len(st.Nodes)
	m = st.NumBottom()
	if len(p.Base) != n {
		return 0, 0, 0, fmt.Errorf("reconcile: %d base rows for %d nodes", len(p.Base), n)
	}
	h = len(p.Base[0])
	if h == 0 {
		return 0, 0, 0, inputerr.New("no forecast steps to reconcile")
	}
	for i, row := range p.Base {
		if len(row) != h {
			return 0, 0, 0, fmt.Errorf("reconcile: base row %d has %d steps, want %d", i, len(row), h)
		}
		for k, v := range row {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return 0, 0, 0, inputerr.New("base forecast of %s at step %d is %v", st.Label(i), k+1, v)
			}
		}
	}
	if p.BaseVar != nil {
		if len(p.BaseVar) != n {
			return 0, 0, 0, fmt.Errorf("reconcile: %d base variance rows for %d nodes", len(p.BaseVar), n)
		}
		for i, row := range p.BaseVar {
			if len(row) != h {
				return 0, 0, 0, fmt.Errorf("reconcile: base variance row %d has %d steps, want %d", i, len(row), h)
			}
			for k, v := range row {
				if !(v >= 0) || math.IsInf(v, 0) {
					return 0, 0, 0, inputerr.New("base variance of %s at step %d is %v", st.Label(i), k+1, v)
				}
			}
		}
	}
	if p.Residuals != nil && len(p.Residuals) != n {
		return 0, 0, 0, fmt.Errorf("reconcile: %d residual rows for %d nodes", len(p.Residuals), n)
	}
	if p.Residuals != nil && len(p.Residuals[0]) == 0 {
		return 0, 0, 0, inputerr.New("residuals have no periods")
	}
	for i, row := range p.Residuals {
		for t, r := range row {
			// NaN marks a missing residual; anything whose square
			// overflows would turn every covariance into Inf or NaN.
			if math.Abs(r) > maxResidual {
				return 0, 0, 0, inputerr.New("residual of %s at period %d is %v, too large to use", st.Label(i), t+1, r)
			}
		}
	}
	return n, m, h, nil
}

// wantVariance reports whether the problem carries what variances need.
func (p *Problem) wantVariance() bool { return p.BaseVar != nil && p.Residuals != nil }

// errorCov estimates the shrinkage covariance W of the residuals.
func (p *Problem) errorCov() (*errCov, error) {
	return newErrCov(p.Residuals, -1, p.Structure.Label)
}

// varianceCov estimates the covariance of the one-step errors behind the
// reconciled variances: the sample covariance W1 (shrinkage λ = 0).
func (p *Problem) varianceCov() (*errCov, error) {
	return newErrCov(p.Residuals, 0, p.Structure.Label)
}

// growth returns c_hi = √(BaseVar[i][h] / D_i) for the nodes idx, as
// len(idx) × h rows (see Solution.Variance).
func growth(p *Problem, w *errCov, idx []int, h int) [][]float64 {
	out := make([][]float64, len(idx))
	for r, i := range idx {
		row := make([]float64, h)
		for k := range row {
			row[k] = math.Sqrt(p.BaseVar[i][k] / w.D[i])
		}
		out[r] = row
	}
	return out
}

// coherent completes a solution from its bottom forecasts.
func coherent(st *hierarchy.Structure, bottom [][]float64) Solution {
	n := len(st.Nodes)
	h := 0
	if len(bottom) > 0 {
		h = len(bottom[0])
	}
	_, m := st.S.Dims()
	out := make([][]float64, n)
	for i := range out {
		out[i] = make([]float64, h)
	}
	b := make([]float64, m)
	y := make([]float64, n)
	for k := 0; k < h; k++ {
		for j := 0; j < m; j++ {
			b[j] = bottom[j][k]
		}
		st.S.MulVec(y, b)
		for i := 0; i < n; i++ {
			out[i][k] = y[i]
		}
	}
	return Solution{Bottom: bottom, Forecast: out, Notes: map[string]float64{}}
}

func newRows(r, c int) [][]float64 {
	out := make([][]float64, r)
	buf := make([]float64, r*c)
	for i := range out {
		out[i] = buf[i*c : (i+1)*c : (i+1)*c]
	}
	return out
}
