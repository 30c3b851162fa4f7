package engine

import (
	"fmt"
	"math"
	"math/rand/v2"
	"slices"

	"trueup/hierarchy"
	"trueup/inputerr"
	"trueup/internal/membudget"
	"trueup/reconcile"
)

// The interval methods (Options.Intervals).
const (
	// IntervalsErrorQuantiles: forecast ± f_L·z_L·sd from the coherent
	// variances, f_L from the quantiles of the in-sample errors of the
	// reconciled forecasts, per node level (errorShape).
	IntervalsErrorQuantiles = "error-quantiles"
	// IntervalsGaussian: forecast ± z·sd from the coherent variances
	// (reconcile.Solution.Variance).
	IntervalsGaussian = "gaussian"
	// IntervalsBootstrap: empirical quantiles of reconciled sample paths
	// simulated from every node's model with jointly resampled residuals
	// (see bootstrapIntervals).
	IntervalsBootstrap = "bootstrap"
)

// DefaultIntervals is the interval method used when none is named.
const DefaultIntervals = IntervalsErrorQuantiles

// DefaultDraws is the number of sample paths of the bootstrap: the 2.5%
// quantile of 1,000 draws has a standard error of about 0.5 percentage
// points of probability (√(p(1−p)/N), common practice).
const DefaultDraws = 1000

// bootstrapSeed seeds the bootstrap's draws: the same input gives the
// same intervals.
const bootstrapSeed = 0x7275657570

// drawTol is the relative residual the large-structure solver reaches
// for each reconciled draw (1e-12 for point forecasts). The bounds are
// quantiles of DefaultDraws draws, whose Monte Carlo error (see
// DefaultDraws) is about a hundredth of the interval's width, while
// draws solved to 1e-6 differ from exact ones by about a millionth of
// their scale (reconcile TestMapIsTheProjection holds them to 1e-4); the
// conjugate gradients need about half the iterations (22 against 43 at
// 39,442 nodes).
const drawTol = 1e-6

// batchBytes bounds the n × (h·draws) matrix of path errors that one
// reconcile call takes: the call holds a few matrices of that size (the
// errors, the reconciled bottom series, S times them, and an iterative
// solver's work vectors), so 64 MiB keeps a batch within a few hundred
// MB, while batches large enough to amortise the setup each call repeats
// (the covariance and the solver's preconditioner).
const batchBytes = 64 << 20

// Sampled holds bootstrap intervals: for each interval level, lower and
// upper bounds of every node and step.
type Sampled struct {
	// Draws is the number of sample paths; Block the length of the
	// blocks of consecutive residual periods they resample.
	Draws, Block int
	// Fallback counts the nodes whose fitted model has no path form
	// (models.Simulator; Croston's method) or one whose paths leave the
	// range of its transform (models.PathForm.Bounded): their paths take
	// their own residual at the same periods, scaled to their own h-step
	// variance (or, without residuals, Gaussian draws of that variance),
	// so they keep the correlation with the other nodes but not their
	// model's dynamics.
	Fallback int
	levels   []float64
	h        int
	lo, hi   [][]float64 // per level, node·h + step
	// samples, kept for scoring (backtest), holds the reconciled draws,
	// (node·h + step)·Draws + draw.
	samples []float32
	// crps holds, after a backtest scored the draws, the sample CRPS of
	// every node·h + step.
	crps []float64
}

// bounds returns the interval of node i at step k for the level in
// percent (ok false for a level not sampled).
func (s *Sampled) bounds(i, k int, level float64) (lo, hi float64, ok bool) {
	q := slices.Index(s.levels, level)
	if q < 0 {
		return 0, 0, false
	}
	c := i*s.h + k
	return s.lo[q][c], s.hi[q][c], true
}

// draws returns the reconciled draws of node i at step k (nil when not
// kept).
func (s *Sampled) draws(i, k int) []float32 {
	if s.samples == nil {
		return nil
	}
	c := (i*s.h + k) * s.Draws
	return s.samples[c : c+s.Draws]
}

// blockLength is the length of the blocks of consecutive residual
// periods each path resamples: about T^{1/3}, the order that minimises
// the error of block-bootstrap variance estimates (Hall, Horowitz & Jing
// 1995), at most h.
func blockLength(T, h int) int {
	return max(1, min(h, int(math.Round(math.Cbrt(float64(T))))))
}

