package ets

import (
	"fmt"
	"math"

	"trueup/internal/inputerr"
	"trueup/models"
)

// Usual bounds (HKOS §5.3): 1e−4 ≤ α ≤ 1−1e−4, 1e−4 ≤ β ≤ α,
// 1e−4 ≤ γ ≤ 1−α, 0.8 ≤ φ ≤ 0.98.
const (
	parLo  = 1e-4
	parHi  = 1 - 1e-4
	phiLo  = 0.8
	phiHi  = 0.98
	maxRun = 3 // Nelder–Mead restarts from the best point so far
)

// packer maps Params to the optimiser's vector and back. States are
// divided by scale so that every coordinate is of order one.
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

func (k packer) pack(p *Params, x []float64) {
	i := 0
	x[i] = p.Alpha
	i++
	if k.sp.HasTrend() {
		x[i] = p.Beta
		i++
	}
	if k.sp.Seasonal() {
		x[i] = p.Gamma
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

// unpack fills p from x and reports whether x lies within the usual
// bounds (and gives positive multiplicative seasonal states).
func (k packer) unpack(x []float64, p *Params) bool {
	i := 0
	p.Alpha = x[i]
	i++
	if p.Alpha < parLo || p.Alpha > parHi {
		return false
	}
	p.Beta, p.Gamma, p.Phi, p.Trend = 0, 0, 1, 0
	if k.sp.HasTrend() {
		p.Beta = x[i]
		i++
		if p.Beta < parLo || p.Beta > p.Alpha {
			return false
		}
	}
	if k.sp.Seasonal() {
		p.Gamma = x[i]
		i++
		if p.Gamma < parLo || p.Gamma > 1-p.Alpha {
			return false
		}
	}
	if k.sp.Damped() {
		p.Phi = x[i]
		i++
		if p.Phi < phiLo || p.Phi > phiHi {
			return false
		}
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
// the usual bounds, by Nelder–Mead from heuristic initial states, restarted
// from the best point until it stops improving. Multiplicative forms need
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
	return fit(y, sp, m, nil)
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
			return inputerr.New("%s needs a seasonal period of at least 2, have %d", sp, m)
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

// workspace holds the buffers of one fit; fits through the same workspace
// allocate nothing in the likelihood loop.
type workspace struct {
	ring, x, step []float64
	par           Params
	nm            *nelderMead
}

func fit(y []float64, sp Spec, m int, ws *workspace) (*Fitted, error) {
	scale := 0.0
	for _, v := range y {
		scale += math.Abs(v)
	}
	scale /= float64(len(y))
	if scale == 0 {
		scale = 1
	}
	k := packer{sp: sp, m: m, scale: scale}
	np := k.size()
	if ws == nil || len(ws.x) != np || len(ws.ring) != m {
		ws = &workspace{ring: make([]float64, m), x: make([]float64, np), step: make([]float64, np), nm: newNelderMead(np)}
		ws.par.Season = make([]float64, m)
	}
	p0 := initialParams(y, sp, m)
	k.pack(&p0, ws.x)
	stepSizes(k, ws.x, ws.step)

	n := len(y)
	floor := sseFloor(y, sp)
	obj := func(x []float64) float64 {
		if !k.unpack(x, &ws.par) {
			return math.Inf(1)
		}
		sse, sumLog, ok := filter(sp, &ws.par, y, ws.ring, nil)
		if !ok {
			return math.Inf(1)
		}
		return -logLik(sse, sumLog, n, floor)
	}
	best := obj(ws.x)
	if math.IsInf(best, 1) {
		return nil, fmt.Errorf("%s: heuristic initial states give no valid fit", sp)
	}
	for run := 0; run < maxRun; run++ {
		v, _ := ws.nm.minimize(obj, ws.x, ws.step, 300*np, 1e-10)
		improved := best - v
		best = math.Min(best, v)
		if run > 0 && improved < 1e-7*(math.Abs(best)+1) {
			break
		}
		stepSizes(k, ws.x, ws.step)
	}
	par := Params{Season: make([]float64, m)}
	if !k.unpack(ws.x, &par) {
		return nil, fmt.Errorf("%s: optimiser left the feasible region", sp)
	}
	if !sp.Seasonal() {
		par.Season = nil
	}
	return newFitted(y, sp, m, par)
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

// stepSizes sets the initial simplex: 0.1 for smoothing parameters (halved
// near a bound), 0.02 for φ, 5% of scale for level and seasonal states and
// 0.5% for the trend.
func stepSizes(k packer, x, step []float64) {
	i := 0
	smooth := 1
	if k.sp.HasTrend() {
		smooth++
	}
	if k.sp.Seasonal() {
		smooth++
	}
	for ; i < smooth; i++ {
		step[i] = math.Max(0.1*math.Min(x[i], 1-x[i]), 1e-3)
	}
	if k.sp.Damped() {
		step[i] = 0.02
		i++
	}
	step[i] = 0.05 * math.Max(math.Abs(x[i]), 0.1)
	i++
	if k.sp.HasTrend() {
		step[i] = 0.005 + 0.1*math.Abs(x[i])
		i++
	}
	for ; i < len(x); i++ {
		step[i] = 0.05 * math.Max(math.Abs(x[i]), 0.1)
	}
}

// initialParams gives starting values (HKOS §2.6.1, simplified): with
// seasonality, a straight line fitted to the first (up to three) full
// seasons gives the initial level and trend, and the average deviation
// (difference or ratio) from that line per season position gives the
// initial seasonal states; without, a line through the first (up to ten)
// observations; α = 0.3, β = 0.03, γ = 0.05, φ = 0.95.
func initialParams(y []float64, sp Spec, m int) Params {
	p := Params{Alpha: 0.3, Beta: 0.03, Gamma: 0.05, Phi: 0.95}
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
