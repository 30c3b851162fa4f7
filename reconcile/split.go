package reconcile

import (
	"math"
	"strings"

	"trueup/hierarchy"
	"trueup/inputerr"
)

// splitPlan describes a method that keeps the base forecasts of one level
// (the "middle" level: the total for top-down, the bottom for bottom-up)
// and splits each of them over its bottom series by proportions:
// b̃_j = p_j · ŷ_{k(j)}, ỹ = S·b̃. Its G has one non-zero per column of
// the bottom: G[j, k(j)] = p_j.
type splitPlan struct {
	level int   // index into Structure.Levels
	mid   []int // node indices of the level, K of them
	of    []int // of[j] is the position in mid of bottom j's node
}

func newSplitPlan(st *hierarchy.Structure, level int) *splitPlan {
	lv := st.Levels[level]
	at := make(map[int]int, len(lv.Nodes))
	for k, i := range lv.Nodes {
		at[i] = k
	}
	of := make([]int, st.NumBottom())
	for j := range of {
		of[j] = at[st.NodeAt(level, j)]
	}
	return &splitPlan{level: level, mid: lv.Nodes, of: of}
}

// solve forms the reconciled forecasts and, when the problem allows, the
// variances, from proportions prop (m × h).
func (sp *splitPlan) solve(p *Problem, prop [][]float64, h int) (Solution, error) {
	m := len(sp.of)
	bottom := newRows(m, h)
	for j := 0; j < m; j++ {
		base := p.Base[sp.mid[sp.of[j]]]
		for k := 0; k < h; k++ {
			bottom[j][k] = prop[j][k] * base[k]
		}
	}
	sol := coherent(p.Structure, bottom)
	if !p.wantVariance() {
		return sol, nil
	}
	w, err := p.varianceCov()
	if err != nil {
		return Solution{}, err
	}
	c := growth(p, w, sp.mid, h)
	sol.Variance = sp.variance(p.Structure, w, c, prop, h)
	if p.Joint {
		sol.Joint = sp.joint(p.Structure, w, c, prop, h)
	}
	return sol, nil
}

// variance returns diag(S·G·C_h·W·C_h·Gᵀ·Sᵀ) for every node and step,
// without forming any n × n matrix. With a_ik = Σ_{j∈i, k(j)=k} p_j (how
// much of middle node k's error reaches node i) and W = diag(Δ) + U·Uᵀ,
//
//	var_i = Σ_k a_ik² c_k² Δ_k + Σ_t (Σ_k a_ik c_k U_kt)²
//
// which costs O(nnz(S)·T) per step (for bottom-up a_ik = 1 for each of
// node i's bottom series).
func (sp *splitPlan) variance(st *hierarchy.Structure, w *errCov, c [][]float64, prop [][]float64, h int) [][]float64 {
	n := len(st.Nodes)
	K := len(sp.mid)
	T := w.rank()
	out := newRows(n, h)
	acc := make([]float64, K)
	stamp := make([]int, K)
	for k := range stamp {
		stamp[k] = -1
	}
	touched := make([]int, 0, K)
	u := make([]float64, T)
	for k := 0; k < h; k++ {
		for i := 0; i < n; i++ {
			touched = touched[:0]
			for _, j := range st.S.Row(i) {
				q := sp.of[j]
				if stamp[q] != i+k*n {
					stamp[q] = i + k*n
					acc[q] = 0
					touched = append(touched, q)
				}
				acc[q] += prop[j][k]
			}
			var v float64
			for t := range u {
				u[t] = 0
			}
			for _, q := range touched {
				a := acc[q] * c[q][k]
				node := sp.mid[q]
				v += a * a * w.Delta[node]
				if T > 0 {
					row := w.U[node*T : (node+1)*T]
					for t, x := range row {
						u[t] += a * x
					}
				}
			}
			for _, x := range u {
				v += x * x
			}
			out[i][k] = v
		}
	}
	return out
}

// Proportions names how top-down methods split the total.
type Proportions string

