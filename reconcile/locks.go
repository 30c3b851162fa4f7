package reconcile

import (
	"fmt"
	"math"
	"sort"
	"strings"

	"gonum.org/v1/gonum/blas"
	"gonum.org/v1/gonum/blas/blas64"
	"gonum.org/v1/gonum/mat"

	"trueup/hierarchy"
	"trueup/inputerr"
)

// Lock fixes the reconciled forecast of one node at one forecast step:
// a finance target for the total, a category manager's number, a known
// closure as zero. The projection then reconciles every other node
// around the locked ones.
type Lock struct {
	// Node is the index of the node in Problem.Structure.Nodes.
	Node int
	// Step is the forecast step, 0-based.
	Step int
	// Value is what the node's reconciled forecast must be.
	Value float64
}

// Locked forecasts are the MinT projection with immutable forecasts
// (Zhang et al. 2023, "Optimal forecast reconciliation with immutable
// forecasts", European Journal of Operational Research; cited from
// memory): among the coherent forecasts S·b whose locked nodes take their
// values (C·b = c, C the rows of S of the locked nodes), the one closest
// to the base forecasts in the W⁻¹ metric. It is the equality-constrained
// generalised least squares solution, whose closed form is the restricted
// least squares estimator (common linear algebra):
//
//	b̃_c = b̃ − P⁻¹Cᵀ·(C·P⁻¹·Cᵀ)⁻¹·(C·b̃ − c),  P = SᵀW⁻¹S,  b̃ = G·ŷ
//
// P⁻¹Cᵀ needs no inverse of P: P⁻¹Sᵀ = G·W, so its columns are G applied
// to the columns of W at the locked nodes, one more right-hand side per
// locked node for the solver that computed b̃ (dense or large-n). C·P⁻¹·Cᵀ
// is as small as the number of locks of one step. The reconciled error is
// M·G·e with M = I − P⁻¹Cᵀ(CP⁻¹Cᵀ)⁻¹C: locked nodes have zero variance
// (C·M = 0), every other node the variance of the constrained projection.

// lockPlan holds what the locks of a problem need, shared by every step.
type lockPlan struct {
	st    *hierarchy.Structure
	nodes []int      // distinct locked nodes, ascending
	z     *mat.Dense // m × len(nodes): P⁻¹Cᵀ = G·W·E
	a     *mat.Dense // len(nodes) square: C·P⁻¹·Cᵀ
	steps []*stepLocks
	label func(k int) string
}

// stepLocks are the independent locks of one step, ready to apply.
type stepLocks struct {
	cols   []int // columns of lockPlan.z
	nodes  []int // the locked nodes (all of the step, implied ones too)
	values []float64
	chol   mat.Cholesky // of C_k·P⁻¹·C_kᵀ for cols
}

// checkLocks refuses locks that name no node or step, repeat a node and
// step, or are not finite numbers.
func checkLocks(p *Problem, n, h int) error {
	seen := map[[2]int]bool{}
	for _, l := range p.Locks {
		if l.Node < 0 || l.Node >= n {
			return fmt.Errorf("reconcile: lock of node %d, but the structure has %d nodes", l.Node, n)
		}
		if l.Step < 0 || l.Step >= h {
			return inputerr.New("a lock of %s is at step %d, outside the %d forecast steps", p.Structure.Label(l.Node), l.Step+1, h)
		}
		if math.IsNaN(l.Value) || math.IsInf(l.Value, 0) {
			return inputerr.New("the lock of %s at %s is %v; a lock must be a number", p.Structure.Label(l.Node), p.stepLabel(l.Step), l.Value)
		}
		if seen[[2]int{l.Node, l.Step}] {
			return inputerr.New("%s is locked twice at %s", p.Structure.Label(l.Node), p.stepLabel(l.Step))
		}
		seen[[2]int{l.Node, l.Step}] = true
	}
	return nil
}

