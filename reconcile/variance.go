package reconcile

import (
	"math"
	"slices"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/mat"

	"trueup/hierarchy"
	"trueup/internal/crash"
)

// factor represents G·W·Gᵀ (m × m) for the variance computation:
//
//	G·W·Gᵀ ≈ E·Eᵀ + F·Fᵀ
//
// with E exact columns and F the reconciled sample paths G·ε_s/√N of the
// diagonal part of W (nil when everything is exact). ctrl holds the same
// paths before reconciliation, their bottom rows ε_s,bottom/√N, whose
// second moments are known exactly (deltaB, per bottom series); they
// serve as a control variate (see factorVariance).
type factor struct {
	exact       *mat.Dense
	paths, ctrl *mat.Dense
	deltaB      []float64
	// rowScale, when not nil, multiplies every bottom row of exact, paths
	// and ctrl (scaledFactor).
	rowScale []float64
}

// scaledFactor returns f with every bottom row j multiplied by c[j][k]
// (exact, paths and ctrl alike, through rowScale) and deltaB by c[j][k]²:
// the factor of C_k·G·W·Gᵀ·C_k at step k, the bottom series' growth
// applied after G.
func scaledFactor(f *factor, c [][]float64, k int) *factor {
	out := &factor{exact: f.exact, paths: f.paths, ctrl: f.ctrl, rowScale: make([]float64, len(c))}
	for j := range c {
		out.rowScale[j] = c[j][k]
	}
	if f.deltaB != nil {
		out.deltaB = make([]float64, len(f.deltaB))
		for j, v := range f.deltaB {
			out.deltaB[j] = c[j][k] * c[j][k] * v
		}
	}
	return out
}

// sumPlan adds bottom-level rows up to every node through the levels
// instead of through S: each aggregate node is the disjoint union of the
// nodes of one finer level (its level with one chain refined one step;
// the finer level with fewer nodes is chosen). Summing child rows costs
// Σ_levels |child level| row additions instead of nnz(S) − m; for the
// benchmark structure 66,734 instead of 330,000.
type sumPlan struct {
	order    []int   // aggregate nodes, children before parents
	children [][]int // per node (nil for bottom nodes)
}

func newSumPlan(st *hierarchy.Structure) *sumPlan {
	pl := &sumPlan{children: make([][]int, len(st.Nodes))}
	for l := len(st.Levels) - 1; l >= 0; l-- {
		lv := st.Levels[l]
		splits := st.Splits(lv.Nodes[0])
		if len(splits) == 0 {
			continue // the bottom level
		}
		best := splits[0]
		for _, sp := range splits[1:] {
			size, bestSize := len(st.Levels[sp.Level].Nodes), len(st.Levels[best.Level].Nodes)
			if size < bestSize || size == bestSize && sp.Chain < best.Chain {
				best = sp
			}
		}
		for _, a := range lv.Nodes {
			for _, sp := range st.Splits(a) {
				if sp.Chain == best.Chain {
					pl.children[a] = sp.Nodes
				}
			}
		}
		pl.order = append(pl.order, lv.Nodes...)
	}
	return pl
}

// sum fills the aggregate rows of buf (n rows of width w, bottom rows
// already set) with the sums of their children.
func (pl *sumPlan) sum(buf []float64, w int) {
	for _, a := range pl.order {
		dst := buf[a*w : (a+1)*w]
		ch := pl.children[a]
		copy(dst, buf[ch[0]*w:(ch[0]+1)*w])
		for _, c := range ch[1:] {
			floats.Add(dst, buf[c*w:(c+1)*w])
		}
	}
}

// chunk is the number of factor columns summed at a time, which bounds
// scratch memory at n × 2·chunk floats per worker.
const chunk = 32