// checkBootstrapMemory checks the draws kept per node and step (float32)
// and one batch's matrices before they are allocated.
func checkBootstrapMemory(budget int64, n, h, draws int) error {
	need := membudget.Add(membudget.Mul(int64(n), int64(h), 4*int64(draws)), 3*batchBytes)
	return checkMemory(budget, fmt.Sprintf("bootstrap intervals from %d sample paths of %d nodes over %d steps", draws, n, h), need)
}

// bootstrapIntervals draws sample paths of every node, reconciles each
// path and takes interval bounds as empirical quantiles of the reconciled
// draws: probabilistic reconciliation by a joint bootstrap (Panagiotelis,
// Gamakumara, Athanasopoulos & Hyndman 2023, "Probabilistic forecast
// reconciliation: properties, evaluation and score optimisation", EJOR
// 305(2), §4, and their Theorem on the coherence of reconciled samples).
//
// Each draw picks blocks of consecutive residual periods (circular
// blocks, Politis & Romano 1992, of blockLength periods) and gives every
// node its own in-sample innovations at the SAME periods, so the errors
// keep their correlation across nodes; each node's path is then
// simulated from its fitted model (models.PathForm) driven by those
// innovations. A node with no innovation at a chosen period (it opened
// later) takes its innovation at the same position in its own span. Each
// batch of paths is reconciled by method, the same method as the point
// forecast (so every reconciled path is coherent): a projection (MinT) is
// linear, so a reconciled draw is the point forecast plus the
// reconciliation of the path's errors (which keeps a non-negative point
// forecast as the centre; the draws themselves are not constrained); any
// other method reconciles the paths themselves. Nodes are the open part
// (trading) of full; closed nodes are zero in every draw.
func bootstrapIntervals(method reconcile.Method, prob reconcile.Problem, sol reconcile.Solution, fits []NodeFit,
	trading *openPart, full *hierarchy.Structure, h int, levels []float64, draws int, keep bool, budget int64) (*Sampled, error) {
	if info, _ := reconcile.LookupMethod(method.Name()); info.Temporal {
		return nil, inputerr.ForOption("Intervals", "bootstrap intervals are not available for %s, which reconciles coarser grains as well", method.Name())
	}
	n := len(prob.Base)
	nFull := len(full.Nodes)
	if err := checkBootstrapMemory(budget, nFull, h, draws); err != nil {
		return nil, err
	}
	T := len(prob.Residuals[0])
	block := blockLength(T, h)
	sim := newPathSims(fits, prob.Residuals, prob.History, h)
	out := &Sampled{Draws: draws, Block: block, Fallback: sim.fallback, levels: levels, h: h}
	store := make([]float32, nFull*h*draws)
	// A projection is linear: its map is set up once for every batch.
	var apply func([][]float64) ([][]float64, error)
	if pr, ok := method.(reconcile.Projection); ok {
		var err error
		if apply, err = pr.Map(reconcile.Problem{Structure: prob.Structure, Residuals: prob.Residuals, Solver: prob.Solver}, drawTol); err != nil {
			return nil, err
		}
	}
	linear := apply != nil

	perDraw := max(1, n*h*8)
	batch := max(1, min(draws, batchBytes/perDraw))
	idx := make([]int, h)
	path := make([]float64, h)
	for d0 := 0; d0 < draws; d0 += batch {
		b := min(batch, draws-d0)
		base := make([][]float64, n)
		cols := b * h
		buf := make([]float64, n*cols)
		for i := range base {
			base[i] = buf[i*cols : (i+1)*cols : (i+1)*cols]
		}
		for q := 0; q < b; q++ {
			d := d0 + q
			rng := rand.New(rand.NewPCG(bootstrapSeed, uint64(d)))
			for k := 0; k < h; {
				s := rng.IntN(T)
				for j := 0; j < block && k < h; j++ {
					idx[k] = (s + j) % T
					k++
				}
			}
			for i := 0; i < n; i++ {
				sim.path(path, i, idx, uint64(d))
				for k := 0; k < h; k++ {
					e := path[k] - prob.Base[i][k]
					if !linear {
						e = path[k]
					}
					base[i][q*h+k] = e
				}
			}
		}
		var rec [][]float64
		if linear {
			var err error
			if rec, err = apply(base); err != nil {
				return nil, err
			}
		} else {
			p := reconcile.Problem{Structure: prob.Structure, Base: base, Residuals: prob.Residuals, History: prob.History,
				Solver: prob.Solver}
			r, err := method.Reconcile(p)
			if err != nil {
				return nil, err
			}
			rec = r.Forecast
		}
		for i := 0; i < n; i++ {
			f := trading.toFull[i]
			for q := 0; q < b; q++ {
				for k := 0; k < h; k++ {
					v := rec[i][q*h+k]
					if linear {
						v += sol.Forecast[i][k]
					}
					store[(f*h+k)*draws+d0+q] = float32(v)
				}
			}
		}
	}
	out.lo, out.hi = make([][]float64, len(levels)), make([][]float64, len(levels))
	for q := range levels {
		out.lo[q], out.hi[q] = make([]float64, nFull*h), make([]float64, nFull*h)
	}
	sorted := make([]float64, draws)
	for c := 0; c < nFull*h; c++ {
		for d, v := range store[c*draws : (c+1)*draws] {
			sorted[d] = float64(v)
		}
		slices.Sort(sorted)
		for q, l := range levels {
			a := (1 - l/100) / 2
			out.lo[q][c], out.hi[q][c] = sampleQuantile(sorted, a), sampleQuantile(sorted, 1-a)
		}
	}
	if keep {
		out.samples = store
	}
	return out, nil
}