// newLockPlan computes P⁻¹Cᵀ and C·P⁻¹·Cᵀ for the locked nodes and, per
// step, the independent locks. Locks implied by others (a parent locked
// to exactly the sum of its locked children) are kept out of the solve;
// locks that contradict others are an input error naming them.
func newLockPlan(p *Problem, g projector, w *errCov, h int) (*lockPlan, error) {
	st := p.Structure
	lp := &lockPlan{st: st, steps: make([]*stepLocks, h), label: p.stepLabel}
	col := map[int]int{}
	for _, l := range p.Locks {
		if _, ok := col[l.Node]; !ok {
			col[l.Node] = 0
			lp.nodes = append(lp.nodes, l.Node)
		}
	}
	sort.Ints(lp.nodes)
	for c, i := range lp.nodes {
		col[i] = c
	}
	L := len(lp.nodes)
	z, err := g.apply(wColumns(w, lp.nodes), solveTol)
	if err != nil {
		return nil, err
	}
	lp.z = z
	lp.a = mat.NewDense(L, L, nil)
	for r, i := range lp.nodes {
		for c := 0; c < L; c++ {
			var s float64
			for _, j := range st.S.Row(i) {
				s += z.At(j, c)
			}
			lp.a.Set(r, c, s)
		}
	}
	for r := 0; r < L; r++ { // symmetric in exact arithmetic
		for c := r + 1; c < L; c++ {
			v := 0.5 * (lp.a.At(r, c) + lp.a.At(c, r))
			lp.a.Set(r, c, v)
			lp.a.Set(c, r, v)
		}
	}
	byStep := make([][]Lock, h)
	for _, l := range p.Locks {
		byStep[l.Step] = append(byStep[l.Step], l)
	}
	for k, ls := range byStep {
		if len(ls) == 0 {
			continue
		}
		// Finest first: a parent's lock is then the one found implied
		// by (or contradicting) its children's, as people read it.
		sort.Slice(ls, func(a, b int) bool { return ls[a].Node > ls[b].Node })
		s, err := lp.independent(ls, col, k)
		if err != nil {
			return nil, err
		}
		lp.steps[k] = s
	}
	return lp, nil
}

// wColumns returns the columns of W = diag(Δ) + U·Uᵀ at nodes, as an
// n × len(nodes) matrix: U·U_nodesᵀ in one product, plus Δ.
func wColumns(w *errCov, nodes []int) *mat.Dense {
	out := mat.NewDense(w.n, len(nodes), nil)
	if T := w.rank(); T > 0 {
		un := mat.NewDense(len(nodes), T, nil)
		for c, i := range nodes {
			un.SetRow(c, w.U[i*T:(i+1)*T])
		}
		out.Mul(mat.NewDense(w.n, T, w.U), un.T())
	}
	for c, i := range nodes {
		out.Set(i, c, out.At(i, c)+w.Delta[i])
	}
	return out
}

// dependentTol is the share of a lock's own C·P⁻¹·Cᵀ entry below which
// what the earlier locks of its step leave of it counts as zero: the
// lock's row of S is then a combination of theirs.
const dependentTol = 1e-9