// The top-down proportions.
const (
	// HistoricalProportions: p_j = (1/T) Σ_t y_jt / y_t, the average of
	// the historical shares (Gross & Sohl 1990, "Disaggregation methods
	// to expedite product line forecasting", Journal of Forecasting 9(3),
	// method A).
	HistoricalProportions Proportions = "hist"
	// ProportionsOfAverages: p_j = Σ_t y_jt / Σ_t y_t, the share of the
	// historical averages (Gross & Sohl 1990, method F).
	ProportionsOfAverages Proportions = "avg"
	// ForecastProportions: the product down the chain of each node's base
	// forecast over the sum of its siblings' (Athanasopoulos, Ahmed &
	// Hyndman 2009, "Hierarchical forecasts for Australian domestic
	// tourism", International Journal of Forecasting 25(1), §3.2).
	ForecastProportions Proportions = "fcst"
)

// TopDown splits the base forecast of the total over the bottom series.
//
// On a grouped structure (several crossed chains) the historical
// proportions are still uniquely defined: they are each bottom series'
// share of the total. Forecast proportions are not, because the product
// of sibling shares depends on which chain is split first; TopDown with
// ForecastProportions therefore needs a structure of one chain and
// otherwise refuses, suggesting middle-out at a level that leaves one
// chain to split, or mint.
type TopDown struct{ Proportions Proportions }

var _ Method = TopDown{}

// Name implements Method.
func (t TopDown) Name() string { return "top-down-" + string(t.Proportions) }

// Reconcile implements Method.
func (t TopDown) Reconcile(p Problem) (Solution, error) {
	_, m, h, err := p.dims()
	if err != nil {
		return Solution{}, err
	}
	if err := refuseLocks(&p, t.Name()); err != nil {
		return Solution{}, err
	}
	if p.Nonnegative {
		return Solution{}, inputerr.ForOption("Nonnegative", "non-negative reconciliation applies to %s only (%s keeps the sign of the total)", nonNegativeOnly(), t.Name())
	}
	var prop [][]float64
	switch t.Proportions {
	case ForecastProportions:
		prop, err = forecastProportions(&p, 0, h)
	case HistoricalProportions, ProportionsOfAverages:
		prop, err = historicalProportions(&p, t.Proportions, m, h)
	default:
		panic("reconcile: unknown proportions " + string(t.Proportions))
	}
	if err != nil {
		return Solution{}, err
	}
	return newSplitPlan(p.Structure, 0).solve(&p, prop, h)
}

// historicalProportions computes the Gross & Sohl shares of the bottom
// series in the total. A missing value (before a series existed) counts
// as zero sales. Periods where the total is not positive are left out of
// the average of shares.
func historicalProportions(p *Problem, kind Proportions, m, h int) ([][]float64, error) {
	st := p.Structure
	if p.History == nil {
		return nil, inputerr.ForOption("History", "top-down-%s needs the sales history of the bottom series", kind)
	}
	off := st.BottomOffset()
	T := len(p.History[off])
	total := make([]float64, T)
	for j := 0; j < m; j++ {
		for t, v := range p.History[off+j] {
			if v == v {
				total[t] += v
			}
		}
	}
	share := make([]float64, m)
	switch kind {
	case HistoricalProportions:
		used := 0
		for t, y := range total {
			if !(y > 0) {
				continue
			}
			used++
			for j := 0; j < m; j++ {
				if v := p.History[off+j][t]; v == v {
					share[j] += v / y
				}
			}
		}
		if used == 0 {
			return nil, inputerr.New("top-down-hist: the total has no period with positive sales")
		}
		for j := range share {
			share[j] /= float64(used)
		}
	default:
		var sum float64
		for _, y := range total {
			sum += y
		}
		if !(sum > 0) {
			return nil, inputerr.New("top-down-avg: the total of the sales history is not positive")
		}
		for j := 0; j < m; j++ {
			var s float64
			for _, v := range p.History[off+j] {
				if v == v {
					s += v
				}
			}
			share[j] = s / sum
		}
	}
	prop := newRows(m, h)
	for j := range prop {
		for k := range prop[j] {
			prop[j][k] = share[j]
		}
	}
	return prop, nil
}

