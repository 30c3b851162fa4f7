package ets

import (
	"fmt"
	"math"

	"trueup/inputerr"
	"trueup/models"
)

// Usual bounds (HKOS §5.3), written as boxes through β = β*·α and
// γ = γ*·(1−α): α, β*, γ* ∈ [1e−4, 1−1e−4] (so 0 < β < α and
// 0 < γ < 1−α) and 0.8 ≤ φ ≤ 0.98.
const (
	parLo = 1e-4
	parHi = 1 - 1e-4
	phiLo = 0.8
	phiHi = 0.98
)

// packer maps Params to the optimiser's vector and back:
// (α, β*, γ*, φ, ℓ0, b0, s_{1−m}..s_{−1}) with absent components left out.
// States are divided by scale so that every coordinate is of order one;
// the last initial seasonal state follows from the normalisation.
type packer struct {
	sp    Spec
	m     int
	scale float64
}

// size is the number of free parameters: smoothing parameters, φ, initial
// level, initial trend and m−1 free initial seasonal states.
func (k packer) size() int {
	n := 2
	if k.sp.HasTrend() {
		n += 2
	}
	if k.sp.Damped() {
		n++
	}
	if k.sp.Seasonal() {
		n += k.m
	}
	return n
}

// bounds fills the box of each coordinate.
func (k packer) bounds(lo, hi []float64) {
	i := 0
	nSmooth := 1
	if k.sp.HasTrend() {
		nSmooth++
	}
	if k.sp.Seasonal() {
		nSmooth++
	}
	for ; i < nSmooth; i++ {
		lo[i], hi[i] = parLo, parHi
	}
	if k.sp.Damped() {
		lo[i], hi[i] = phiLo, phiHi
		i++
	}
	for ; i < len(lo); i++ {
		lo[i], hi[i] = math.Inf(-1), math.Inf(1)
		if k.sp.Season == Mul && i >= len(lo)-(k.m-1) {
			lo[i] = 1e-6
		}
	}
}

func (k packer) pack(p *Params, x []float64) {
	i := 0
	x[i] = p.Alpha
	i++
	if k.sp.HasTrend() {
		x[i] = p.Beta / p.Alpha
		i++
	}
	if k.sp.Seasonal() {
		x[i] = p.Gamma / (1 - p.Alpha)
		i++
	}
	if k.sp.Damped() {
		x[i] = p.Phi
		i++
	}
	x[i] = p.Level / k.scale
	i++
	if k.sp.HasTrend() {
		x[i] = p.Trend / k.scale
		i++
	}
	if k.sp.Seasonal() {
		for j := 0; j < k.m-1; j++ {
			if k.sp.Season == Mul {
				x[i] = p.Season[j]
			} else {
				x[i] = p.Season[j] / k.scale
			}
			i++
		}
	}
}

// unpack fills p (whose Season has length m) from x and reports whether
// the normalised multiplicative seasonal states stay positive.
func (k packer) unpack(x []float64, p *Params) bool {
	i := 0
	p.Alpha = x[i]
	i++
	p.Beta, p.Gamma, p.Phi, p.Trend = 0, 0, 1, 0
	if k.sp.HasTrend() {
		p.Beta = x[i] * p.Alpha
		i++
	}
	if k.sp.Seasonal() {
		p.Gamma = x[i] * (1 - p.Alpha)
		i++
	}
	if k.sp.Damped() {
		p.Phi = x[i]
		i++
	}
	p.Level = x[i] * k.scale
	i++
	if k.sp.HasTrend() {
		p.Trend = x[i] * k.scale
		i++
	}
	if k.sp.Seasonal() {
		sum := 0.0
		for j := 0; j < k.m-1; j++ {
			v := x[i]
			i++
			if k.sp.Season == Mul {
				if v <= 0 {
					return false
				}
				p.Season[j] = v
			} else {
				p.Season[j] = v * k.scale
			}
			sum += p.Season[j]
		}
		if k.sp.Season == Mul {
			last := float64(k.m) - sum
			if last <= 0 {
				return false
			}
			p.Season[k.m-1] = last
		} else {
			p.Season[k.m-1] = -sum
		}
	}
	return true
}

