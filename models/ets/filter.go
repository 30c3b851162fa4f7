package ets

import "math"

// Params holds an ETS model's smoothing parameters and initial states.
// Beta is used only with a trend, Gamma only with seasonality, Phi only
// with a damped trend (it is 1 otherwise). Season holds the m initial
// seasonal states in the order they are first used, s_{1−m}, …, s_0; they
// are normalised to sum to 0 (additive) or to m (multiplicative), which
// removes the level–season indeterminacy without changing the fit.
type Params struct {
	Alpha, Beta, Gamma, Phi float64
	Level, Trend            float64
	Season                  []float64
}

// filterOut receives the filter's by-products. Nil slices are skipped.
type filterOut struct {
	yhat []float64 // one-step forecasts ŷ_{t|t−1}
	// final states after the last observation: level, trend and the
	// seasonal states in the order they will next be used.
	level, trend float64
	season       []float64
}

// filter runs the recursions of the innovations state-space model (HKOS
// Table 2.3) through y, writing into ring (length m, scratch) and out (may
// be nil). Written in error-correction form, the level, trend and seasonal
// updates are the same for additive and multiplicative errors; the error
// type changes only the likelihood:
//
//	q = ℓ + φb,  ŷ = q (+ or ×) s,  p = y (− or ÷) s
//	ℓ' = q + α(p − q),  b' = φb + β(p − q),  s' = s + γ((y (− or ÷) q) − s)
//
// It returns the sum of squared errors (e = y − ŷ, or e = (y − ŷ)/ŷ for
// multiplicative errors) and Σ ln ŷ (multiplicative errors only). ok is
// false when a multiplicative model meets a non-positive forecast, level
// or seasonal state, or when the recursion overflows.
func filter(sp Spec, p *Params, y, ring []float64, out *filterOut) (sse, sumLog float64, ok bool) {
	l, b, phi := p.Level, 0.0, 1.0
	if sp.HasTrend() {
		b = p.Trend
	}
	if sp.Damped() {
		phi = p.Phi
	}
	m := len(ring)
	seasonal := sp.Seasonal()
	if seasonal {
		copy(ring, p.Season)
	}
	mulErr, mulSea := sp.Error == Mul, sp.Season == Mul
	alpha, beta, gamma := p.Alpha, p.Beta, p.Gamma
	j := 0
	// Σ ln ŷ is accumulated as a running product, taking a logarithm only
	// when the product nears the ends of the float range.
	prod := 1.0
	for t, yt := range y {
		q := l + phi*b
		f, s, pt := q, 0.0, yt
		if seasonal {
			s = ring[j]
			if mulSea {
				if q <= 0 || s <= 0 {
					return 0, 0, false
				}
				f, pt = q*s, yt/s
			} else {
				f, pt = q+s, yt-s
			}
		}
		if out != nil && out.yhat != nil {
			out.yhat[t] = f
		}
		if mulErr {
			if f <= 0 {
				return 0, 0, false
			}
			e := (yt - f) / f
			sse += e * e
			if f > 1e100 || f < 1e-100 {
				sumLog += math.Log(f)
			} else if prod *= f; prod > 1e150 || prod < 1e-150 {
				sumLog += math.Log(prod)
				prod = 1
			}
		} else {
			e := yt - f
			sse += e * e
		}
		d := pt - q
		l = q + alpha*d
		b = phi*b + beta*d
		if seasonal {
			if mulSea {
				ring[j] = s + gamma*(yt/q-s)
			} else {
				ring[j] = s + gamma*(yt-q-s)
			}
			j++
			if j == m {
				j = 0
			}
		}
	}
	sumLog += math.Log(prod)
	if math.IsNaN(sse) || math.IsInf(sse, 0) || math.IsInf(sumLog, 0) || math.IsNaN(l) || math.IsInf(l, 0) {
		return 0, 0, false
	}
	if out != nil {
		out.level, out.trend = l, b
		if seasonal && out.season != nil {
			for i := 0; i < m; i++ {
				out.season[i] = ring[(j+i)%m]
			}
		}
	}
	return sse, sumLog, true
}

// logLik is the Gaussian log-likelihood of the innovations state-space
// model with σ² concentrated out at its maximum-likelihood value sse/n
// (HKOS §5.2):
//
//	ℓ = −n/2·(ln(2π·sse/n) + 1) − Σ ln|ŷ_t|,
//
// the last term present only for multiplicative errors (the Jacobian from
// relative errors to the data). sse is floored at a tiny positive value so
// that a perfect fit gives a large finite likelihood, not +Inf.
func logLik(sse, sumLog float64, n int, floor float64) float64 {
	if sse < floor {
		sse = floor
	}
	nf := float64(n)
	return -0.5*nf*(math.Log(2*math.Pi*sse/nf)+1) - sumLog
}
