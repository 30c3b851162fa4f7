package numeric

import "math"

// ACF returns the sample autocorrelations r_0..r_maxLag of x (r_0 = 1),
// with the usual denominator Σ(x_t − x̄)² (Box & Jenkins 1976, §2.1.5).
// A constant series gives r_k = 0 for k ≥ 1.
func ACF(x []float64, maxLag int) []float64 {
	n := len(x)
	out := make([]float64, maxLag+1)
	if n == 0 {
		return out
	}
	mean := 0.0
	for _, v := range x {
		mean += v
	}
	mean /= float64(n)
	var c0 float64
	for _, v := range x {
		c0 += (v - mean) * (v - mean)
	}
	out[0] = 1
	if c0 == 0 {
		return out
	}
	for k := 1; k <= maxLag && k < n; k++ {
		s := 0.0
		for t := k; t < n; t++ {
			s += (x[t] - mean) * (x[t-k] - mean)
		}
		out[k] = s / c0
	}
	return out
}

// Seasonal90 reports whether x shows seasonality of period m by the test
// used with the Theta method in the M3 competition (Assimakopoulos &
// Nikolopoulos 2000): the lag-m autocorrelation is significant at the 90%
// level, |r_m| > 1.645·√((1 + 2Σ_{k<m} r_k²)/n), the denominator being
// Bartlett's variance of r_m under an MA(m−1) null (Box & Jenkins 1976,
// eq. 2.1.13). It needs two full seasons (what the classical
// decomposition needs) and m ≥ 2; otherwise it reports false.
func Seasonal90(x []float64, m int) bool {
	n := len(x)
	if m < 2 || n < 2*m {
		return false
	}
	r := ACF(x, m)
	s := 1.0
	for k := 1; k < m; k++ {
		s += 2 * r[k] * r[k]
	}
	return math.Abs(r[m]) > 1.6448536269514722*math.Sqrt(s/float64(n))
}

// ClassicalSeasonal returns the m seasonal indices of the classical
// decomposition of x (Macaulay 1931; Makridakis, Wheelwright & Hyndman
// 1998, §3/4): the trend is the centred moving average of order m (2×m
// for even m), the detrended series is x/trend (multiplicative) or
// x − trend (additive), each position's index is the mean of its detrended
// values, and the indices are normalised to mean 1 (multiplicative) or 0
// (additive). Index j belongs to times t ≡ j (mod m), t counted from 0.
// It needs len(x) ≥ 2m; ok is false otherwise, or when a multiplicative
// index is not positive.
func ClassicalSeasonal(x []float64, m int, multiplicative bool) (idx []float64, ok bool) {
	n := len(x)
	if m < 2 || n < 2*m {
		return nil, false
	}
	// Centred moving-average weights: m equal weights for odd m, the 2×m
	// filter with half weights at both ends for even m.
	var w []float64
	if m%2 == 1 {
		w = make([]float64, m)
		for i := range w {
			w[i] = 1 / float64(m)
		}
	} else {
		w = make([]float64, m+1)
		for i := range w {
			w[i] = 1 / float64(m)
		}
		w[0], w[m] = 0.5/float64(m), 0.5/float64(m)
	}
	half := len(w) / 2
	sum := make([]float64, m)
	cnt := make([]float64, m)
	for t := half; t < n-half; t++ {
		tr := 0.0
		for i, wi := range w {
			tr += wi * x[t-half+i]
		}
		var d float64
		if multiplicative {
			if tr == 0 {
				return nil, false
			}
			d = x[t] / tr
		} else {
			d = x[t] - tr
		}
		sum[t%m] += d
		cnt[t%m]++
	}
	idx = make([]float64, m)
	avg := 0.0
	for j := range idx {
		idx[j] = sum[j] / cnt[j]
		avg += idx[j]
	}
	avg /= float64(m)
	for j := range idx {
		if multiplicative {
			idx[j] /= avg
			if !(idx[j] > 0) {
				return nil, false
			}
		} else {
			idx[j] -= avg
		}
	}
	return idx, true
}