// forecastProportions computes Athanasopoulos–Ahmed–Hyndman forecast
// proportions below level l: for bottom series j with ancestors
// n_q, …, n_L along the one chain the level leaves unsplit,
// p_j = Π_q ŷ(n_{q+1}) / Σ_{siblings s of n_{q+1}} ŷ(s). When the
// siblings' forecasts sum to zero they share equally.
func forecastProportions(p *Problem, l, h int) ([][]float64, error) {
	st := p.Structure
	depth := st.Levels[l].Depth
	chain := -1
	for c, d := range depth {
		if d < len(st.Chains[c]) {
			if chain >= 0 {
				return nil, inputerr.New(
					"splitting %s by forecast proportions is not uniquely defined: it leaves chains %s and %s to split, and the result depends on which goes first; use middle-out from a level that keeps all but one chain at full depth (for example %s), or mint",
					st.Levels[l].Name, strings.Join(st.Chains[chain], ","), strings.Join(st.Chains[c], ","), exampleSplitLevel(st))
			}
			chain = c
		}
	}
	m := st.NumBottom()
	prop := newRows(m, h)
	for j := range prop {
		for k := range prop[j] {
			prop[j][k] = 1
		}
	}
	if chain < 0 {
		return prop, nil // the level is the bottom
	}
	// The levels from l down to the bottom along the chain.
	var path []int
	for q := depth[chain]; q <= len(st.Chains[chain]); q++ {
		d := append([]int(nil), depth...)
		d[chain] = q
		lv, _ := st.LevelWithDepth(d)
		path = append(path, lv)
	}
	sums := make(map[int]float64)
	kids := make(map[int]map[int]bool)
	for q := 0; q+1 < len(path); q++ {
		for k := 0; k < h; k++ {
			clear(sums)
			clear(kids)
			for j := 0; j < m; j++ {
				par, kid := st.NodeAt(path[q], j), st.NodeAt(path[q+1], j)
				if kids[par] == nil {
					kids[par] = map[int]bool{}
				}
				if !kids[par][kid] {
					kids[par][kid] = true
					sums[par] += p.Base[kid][k]
				}
			}
			for j := 0; j < m; j++ {
				par, kid := st.NodeAt(path[q], j), st.NodeAt(path[q+1], j)
				if s := sums[par]; s != 0 && !math.IsInf(p.Base[kid][k]/s, 0) {
					prop[j][k] *= p.Base[kid][k] / s
				} else {
					prop[j][k] /= float64(len(kids[par]))
				}
			}
		}
	}
	return prop, nil
}

// exampleSplitLevel names a level at which middle-out is defined on a
// grouped structure: every chain at full depth but the last one at 0.
func exampleSplitLevel(st *hierarchy.Structure) string {
	d := make([]int, len(st.Chains))
	for c := range d {
		d[c] = len(st.Chains[c])
	}
	d[len(d)-1] = 0
	l, _ := st.LevelWithDepth(d)
	return st.Levels[l].Name
}

// MiddleOut keeps the base forecasts of a named level, adds them up for
// the coarser nodes and splits them by forecast proportions below
// (Athanasopoulos, Ahmed & Hyndman 2009, §3.3). On a grouped structure
// the split is uniquely defined only when the level keeps all chains but
// one at full depth; otherwise MiddleOut refuses with a message naming a
// level that works.
type MiddleOut struct{ Level string }

var _ Method = MiddleOut{}

// Name implements Method.
func (MiddleOut) Name() string { return "middle-out" }

// Reconcile implements Method.
func (mo MiddleOut) Reconcile(p Problem) (Solution, error) {
	_, _, h, err := p.dims()
	if err != nil {
		return Solution{}, err
	}
	if err := refuseLocks(&p, mo.Name()); err != nil {
		return Solution{}, err
	}
	if p.Nonnegative {
		return Solution{}, inputerr.ForOption("Nonnegative", "non-negative reconciliation applies to %s only", nonNegativeOnly())
	}
	l, ok := p.Structure.LevelByName(mo.Level)
	if !ok {
		return Solution{}, inputerr.ForOption("At", "%q is not a level of the structure (levels: %s)", mo.Level, strings.Join(p.Structure.LevelNames(), ", "))
	}
	prop, err := forecastProportions(&p, l, h)
	if err != nil {
		return Solution{}, err
	}
	return newSplitPlan(p.Structure, l).solve(&p, prop, h)
}