// factorVariance returns, for every node i and step k, the diagonal of
// S·G·W_k·Gᵀ·Sᵀ from the step's factor (step(k)), and the number of
// sample paths behind it (0 when exact): exactly
// Σ_r (Σ_{j∈i} E_jr)² for the exact columns, plus the sampled part.
//
// The sampled part a_i = Σ_s (Σ_{j∈i} F_js)² is improved by a control
// variate (Glasserman 2004, Monte Carlo Methods in Financial Engineering,
// §4.1): with α_is = Σ_{j∈i} ctrl_js, whose mean square μ_i = Σ_{j∈i}
// deltaB_j is known, the estimate is a_i − β_i (Σ_s α_is² − μ_i), β_i
// the least-squares coefficient of the per-path squares (a_is² on
// α_is²). Reconciliation changes bottom series' errors little, so for
// them and for small aggregates the sampling error largely cancels; where
// it does not, β_i ≈ 0 and the plain estimate is kept. The estimate falls
// back to the plain one if not positive. Steps are independent and shared
// between two goroutines.
//
// With locks (nil for none), the bottom error columns of a step with
// locks are multiplied by that step's M = I − P⁻¹Cᵀ(CP⁻¹Cᵀ)⁻¹C (see
// lockPlan) before the sums: locked nodes get zero variance, the others
// the variance of the constrained projection. The control variate's
// columns are left as they are: it stays a valid, if weaker, control.
func factorVariance(st *hierarchy.Structure, step func(k int) (*factor, error), h int, locks *lockPlan) ([][]float64, int, error) {
	n, m := st.S.Dims()
	off := n - m
	out := newRows(n, h)
	pl := newSumPlan(st)
	// fill sets the bottom rows of buf (width w) to s_j·F_j[c0:c0+k] for
	// each matrix, side by side, s the factor's rowScale (1 without).
	fill := func(buf []float64, w, k, c0 int, scale []float64, ms ...*mat.Dense) {
		for j := 0; j < m; j++ {
			sj := 1.0
			if scale != nil {
				sj = scale[j]
			}
			row := buf[(off+j)*w : (off+j+1)*w]
			for q, fm := range ms {
				raw := fm.RawMatrix()
				floats.ScaleTo(row[q*k:(q+1)*k], sj, raw.Data[j*raw.Stride+c0:j*raw.Stride+c0+k])
			}
		}
	}
	errs := make([]error, h)
	paths := make([]int, h)
	one := func(k int, buf []float64, mom [4][]float64) {
		f, err := step(k)
		if err != nil {
			errs[k] = err
			return
		}
		N := 0
		if f.paths != nil {
			_, N = f.paths.Dims()
		}
		paths[k] = N
		col := make([]float64, n)
		var sl *stepLocks
		if locks != nil {
			sl = locks.steps[k]
		}
		if f.exact != nil {
			_, r := f.exact.Dims()
			for c0 := 0; c0 < r; c0 += 2 * chunk {
				w := min(2*chunk, r-c0)
				fill(buf, w, w, c0, f.rowScale, f.exact)
				pl.sum(buf, w)
				if sl != nil {
					locks.correctRows(sl, buf, w, w, off)
					pl.sum(buf, w)
				}
				for i := 0; i < n; i++ {
					v := buf[i*w : (i+1)*w]
					col[i] += floats.Dot(v, v)
				}
			}
		}
		if N > 0 {
			for q := range mom {
				clear(mom[q])
			}
			for c0 := 0; c0 < N; c0 += chunk {
				k0 := min(chunk, N-c0)
				w := 2 * k0
				fill(buf, w, k0, c0, f.rowScale, f.paths, f.ctrl)
				pl.sum(buf, w)
				if sl != nil {
					locks.correctRows(sl, buf, w, k0, off)
					pl.sum(buf, w)
				}
				for i := 0; i < n; i++ {
					row := buf[i*w : (i+1)*w]
					for s := 0; s < k0; s++ {
						x, y := row[s]*row[s], row[k0+s]*row[k0+s]
						mom[0][i] += x
						mom[1][i] += y
						mom[2][i] += x * y
						mom[3][i] += y * y
					}
				}
			}
			// μ_i = Σ_{j∈i} deltaB_j, added up the same way.
			copy(buf[off:off+m], f.deltaB)
			pl.sum(buf, 1)
			for i := 0; i < n; i++ {
				col[i] += controlled(float64(N), mom[0][i], mom[1][i], mom[2][i], mom[3][i], buf[i])
			}
		}
		if sl != nil {
			for _, i := range sl.nodes {
				col[i] = 0 // zero in exact arithmetic (C·M = 0)
			}
		}
		for i := 0; i < n; i++ {
			out[i][k] = col[i]
		}
	}
	const workers = 2
	var g crash.Group
	for w := 0; w < workers; w++ {
		g.Go(func() {
			buf := make([]float64, n*2*chunk)
			var mom [4][]float64
			for q := range mom {
				mom[q] = make([]float64, n)
			}
			for k := w; k < h; k += workers {
				one(k, buf, mom)
			}
		})
	}
	g.Wait()
	for _, err := range errs {
		if err != nil {
			return nil, 0, err
		}
	}
	return out, slices.Max(paths), nil
}

// controlled returns the control-variate estimate Σx − β(Σy − mu) from the
// moments of N per-path pairs (x_s, y_s) = (a_s², α_s²): sx = Σx, sy = Σy,
// sxy = Σxy, syy = Σy², β = Cov(x, y)/Var(y). It falls back to Σx when
// Var(y) is zero or the estimate is not positive.
func controlled(N, sx, sy, sxy, syy, mu float64) float64 {
	vy := syy - sy*sy/N
	if !(vy > 1e-300) || math.IsInf(vy, 0) {
		return sx
	}
	v := sx - (sxy-sx*sy/N)/vy*(sy-mu)
	if !(v > 0) {
		return sx
	}
	return v
}