// sampleQuantile is the p-quantile of sorted values by linear
// interpolation between order statistics (Hyndman & Fan 1996, type 7,
// R's default).
func sampleQuantile(sorted []float64, p float64) float64 {
	n := len(sorted)
	if n == 1 {
		return sorted[0]
	}
	x := p * float64(n-1)
	j := int(math.Floor(x))
	if j >= n-1 {
		return sorted[n-1]
	}
	g := x - float64(j)
	return sorted[j] + g*(sorted[j+1]-sorted[j])
}

// pathSims simulates every node's paths.
type pathSims struct {
	fits      []NodeFit
	resid     [][]float64 // per node, on the calendar: its residuals, NaN where none
	simulated []bool      // per node: whether its paths come from its path form
	valid     [][]int     // fallback nodes: the calendar periods with a residual
	scale     [][]float64 // fallback nodes: sd_k / σ of the residuals (nil with a path form)
	bound     []float64   // per node: the largest plausible value of a path
	fallback  int
	at        []int
}

func newPathSims(fits []NodeFit, resid, history [][]float64, h int) *pathSims {
	s := &pathSims{fits: fits, resid: resid, simulated: make([]bool, len(fits)), valid: make([][]int, len(fits)),
		scale: make([][]float64, len(fits)), bound: make([]float64, len(fits)), at: make([]int, h)}
	for i, f := range fits {
		s.simulated[i] = true
		// The plausibility bound of usable (on the history, or the
		// forecasts without one): a back-transformed path (Box–Cox with
		// λ < 0, say) can leave the float range.
		top := 1.0
		for _, v := range f.Mean {
			top = math.Max(top, math.Abs(v))
		}
		if history != nil {
			for _, v := range history[i] {
				if !math.IsNaN(v) {
					top = math.Max(top, math.Abs(v))
				}
			}
		}
		s.bound[i] = explosionFactor * top
		if f.Path != nil && f.Path.Bounded(s.bound[i]) {
			continue
		}
		s.simulated[i] = false
		if !f.Closed && f.Fitted {
			s.fallback++
		}
		var ss float64
		for t, v := range resid[i] {
			if !math.IsNaN(v) {
				s.valid[i] = append(s.valid[i], t)
				ss += v * v
			}
		}
		sd := math.Sqrt(ss / float64(max(len(s.valid[i]), 1)))
		sc := make([]float64, h)
		for k := range sc {
			if sd > 0 {
				sc[k] = f.StdError(k) / sd
			} else {
				sc[k] = math.NaN() // no residuals: Gaussian draws
			}
		}
		s.scale[i] = sc
	}
	return s
}

// path fills dst with node i's path for the calendar periods idx of
// draw d.
func (s *pathSims) path(dst []float64, i int, idx []int, d uint64) {
	f := &s.fits[i]
	if s.simulated[i] {
		for k, t := range idx {
			s.at[k] = t - f.First
		}
		f.Path.Simulate(dst, s.at)
		for k, v := range dst {
			dst[k] = math.Max(-s.bound[i], math.Min(v, s.bound[i]))
		}
		return
	}
	valid := s.valid[i]
	var rng *rand.Rand
	for k, t := range idx {
		sc := s.scale[i][k]
		if math.IsNaN(sc) {
			if rng == nil {
				rng = rand.New(rand.NewPCG(bootstrapSeed^d, uint64(i)))
			}
			dst[k] = f.Mean[k] + f.StdError(k)*rng.NormFloat64()
			continue
		}
		v := s.resid[i][t]
		if math.IsNaN(v) {
			v = s.resid[i][valid[t%len(valid)]]
		}
		dst[k] = f.Mean[k] + sc*v
	}
}
