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