// independent picks the locks of one step whose rows of S are linearly
// independent, adding them one at a time to a Cholesky factor of their
// C·P⁻¹·Cᵀ grown by one row each (O(q²) a lock): the Schur complement of
// a new lock is what the earlier ones leave of it. A dependent lock must
// equal the combination of the earlier values its row is; otherwise the
// locks contradict each other.
func (lp *lockPlan) independent(ls []Lock, col map[int]int, k int) (*stepLocks, error) {
	s := &stepLocks{}
	var kept []Lock
	for _, l := range ls {
		s.nodes = append(s.nodes, l.Node)
		c := col[l.Node]
		q := len(s.cols)
		if q == 0 {
			one := mat.NewSymDense(1, []float64{lp.a.At(c, c)})
			if !s.chol.Factorize(one) {
				return nil, fmt.Errorf("reconcile: locks at step %d: C·P⁻¹·Cᵀ not positive definite", k+1)
			}
		} else {
			av := mat.NewVecDense(q, nil)
			for a := 0; a < q; a++ {
				av.SetVec(a, lp.a.At(s.cols[a], c))
			}
			var alpha mat.VecDense
			if err := s.chol.SolveVecTo(&alpha, av); err != nil {
				return nil, fmt.Errorf("reconcile: locks at step %d: %w", k+1, err)
			}
			schur := lp.a.At(c, c) - mat.Dot(av, &alpha)
			if schur <= dependentTol*lp.a.At(c, c) {
				implied := 0.0
				var names []string
				scale := math.Abs(l.Value)
				for a := 0; a < q; a++ {
					f := alpha.AtVec(a)
					implied += f * kept[a].Value
					scale = math.Max(scale, math.Abs(f*kept[a].Value))
					if math.Abs(f) > 1e-6 {
						names = append(names, fmt.Sprintf("%s (%s)", lp.st.Label(kept[a].Node), fmtValue(kept[a].Value)))
					}
				}
				if math.Abs(implied-l.Value) > 1e-9*math.Max(1, scale) {
					return nil, inputerr.New("the locks at %s contradict each other: %s is locked to %s, but the locks of %s fix it at %s",
						lp.label(k), lp.st.Label(l.Node), fmtValue(l.Value), strings.Join(names, ", "), fmtValue(implied))
				}
				continue // implied by the others: already holds
			}
			v := mat.NewVecDense(q+1, nil)
			for a := 0; a < q; a++ {
				v.SetVec(a, av.AtVec(a))
			}
			v.SetVec(q, lp.a.At(c, c))
			var grown mat.Cholesky
			if !grown.ExtendVecSym(&s.chol, v) {
				return nil, fmt.Errorf("reconcile: locks at step %d: C·P⁻¹·Cᵀ not positive definite", k+1)
			}
			s.chol = grown
		}
		s.cols = append(s.cols, c)
		kept = append(kept, l)
		s.values = append(s.values, l.Value)
	}
	return s, nil
}

// fmtValue writes a value for messages: ten significant digits, no
// exponent below 10¹⁰ (a target reads 5000000, not 5e+06).
func fmtValue(v float64) string { return fmt.Sprintf("%.10g", v) }

// apply moves the bottom forecasts of every step with locks onto them:
// b ← b − Z_k·A_k⁻¹·(C_k·b − c_k), in place (bottom is m × h).
func (lp *lockPlan) apply(bottom *mat.Dense) {
	m, _ := bottom.Dims()
	b := make([]float64, m)
	for k, s := range lp.steps {
		if s == nil {
			continue
		}
		mat.Col(b, k, bottom)
		r := mat.NewVecDense(len(s.cols), nil)
		for a, c := range s.cols {
			var v float64
			for _, j := range lp.st.S.Row(lp.nodes[c]) {
				v += b[j]
			}
			r.SetVec(a, v-s.values[a])
		}
		lp.correct(s, b, r)
		bottom.SetCol(k, b)
	}
}

// correct sets b ← b − Z_k·A_k⁻¹·r for the step's locks.
func (lp *lockPlan) correct(s *stepLocks, b []float64, r *mat.VecDense) {
	var x mat.VecDense
	if err := s.chol.SolveVecTo(&x, r); err != nil {
		panic("reconcile: lock solve: " + err.Error())
	}
	raw := lp.z.RawMatrix()
	for j := range b {
		row := raw.Data[j*raw.Stride:]
		var d float64
		for a, c := range s.cols {
			d += row[c] * x.AtVec(a)
		}
		b[j] -= d
	}
}