// FitSpec estimates the ETS model sp for y with seasonal period m by
// maximum likelihood (HKOS ch. 5): smoothing parameters, damping and
// initial states maximise the concentrated Gaussian log-likelihood within
// the usual bounds, by bounded Levenberg–Marquardt from heuristic initial
// states and two sets of starting smoothing parameters. Multiplicative forms need
// strictly positive y; seasonal forms need m ≥ 2 and at least two full
// seasons.
func FitSpec(y []float64, sp Spec, m int) (*Fitted, error) {
	if err := sp.Valid(); err != nil {
		return nil, err
	}
	if !sp.Seasonal() {
		m = 1
	}
	if err := checkData(y, sp, m); err != nil {
		return nil, err
	}
	return fit(y, sp, m, starts, nil)
}

// FitFrom is FitSpec started from the parameters and initial states of
// start, a fit of the same form to a shorter stretch of the same series
// (the automatic choice's earlier validation origin): one
// Levenberg–Marquardt run from there instead of the two heuristic starts,
// which are used when start is nil, of another form or period, or leads
// nowhere.
func FitFrom(y []float64, sp Spec, m int, start *Fitted) (*Fitted, error) {
	if err := sp.Valid(); err != nil {
		return nil, err
	}
	if !sp.Seasonal() {
		m = 1
	}
	if err := checkData(y, sp, m); err != nil {
		return nil, err
	}
	if start == nil || start.spec != sp || start.m != m {
		return fit(y, sp, m, starts, nil)
	}
	p := start.Parameters()
	return fit(y, sp, m, starts, &p)
}

func checkData(y []float64, sp Spec, m int) error {
	for i, v := range y {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return inputerr.New("%s: observation %d is not finite", sp, i+1)
		}
		if sp.Multiplicative() && v <= 0 {
			return inputerr.New("%s needs strictly positive data; observation %d is %g", sp, i+1, v)
		}
	}
	if sp.Seasonal() {
		if m < 2 {
			return inputerr.New("%s needs a season length of at least 2, have %d", sp, m)
		}
		if len(y) < 2*m {
			return inputerr.New("%s with period %d needs at least %d observations (two seasons), have %d", sp, m, 2*m, len(y))
		}
	}
	k := packer{sp: sp, m: m}.size() + 1
	if len(y) < k+1 {
		return inputerr.New("%s needs at least %d observations for its %d parameters, have %d", sp, k+1, k, len(y))
	}
	return nil
}

// starts are the smoothing parameters (α, β*, γ*, φ) a fit starts from;
// the best of the resulting local optima is kept. The first start alone
// reaches the statsmodels optimum on every committed reference pair; the
// second guards FitSpec and the refit of Auto's choice against a poor
// local optimum.
var starts = [][4]float64{{0.3, 0.1, 0.1, 0.95}, {0.05, 0.5, 0.2, 0.9}}

// fit maximises the concentrated likelihood by Levenberg–Marquardt on the
// residuals r_t whose sum of squares the likelihood is a monotone function
// of: r_t = y_t − ŷ_t for additive errors, and for multiplicative errors
// r_t = ε_t·g with ε_t = (y_t − ŷ_t)/ŷ_t and g the geometric mean of the
// ŷ_t, because n·ln Σε² + 2Σ ln ŷ = n·ln Σ(ε·g)².
//
// With warm not nil, the search starts from warm alone, and from starts
// only if that gives no valid fit.
func fit(y []float64, sp Spec, m int, starts [][4]float64, warm *Params) (*Fitted, error) {
	scale := 0.0
	for _, v := range y {
		scale += math.Abs(v)
	}
	scale /= float64(len(y))
	if scale == 0 {
		scale = 1
	}
	k := packer{sp: sp, m: m, scale: scale}
	np, n := k.size(), len(y)
	pr := &lmProblem{n: n, p: np, lo: make([]float64, np), hi: make([]float64, np)}
	k.bounds(pr.lo, pr.hi)
	par := Params{Season: make([]float64, m)}
	ring := make([]float64, m)
	out := filterOut{yhat: make([]float64, n)}
	pr.resid = func(x, r []float64) bool {
		if !k.unpack(x, &par) {
			return false
		}
		_, sumLog, ok := filter(sp, &par, y, ring, &out)
		if !ok {
			return false
		}
		if sp.Error == Mul {
			g := math.Exp(sumLog / float64(n))
			for t, f := range out.yhat {
				r[t] = (y[t] - f) / f * g
			}
		} else {
			for t, f := range out.yhat {
				r[t] = y[t] - f
			}
		}
		return true
	}
	w := getLMWork(n, np)
	defer putLMWork(w)
	x, best := make([]float64, np), make([]float64, np)
	bestF := math.Inf(1)
	if warm != nil {
		k.pack(warm, x)
		if f := levenbergMarquardt(pr, w, x, 200); !math.IsInf(f, 1) {
			bestF = f
			copy(best, x)
			starts = nil
		}
	}
	p0 := initialParams(y, sp, m)
	for _, st := range starts {
		p0.Alpha, p0.Beta, p0.Gamma, p0.Phi = st[0], st[1]*st[0], st[2]*(1-st[0]), st[3]
		k.pack(&p0, x)
		if f := levenbergMarquardt(pr, w, x, 200); f < bestF {
			bestF = f
			copy(best, x)
		}
	}
	if math.IsInf(bestF, 1) {
		return nil, fmt.Errorf("%s: heuristic initial states give no valid fit", sp)
	}
	fin := Params{Season: make([]float64, m)}
	k.unpack(best, &fin)
	if !sp.Seasonal() {
		fin.Season = nil
	}
	return newFitted(y, sp, m, fin)
}

