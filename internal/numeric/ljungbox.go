package numeric

import (
	"math"

	"gonum.org/v1/gonum/stat/distuv"
)

// PACF writes the partial autocorrelations φ_11..φ_pp of a series whose
// autocorrelations r_1..r_p are in acf into dst, by the Durbin–Levinson
// recursion (Durbin 1960, Rev. Int. Stat. Inst. 28(3)). work must have
// length 2p. A lag whose recursion breaks down (|φ_kk| reaching 1) and
// every later one are set to zero.
func PACF(dst, acf, work []float64) []float64 {
	p := len(acf)
	phi, prev := work[:p], work[p:2*p]
	v := 1.0
	for k := 0; k < p; k++ {
		num := acf[k]
		for j := 0; j < k; j++ {
			num -= prev[j] * acf[k-1-j]
		}
		if v <= 0 {
			for ; k < p; k++ {
				dst[k] = 0
			}
			return dst
		}
		a := num / v
		phi[k] = a
		for j := 0; j < k; j++ {
			phi[j] = prev[j] - a*prev[k-1-j]
		}
		dst[k] = a
		copy(prev[:k+1], phi[:k+1])
		v *= 1 - a*a
	}
	return dst
}

// LjungBox returns the Ljung–Box portmanteau statistic
// Q = n(n+2) Σ_{k=1}^{h} r_k² / (n−k) of the autocorrelations acf
// (h = len(acf)) of a series of n observations, and its p-value, the upper
// tail of the χ² distribution with h − dof degrees of freedom (Ljung & Box
// 1978, Biometrika 65(2), eq. 2.1). dof is the number of estimated ARMA
// parameters to discount, 0 for raw series. The p-value is NaN when
// h − dof < 1.
func LjungBox(acf []float64, n, dof int) (q, p float64) {
	for k, r := range acf {
		q += r * r / float64(n-k-1)
	}
	q *= float64(n) * float64(n+2)
	df := len(acf) - dof
	if df < 1 {
		return q, math.NaN()
	}
	return q, distuv.ChiSquared{K: float64(df)}.Survival(q)
}

// LjungBoxLags is the number of lags the residual check uses for a series
// of n observations with seasonal period m: 10 for non-seasonal data, 2m
// for seasonal data, but at most n/5 and at least 1 (Hyndman &
// Athanasopoulos, Forecasting: Principles and Practice, 3rd ed., §5.4;
// recalled from memory).
func LjungBoxLags(n, m int) int {
	h := 10
	if m > 1 {
		h = 2 * m
	}
	return max(1, min(h, n/5))
}