// correctRows applies M_k to the first cols columns of the bottom rows of
// buf (n rows of width w, aggregates already summed): each column v of
// bottom rows becomes v − Z_k·A_k⁻¹·(C_k·v), C_k·v read off the locked
// nodes' summed rows. The product with Z is one matrix product over all
// locked nodes (rows of X zero for those not locked at this step), the
// bulk of the cost. The caller sums the aggregates again.
func (lp *lockPlan) correctRows(s *stepLocks, buf []float64, w, cols, off int) {
	q := len(s.cols)
	r := mat.NewDense(q, cols, nil)
	for a, c := range s.cols {
		i := lp.nodes[c]
		r.SetRow(a, buf[i*w:i*w+cols])
	}
	var x mat.Dense
	if err := s.chol.SolveTo(&x, r); err != nil {
		panic("reconcile: lock solve: " + err.Error())
	}
	m, L := lp.z.Dims()
	xf := blas64.General{Rows: L, Cols: cols, Stride: cols, Data: make([]float64, L*cols)}
	for a, c := range s.cols {
		mat.Row(xf.Data[c*cols:(c+1)*cols], a, &x)
	}
	dst := blas64.General{Rows: m, Cols: cols, Stride: w, Data: buf[off*w : (off+m-1)*w+cols]}
	blas64.Gemm(blas.NoTrans, blas.NoTrans, -1, lp.z.RawMatrix(), xf, 1, dst)
}

// CheckNonnegativeLocks refuses locks that non-negative bottom forecasts
// cannot meet: a node locked below zero, or below what its locked
// descendants add up to. label names a step in messages (nil: "step
// k+1"). Projection checks this itself; callers may check first, before
// any costly work. The least a node can be is its lock, or else the
// largest, over the ways its children split it, of the sum of the least
// its children can be (zero for an unlocked bottom series).
func CheckNonnegativeLocks(st *hierarchy.Structure, locks []Lock, label func(k int) string) error {
	p := Problem{StepLabel: label}
	byStep := map[int][]Lock{}
	for _, l := range locks {
		byStep[l.Step] = append(byStep[l.Step], l)
	}
	steps := make([]int, 0, len(byStep))
	for k := range byStep {
		steps = append(steps, k)
	}
	sort.Ints(steps)
	n := len(st.Nodes)
	least := make([]float64, n)
	why := make([][]int, n) // locked nodes behind least
	locked := make([]bool, n)
	value := make([]float64, n)
	for _, k := range steps {
		clear(locked)
		for _, l := range byStep[k] {
			if l.Value < 0 {
				return inputerr.New("%s is locked to %s at %s, below zero, but the forecasts are non-negative (turn non-negativity off to allow it)",
					st.Label(l.Node), fmtValue(l.Value), p.stepLabel(k))
			}
			locked[l.Node], value[l.Node] = true, l.Value
		}
		for lv := len(st.Levels) - 1; lv >= 0; lv-- {
			for _, i := range st.Levels[lv].Nodes {
				best, bestWhy := 0.0, []int(nil)
				for _, sp := range st.Splits(i) {
					var s float64
					var w []int
					for _, c := range sp.Nodes {
						s += least[c]
						w = append(w, why[c]...)
					}
					if s > best {
						best, bestWhy = s, w
					}
				}
				if locked[i] {
					if best > value[i]*(1+1e-9)+1e-9 {
						var names []string
						for _, c := range bestWhy[:min(len(bestWhy), 5)] {
							names = append(names, fmt.Sprintf("%s (%s)", st.Label(c), fmtValue(value[c])))
						}
						more := ""
						if len(bestWhy) > 5 {
							more = fmt.Sprintf(" and %d more", len(bestWhy)-5)
						}
						return inputerr.New("the locks at %s contradict each other: %s is locked to %s, below the %s its locked parts %s%s add up to with non-negative forecasts",
							p.stepLabel(k), st.Label(i), fmtValue(value[i]), fmtValue(best), strings.Join(names, ", "), more)
					}
					least[i], why[i] = value[i], []int{i}
				} else {
					least[i], why[i] = best, bestWhy
				}
			}
		}
	}
	return nil
}