// sseFloor keeps the likelihood finite for exact fits: n·(1e−8·scale)² on
// the scale of the errors.
func sseFloor(y []float64, sp Spec) float64 {
	if sp.Error == Mul {
		return float64(len(y)) * 1e-16
	}
	mx := 1.0
	for _, v := range y {
		mx = math.Max(mx, math.Abs(v))
	}
	return float64(len(y)) * (1e-8 * mx) * (1e-8 * mx)
}

// initialParams gives starting values (HKOS §2.6.1, simplified): with
// seasonality, a straight line fitted to the first (up to three) full
// seasons gives the initial level and trend, and the average deviation
// (difference or ratio) from that line per season position gives the
// initial seasonal states; without, a line through the first (up to ten)
// observations. fit sets the smoothing parameters.
func initialParams(y []float64, sp Spec, m int) Params {
	var p Params
	nFit := min(len(y), 10)
	if sp.Seasonal() {
		nFit = m * min(len(y)/m, 3)
	}
	a, b := lineFit(y[:nFit])
	if !sp.HasTrend() {
		a, b = a+b*float64(nFit-1)/2, 0 // the line's mean level
	}
	p.Level, p.Trend = a, b
	if sp.Seasonal() {
		p.Season = make([]float64, m)
		cnt := make([]float64, m)
		for t := 0; t < nFit; t++ {
			line := a + b*float64(t+1)
			var d float64
			if sp.Season == Mul {
				if line <= 0 {
					line = math.Abs(y[t]) + 1e-12
				}
				d = y[t] / line
			} else {
				d = y[t] - line
			}
			p.Season[t%m] += d
			cnt[t%m]++
		}
		sum := 0.0
		for j := range p.Season {
			p.Season[j] /= cnt[j]
			sum += p.Season[j]
		}
		for j := range p.Season {
			if sp.Season == Mul {
				p.Season[j] *= float64(m) / sum
				if p.Season[j] <= 0.01 {
					p.Season[j] = 0.01
				}
			} else {
				p.Season[j] -= sum / float64(m)
			}
		}
		if sp.Season == Mul && p.Level <= 0 {
			p.Level = math.Abs(y[0])
		}
	}
	if sp.Error == Mul && p.Level <= 0 {
		p.Level = math.Abs(y[0])
	}
	return p
}

// lineFit is the least-squares line a + b·t through y_1..y_n (t from 1);
// with one point the slope is 0.
func lineFit(y []float64) (a, b float64) {
	n := float64(len(y))
	if len(y) < 2 {
		return y[0], 0
	}
	var st, sy, stt, sty float64
	for i, v := range y {
		t := float64(i + 1)
		st += t
		sy += v
		stt += t * t
		sty += t * v
	}
	b = (n*sty - st*sy) / (n*stt - st*st)
	a = (sy - b*st) / n
	return a, b
}

// ensure the compile-time contract.
var _ models.Model = (*Fitted)(nil)
