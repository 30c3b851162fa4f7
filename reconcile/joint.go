package reconcile

import (
	"math"
	"math/rand/v2"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"

	"trueup/hierarchy"
)

// Joint is the joint Gaussian distribution of a solution's forecast
// errors at one step, the distribution whose diagonal is
// Solution.Variance, held in factored form so that draws cost O(rows·r +
// nnz(S)) and no n × n matrix is formed. A factor row ρ is
//
//	u_ρ = F_ρ·z + d_ρ·η_ρ,  z ~ N(0, I_r), η ~ N(0, I),
//
// the error of series j at step k is scale_jk·u_{row(j)}, and, when the
// series are the bottom ones, the errors of all nodes are S times theirs.
// For the projections F = G·C_k·[diag(√Δ) U] at step k, one factor per
// step, with scale 1 (every node's growth C_k; above exactGrowthMaxWork
// F = G·[diag(√Δ) U] for every step with scale the bottom series' growth;
// on the large path above Problem.Paths late nodes the diagonal part is
// the sampled paths, without the control variate the variances use), for
// bottom-up, top-down and middle-out the rows are the middle level's
// (F = U, d = √Δ there), and for the base forecasts (BaseJoint) every
// node is a row. Draws are Gaussian even under non-negative
// reconciliation, whose lower bounds are clamped at zero.
type Joint struct {
	st     *hierarchy.Structure // nil: rows are the nodes, not summed
	factor *mat.Dense           // rows × r, may be nil (r = 0)
	diag   []float64            // per factor row, nil for none
	row    []int                // per series: its factor row
	scale  [][]float64          // per series × step; nil: all 1
	// steps, when not nil, replaces factor: one per step (a projection
	// with every node's growth).
	steps []*mat.Dense
	// toFull maps the nodes to those of a larger structure of full
	// nodes (nil: the identity).
	toFull []int
	full   int
}

// Nodes is the length of the vectors Draw fills.
func (j *Joint) Nodes() int {
	if j.toFull != nil {
		return j.full
	}
	if j.st != nil {
		return len(j.st.Nodes)
	}
	return len(j.row)
}

// Expand returns j on a larger structure of full nodes, toFull[i] being
// node i's index there; nodes outside j are drawn as zero (a closed node's
// forecast is a known zero).
func (j *Joint) Expand(toFull []int, full int) *Joint {
	out := *j
	if j.toFull != nil {
		m := make([]int, len(j.toFull))
		for i, f := range j.toFull {
			m[i] = toFull[f]
		}
		toFull = m
	}
	out.toFull, out.full = toFull, full
	return &out
}

// stepFactor returns the factor at step k.
func (j *Joint) stepFactor(k int) *mat.Dense {
	if j.steps != nil {
		return j.steps[k]
	}
	return j.factor
}

// scaleAt is series s's scale at step k.
func (j *Joint) scaleAt(s, k int) float64 {
	if j.scale == nil {
		return 1
	}
	return j.scale[s][k]
}

// Draw fills dst (Nodes long) with one draw of every node's error at step
// k (0-based), taking its normals from rng.
func (j *Joint) Draw(dst []float64, k int, rng *rand.Rand) {
	factor := j.stepFactor(k)
	r := 0
	if factor != nil {
		_, r = factor.Dims()
	}
	z := make([]float64, r)
	for q := range z {
		z[q] = rng.NormFloat64()
	}
	rows := len(j.row)
	if factor != nil {
		rows, _ = factor.Dims()
	} else if j.diag != nil {
		rows = len(j.diag)
	}
	u := make([]float64, rows)
	for q := range u {
		if factor != nil {
			u[q] = floats.Dot(factor.RawRowView(q), z)
		}
		if j.diag != nil {
			u[q] += j.diag[q] * rng.NormFloat64()
		}
	}
	e := make([]float64, len(j.row))
	for s, q := range j.row {
		e[s] = j.scaleAt(s, k) * u[q]
	}
	nodes := e
	if j.st != nil {
		nodes = make([]float64, len(j.st.Nodes))
		j.st.S.MulVec(nodes, e)
	}
	if j.toFull == nil {
		copy(dst, nodes)
		return
	}
	clear(dst)
	for i, f := range j.toFull {
		dst[f] = nodes[i]
	}
}

