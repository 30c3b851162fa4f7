package numeric

import "math"

// PACFToAR maps partial autocorrelations r_1..r_p, each in (−1, 1), to the
// coefficients φ_1..φ_p of the stationary autoregression
// y_t = φ_1 y_{t−1} + … + φ_p y_{t−p} + ε_t that has them, by the
// Durbin–Levinson recursion. Every point of (−1, 1)^p gives a stationary
// model and every stationary model is reached, which is why it serves as an
// unconstrained parameterisation after a tanh (Barndorff-Nielsen & Schou
// 1973; Jones 1980, Technometrics 22(3)). dst and work must have length p;
// dst may alias pacf.
func PACFToAR(dst, pacf, work []float64) []float64 {
	p := len(pacf)
	copy(dst, pacf)
	for k := 1; k < p; k++ {
		a := dst[k]
		for j := 0; j < k; j++ {
			work[j] = dst[j] - a*dst[k-1-j]
		}
		copy(dst[:k], work[:k])
	}
	return dst
}

// ARToPACF is the inverse of PACFToAR: it returns the partial
// autocorrelations of the autoregression with coefficients phi, and false
// when the model is not stationary (some |r_k| ≥ 1). dst and work must have
// length len(phi).
func ARToPACF(dst, phi, work []float64) ([]float64, bool) {
	p := len(phi)
	copy(dst, phi)
	for k := p - 1; k >= 0; k-- {
		a := dst[k]
		if math.Abs(a) >= 1 || math.IsNaN(a) {
			return dst, false
		}
		if k == 0 {
			break
		}
		den := 1 - a*a
		for j := 0; j < k; j++ {
			work[j] = (dst[j] + a*dst[k-1-j]) / den
		}
		copy(dst[:k], work[:k])
	}
	return dst, true
}
