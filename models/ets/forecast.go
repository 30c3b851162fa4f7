package ets

import (
	"math"
	"math/rand/v2"
	"sort"
)

// simPaths and simSeed fix the simulation used for forecast variances and
// intervals of the multiplicative-seasonal forms (deterministic output).
const (
	simPaths = 5000
	simSeed  = 20020701
)

// Forecast implements models.Model: point forecasts ŷ_{T+h|T} from the
// final states and their forecast-error variances on the data scale.
//
// Variances follow HKOS ch. 6. Class 1 (additive error, no multiplicative
// seasonality; eq. 6.1): v_h = σ²(1 + Σ_{j<h} c_j²). Class 2
// (multiplicative error, additive or no seasonality; eq. 6.2):
// v_h = (1+σ²)θ_h − μ_h² with θ_1 = μ_1², θ_h = μ_h² + σ²Σ_{j<h} c_j²θ_{h−j}.
// Both use c_j = α + βφ_j + γ·[j ≡ 0 mod m], φ_j = φ + … + φ^j. The
// multiplicative-seasonal forms (M,·,M) have no exact formula; their
// variance is the sample variance of simPaths simulated future paths with a
// fixed seed (HKOS §6.1), and their intervals (see Interval) are the
// simulated quantiles, which are not symmetric about the point forecast.
func (f *Fitted) Forecast(h int) (mean, variance []float64) {
	if h <= 0 {
		return []float64{}, []float64{}
	}
	mean = f.point(h)
	if f.spec.Season == Mul {
		variance = make([]float64, h)
		paths := f.simulate(h)
		for i := 0; i < h; i++ {
			variance[i] = sampleVar(paths[i])
		}
		return mean, variance
	}
	c := f.cj(h)
	variance = make([]float64, h)
	s2 := f.sigma2
	if f.spec.Error == Add {
		acc := 1.0
		for i := 0; i < h; i++ {
			if i > 0 {
				acc += c[i-1] * c[i-1]
			}
			variance[i] = s2 * acc
		}
		return mean, variance
	}
	theta := make([]float64, h)
	for i := 0; i < h; i++ {
		t := mean[i] * mean[i]
		for j := 1; j <= i; j++ {
			t += s2 * c[j-1] * c[j-1] * theta[i-j]
		}
		theta[i] = t
		variance[i] = math.Max((1+s2)*t-mean[i]*mean[i], 0)
	}
	return mean, variance
}

// point returns ŷ_{T+h|T} = (ℓ_T + φ_h b_T) (+ or ×) s_{T+h−m(k+1)}.
func (f *Fitted) point(h int) []float64 {
	out := make([]float64, h)
	phi := 1.0
	if f.spec.Damped() {
		phi = f.par.Phi
	}
	phiH, pw := 0.0, 1.0
	for i := 0; i < h; i++ {
		pw *= phi
		phiH += pw
		v := f.level
		if f.spec.HasTrend() {
			v += phiH * f.trend
		}
		switch f.spec.Season {
		case Add:
			v += f.season[i%f.m]
		case Mul:
			v *= f.season[i%f.m]
		}
		out[i] = v
	}
	return out
}

// cj returns c_1..c_{h−1} (HKOS Table 6.1 for the additive-state forms).
func (f *Fitted) cj(h int) []float64 {
	c := make([]float64, h)
	phi := 1.0
	if f.spec.Damped() {
		phi = f.par.Phi
	}
	phiJ, pw := 0.0, 1.0
	for j := 1; j < h; j++ {
		pw *= phi
		phiJ += pw
		v := f.par.Alpha
		if f.spec.HasTrend() {
			v += f.par.Beta * phiJ
		}
		if f.spec.Seasonal() && j%f.m == 0 {
			v += f.par.Gamma
		}
		c[j-1] = v
	}
	return c
}

// simulate draws simPaths future paths of length h from the fitted model
// with Gaussian innovations of variance σ² and a fixed seed; paths[i] holds
// the simulated values of step i+1.
func (f *Fitted) simulate(h int) [][]float64 {
	rng := rand.New(rand.NewPCG(simSeed, uint64(h)))
	paths := make([][]float64, h)
	for i := range paths {
		paths[i] = make([]float64, simPaths)
	}
	sd := math.Sqrt(f.sigma2)
	phi := 1.0
	if f.spec.Damped() {
		phi = f.par.Phi
	}
	ring := make([]float64, f.m)
	p := f.par
	for k := 0; k < simPaths; k++ {
		l, b := f.level, f.trend
		copy(ring, f.season)
		j := 0
		for i := 0; i < h; i++ {
			q := l + phi*b
			s := ring[j]
			mu := q * s
			e := sd * rng.NormFloat64()
			var y float64
			if f.spec.Error == Mul {
				y = mu * (1 + e)
			} else {
				y = mu + e
			}
			paths[i][k] = y
			if q <= 0 || s <= 0 {
				// The path has left the positive region where the
				// multiplicative recursions are defined: hold its states.
				continue
			}
			d := y/s - q
			l = q + p.Alpha*d
			b = phi*b + p.Beta*d
			ring[j] = s + p.Gamma*(y/q-s)
			j = (j + 1) % f.m
		}
	}
	return paths
}

// Interval returns the lower and upper limits of central prediction
// intervals with coverage level (0 < level < 1) for steps 1..h. For the
// multiplicative-seasonal forms they are the empirical quantiles of the
// simulated paths and need not be symmetric about the point forecast; for
// the others they are ŷ ± z·√v_h with Gaussian z. An invalid level gives
// empty slices.
func (f *Fitted) Interval(h int, level float64) (lo, hi []float64) {
	if h <= 0 || !(level > 0 && level < 1) {
		return []float64{}, []float64{}
	}
	lo, hi = make([]float64, h), make([]float64, h)
	if f.spec.Season == Mul {
		paths := f.simulate(h)
		for i := range paths {
			sort.Float64s(paths[i])
			lo[i] = quantile(paths[i], (1-level)/2)
			hi[i] = quantile(paths[i], (1+level)/2)
		}
		return lo, hi
	}
	mean, v := f.Forecast(h)
	z := math.Sqrt2 * math.Erfinv(level)
	for i := range mean {
		s := math.Sqrt(v[i])
		lo[i], hi[i] = mean[i]-z*s, mean[i]+z*s
	}
	return lo, hi
}

// quantile interpolates linearly in sorted x (Hyndman & Fan 1996, type 7).
func quantile(x []float64, p float64) float64 {
	pos := p * float64(len(x)-1)
	i := int(pos)
	if i >= len(x)-1 {
		return x[len(x)-1]
	}
	fr := pos - float64(i)
	return x[i] + fr*(x[i+1]-x[i])
}

func sampleVar(x []float64) float64 {
	var mean float64
	for _, v := range x {
		mean += v
	}
	mean /= float64(len(x))
	var ss float64
	for _, v := range x {
		ss += (v - mean) * (v - mean)
	}
	return ss / float64(len(x)-1)
}

// PointForecast returns the point forecasts ŷ_{T+h|T} for steps 1..h
// without their variances (no simulation for (M,·,M) forms).
func (f *Fitted) PointForecast(h int) []float64 {
	if h <= 0 {
		return []float64{}
	}
	return f.point(h)
}