// variance returns the diagonal of the joint covariance at step k,
// computed from the factor (for tests: it must equal Solution.Variance).
func (j *Joint) variance(k int) []float64 {
	n := len(j.row)
	if j.st != nil {
		n = len(j.st.Nodes)
	}
	factor := j.stepFactor(k)
	out := make([]float64, n)
	for i := range out {
		members := []int{i}
		if j.st != nil {
			members = j.st.S.Row(i)
		}
		// Σ over factor rows: a_ρ = Σ_{s∈i, row(s)=ρ} scale_sk.
		a := map[int]float64{}
		for _, s := range members {
			a[j.row[s]] += j.scaleAt(s, k)
		}
		r := 0
		if factor != nil {
			_, r = factor.Dims()
		}
		col := make([]float64, r)
		var v float64
		for q, w := range a {
			if factor != nil {
				floats.AddScaled(col, w, factor.RawRowView(q))
			}
			if j.diag != nil {
				v += w * w * j.diag[q] * j.diag[q]
			}
		}
		out[i] = v + floats.Dot(col, col)
	}
	return out
}

// projectionJoint is the joint distribution of a projection from the
// factor of G·W·Gᵀ and the bottom growth c (m × h).
func projectionJoint(st *hierarchy.Structure, f *factor, c [][]float64) *Joint {
	j := &Joint{st: st, row: identityRows(st.NumBottom()), scale: c}
	j.factor = joinedFactor(f)
	return j
}

// stepsJoint is the joint distribution of a projection with every node's
// growth, from its factor at each step (fs[k] of G·C_k·W·C_k·Gᵀ).
func stepsJoint(st *hierarchy.Structure, fs []*factor) *Joint {
	j := &Joint{st: st, row: identityRows(st.NumBottom()), steps: make([]*mat.Dense, len(fs))}
	for k, f := range fs {
		j.steps[k] = joinedFactor(f)
	}
	return j
}

func identityRows(m int) []int {
	out := make([]int, m)
	for s := range out {
		out[s] = s
	}
	return out
}

// joinedFactor returns f's exact columns and sample paths side by side
// (nil when it has none).
func joinedFactor(f *factor) *mat.Dense {
	var blocks []*mat.Dense
	for _, b := range []*mat.Dense{f.exact, f.paths} {
		if b != nil {
			blocks = append(blocks, b)
		}
	}
	r := 0
	for _, b := range blocks {
		_, w := b.Dims()
		r += w
	}
	if r == 0 {
		return nil
	}
	m, _ := blocks[0].Dims()
	out := mat.NewDense(m, r, nil)
	c0 := 0
	for _, b := range blocks {
		_, w := b.Dims()
		out.Slice(0, m, c0, c0+w).(*mat.Dense).Copy(b)
		c0 += w
	}
	return out
}

// splitJoint is the joint distribution of a split method: the middle
// level's errors (W restricted to it) spread by the proportions.
func (sp *splitPlan) joint(st *hierarchy.Structure, w *errCov, c, prop [][]float64, h int) *Joint {
	K, T := len(sp.mid), w.rank()
	j := &Joint{st: st, row: sp.of, diag: make([]float64, K), scale: newRows(len(sp.of), h)}
	if T > 0 {
		j.factor = mat.NewDense(K, T, nil)
	}
	for q, node := range sp.mid {
		j.diag[q] = math.Sqrt(w.Delta[node])
		if T > 0 {
			j.factor.SetRow(q, w.U[node*T:(node+1)*T])
		}
	}
	for s, q := range sp.of {
		for k := 0; k < h; k++ {
			j.scale[s][k] = prop[s][k] * c[q][k]
		}
	}
	return j
}

// BaseJoint returns the joint Gaussian distribution of the base forecasts'
// errors that their variances come from: every node's own, W_h = C_h·W1·C_h
// with W1 the sample covariance of the residuals and c_hi = √(BaseVar_ih/D_i)
// (see Solution.Variance), without reconciliation. nil when the problem
// has no BaseVar or no Residuals.
func BaseJoint(p Problem) (*Joint, error) {
	if !p.wantVariance() {
		return nil, nil
	}
	_, _, h, err := p.dims()
	if err != nil {
		return nil, err
	}
	w, err := p.varianceCov()
	if err != nil {
		return nil, err
	}
	n, T := len(w.D), w.rank()
	idx := make([]int, n)
	for i := range idx {
		idx[i] = i
	}
	j := &Joint{row: idx, diag: make([]float64, n), scale: growth(&p, w, idx, h)}
	for i := range j.diag {
		j.diag[i] = math.Sqrt(w.Delta[i])
	}
	if T > 0 {
		j.factor = mat.NewDense(n, T, w.U)
	}
	return j, nil
}