// exactLocks writes every lock's value into the solution as given: the
// projection meets it to rounding (a relative 1e-15 or so), and a target
// of 1,000,000 should read 1,000,000, not 999,999.9999999998. Coherence
// holds to the same rounding.
func exactLocks(sol *Solution, st *hierarchy.Structure, locks []Lock) {
	off := st.BottomOffset()
	for _, l := range locks {
		sol.Forecast[l.Node][l.Step] = l.Value
		if l.Node >= off {
			sol.Bottom[l.Node-off][l.Step] = l.Value
		}
	}
}

// equalities are the independent locks of one step as equality
// constraints of the non-negative problem (see activeSet).
type equalities struct {
	nodes  []int   // the locked nodes
	rows   [][]int // per lock: the locked node's bottom series
	values []float64
}

// equalities returns the locks of step k for activeSet, nil when the
// step has none (or lp is nil).
func (lp *lockPlan) equalities(k int) *equalities {
	if lp == nil || lp.steps[k] == nil {
		return nil
	}
	s := lp.steps[k]
	eq := &equalities{values: s.values}
	for _, c := range s.cols {
		eq.nodes = append(eq.nodes, lp.nodes[c])
		eq.rows = append(eq.rows, lp.st.S.Row(lp.nodes[c]))
	}
	return eq
}

// solve solves the restricted problem on the free series subject to the
// locks (qpProblem.solveFreeLocked) and returns the solution and the
// locks' multipliers. A lock with no free series left cannot be met on
// this free set: its series are freed (freed = true) for the caller to
// solve again; a lock of zero with none left already holds and is left
// out.
//
// A series is fixed by a lock on it alone (a locked bottom series); a
// lock whose free series are all fixed so is met only if its other series
// may move, so those are freed too. (The plan has already refused locks
// that contradict each other, so freeing them is always possible.)
func (eq *equalities) solve(qp qpProblem, free []bool, rhs, y []float64, tol float64) (x, mu []float64, freed bool, err error) {
	fixed := map[int]bool{}
	for _, row := range eq.rows {
		if len(row) == 1 {
			fixed[row[0]] = true
		}
	}
	var use []int
	for l, row := range eq.rows {
		any, movable := false, len(row) == 1
		for _, j := range row {
			any = any || free[j]
			movable = movable || free[j] && !fixed[j]
		}
		switch {
		case any && movable:
			use = append(use, l)
		case any:
			some := false
			for _, j := range row {
				some = some || !free[j]
				free[j] = true
			}
			if !some {
				use = append(use, l) // every series fixed: the plan found it implied
			}
			freed = freed || some
		case eq.values[l] != 0:
			for _, j := range row {
				free[j] = true
			}
			freed = true
		}
	}
	if freed {
		return nil, nil, true, nil
	}
	nodes := make([]int, len(use))
	values := make([]float64, len(use))
	for a, l := range use {
		nodes[a], values[a] = eq.nodes[l], eq.values[l]
	}
	x, muUse, err := qp.solveFreeLocked(free, rhs, y, tol, nodes, values)
	if err != nil {
		return nil, nil, false, err
	}
	mu = make([]float64, len(eq.rows))
	for a, l := range use {
		mu[l] = muUse[a]
	}
	return x, mu, false, nil
}

// zeroed marks the bottom series (of m) under a lock of zero: with
// non-negative series they can only be zero.
func (eq *equalities) zeroed(m int) []bool {
	out := make([]bool, m)
	for l, row := range eq.rows {
		if eq.values[l] == 0 {
			for _, j := range row {
				out[j] = true
			}
		}
	}
	return out
}

// addMultipliers adds Cᵀμ to w.
func (eq *equalities) addMultipliers(w, mu []float64) {
	for l, row := range eq.rows {
		for _, j := range row {
			w[j] += mu[l]
		}
	}
}
