// Package accuracy holds the point and interval forecast accuracy measures
// the backtest scores with. Functions take plain slices and never modify
// them; NaN marks a missing value.
//
// Errors are e = actual − forecast (a positive error is an
// under-forecast). Scaled measures divide by the in-sample seasonal naive
// error of the series (Hyndman & Koehler 2006), so series of different
// sizes can be averaged.
package accuracy

import "math"

// Scale returns the in-sample scales of y for seasonal period m: the mean
// absolute seasonal difference mae = mean |y_t − y_{t−m}| (the MASE
// denominator of Hyndman & Koehler 2006, eq. for q_t with the seasonal
// naive method) and the mean squared one mse = mean (y_t − y_{t−m})² (the
// RMSSE denominator). Pairs with a NaN are skipped. When y has no finite
// pair m apart, lag 1 is used instead (common practice for series shorter
// than a season); lag reports the lag used, 0 when y has no finite pair at
// lag 1 either, and then both scales are NaN.
func Scale(y []float64, m int) (mae, mse float64, lag int) {
	if m < 1 {
		m = 1
	}
	for _, l := range []int{m, 1} {
		n, sa, ss := 0, 0.0, 0.0
		for t := l; t < len(y); t++ {
			d := y[t] - y[t-l]
			if math.IsNaN(d) {
				continue
			}
			n++
			sa += math.Abs(d)
			ss += d * d
		}
		if n > 0 {
			return sa / float64(n), ss / float64(n), l
		}
	}
	return math.NaN(), math.NaN(), 0
}

// MASE is the mean absolute scaled error of forecasts against actuals
// over the steps where both are finite (Hyndman & Koehler 2006):
// mean |a_k − f_k| / scale, with scale the in-sample mae of Scale.
func MASE(actual, forecast []float64, scale float64) float64 {
	n, s := 0, 0.0
	for k := range actual {
		e := actual[k] - forecast[k]
		if math.IsNaN(e) {
			continue
		}
		n++
		s += math.Abs(e)
	}
	if n == 0 {
		return math.NaN()
	}
	return s / float64(n) / scale
}

// RMSSE is the root mean squared scaled error: sqrt(mean (a_k − f_k)² /
// scale2), with scale2 the in-sample mse of Scale (the squared-error
// analogue of MASE; Hyndman & Koehler 2006, §3).
func RMSSE(actual, forecast []float64, scale2 float64) float64 {
	n, s := 0, 0.0
	for k := range actual {
		e := actual[k] - forecast[k]
		if math.IsNaN(e) {
			continue
		}
		n++
		s += e * e
	}
	if n == 0 {
		return math.NaN()
	}
	return math.Sqrt(s / float64(n) / scale2)
}

// Covered reports whether y lies in the closed interval [lo, hi].
func Covered(lo, hi, y float64) bool { return lo <= y && y <= hi }

// IntervalScore is the interval score of the central (1 − α) prediction
// interval [lo, hi] for the observation y, with α = 1 − level/100
// (Gneiting & Raftery 2007, eq. 43):
//
//	S = (hi − lo) + (2/α)(lo − y)·1{y < lo} + (2/α)(y − hi)·1{y > hi}.
//
// Lower is better; it rewards narrow intervals and penalises misses in
// proportion to their distance.
func IntervalScore(lo, hi, y, level float64) float64 {
	alpha := 1 - level/100
	s := hi - lo
	if y < lo {
		s += 2 / alpha * (lo - y)
	}
	if y > hi {
		s += 2 / alpha * (y - hi)
	}
	return s
}

// CRPSGaussian is the continuous ranked probability score of the normal
// predictive distribution N(mu, sd²) for the observation y, in closed form
// (Gneiting, Raftery, Westveld & Goldman 2005, Monthly Weather Review
// 133(5), eq. 5; Gneiting & Raftery 2007, JASA 102(477), eq. 21 gives the
// CRPS as E|X − y| − ½E|X − X'|):
//
//	CRPS = sd·( z·(2Φ(z) − 1) + 2φ(z) − 1/√π ),  z = (y − mu)/sd.
//
// It is in the units of y, lower is better, and with sd = 0 it is the
// absolute error |y − mu|. NaN when any input is NaN or sd < 0.
func CRPSGaussian(mu, sd, y float64) float64 {
	if math.IsNaN(mu) || math.IsNaN(y) || !(sd >= 0) {
		return math.NaN()
	}
	if sd == 0 {
		return math.Abs(y - mu)
	}
	z := (y - mu) / sd
	cdf := 0.5 * math.Erfc(-z/math.Sqrt2)
	pdf := math.Exp(-z*z/2) / math.Sqrt(2*math.Pi)
	return sd * (z*(2*cdf-1) + 2*pdf - 1/math.Sqrt(math.Pi))
}

// EnergyScore estimates the energy score of a multivariate predictive
// distribution from N draws for the observed vector y (Gneiting & Raftery
// 2007, eq. 22 with β = 1):
//
//	ES = E‖X − y‖ − ½ E‖X − X'‖,
//
// estimated as in Gneiting, Stanberry, Grimit, Held & Johnson (2008),
// TEST 17(2), §2.2 (from memory), with the second expectation over
// consecutive draws so that the cost is O(N·d) rather than O(N²·d):
//
//	ES ≈ (1/N) Σ_s ‖x_s − y‖ − 1/(2(N−1)) Σ_{s<N} ‖x_s − x_{s+1}‖.
//
// draws holds the N draws one after another, each of len(y) values
// (len(draws) = N·len(y)); draws must be independent for the estimate to
// be unbiased. In one dimension the energy score is the CRPS. Coordinates
// where y is NaN are left out of every distance. NaN when N < 2.
func EnergyScore(draws, y []float64) float64 {
	d := len(y)
	if d == 0 || len(draws)%d != 0 || len(draws)/d < 2 {
		return math.NaN()
	}
	N := len(draws) / d
	var toY, between float64
	for s := 0; s < N; s++ {
		x := draws[s*d : (s+1)*d]
		var a, b float64
		for i, v := range y {
			if math.IsNaN(v) {
				continue
			}
			e := x[i] - v
			a += e * e
			if s+1 < N {
				e := x[i] - draws[(s+1)*d+i]
				b += e * e
			}
		}
		toY += math.Sqrt(a)
		between += math.Sqrt(b)
	}
	return toY/float64(N) - between/(2*float64(N-1))
}
