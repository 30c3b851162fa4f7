package numeric

import (
	"math"
	"testing"
)

// BenchmarkLogLikSeasonal times one exact likelihood of a seasonal
// ARMA(1,1)(1,1) m=12 on 59 values (a differenced six-year monthly series),
// the evaluation the ARIMA optimiser repeats for every trial point. The
// series is an invented sine with a trend; only the time is measured.
func BenchmarkLogLikSeasonal(b *testing.B) {
	w := make([]float64, 59)
	for t := range w {
		w[t] = math.Sin(2*math.Pi*float64(t)/12) + 0.01*float64(t) + 0.3*math.Cos(float64(t*t))
	}
	// (1 − 0.5B)(1 − 0.3B¹²) and (1 + 0.4B)(1 − 0.6B¹²) multiplied out.
	phi := make([]float64, 13)
	phi[0], phi[11], phi[12] = 0.5, 0.3, -0.15
	theta := make([]float64, 13)
	theta[0], theta[11], theta[12] = 0.4, -0.6, -0.24
	var k ARMAKalman
	for b.Loop() {
		if _, _, err := k.LogLik(w, phi, theta); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkLogLikSeasonalAR2 is BenchmarkLogLikSeasonal for a seasonal
// ARMA(1,1)(2,0) m=12, whose AR polynomial has degree 25.
func BenchmarkLogLikSeasonalAR2(b *testing.B) {
	w := make([]float64, 59)
	for t := range w {
		w[t] = math.Sin(2*math.Pi*float64(t)/12) + 0.01*float64(t) + 0.3*math.Cos(float64(t*t))
	}
	// (1 − 0.5B)(1 − 0.3B¹² − 0.2B²⁴) multiplied out.
	phi := make([]float64, 25)
	phi[0], phi[11], phi[12], phi[23], phi[24] = 0.5, 0.3, -0.15, 0.2, -0.1
	theta := []float64{0.4}
	var k ARMAKalman
	for b.Loop() {
		if _, _, err := k.LogLik(w, phi, theta); err != nil {
			b.Fatal(err)
		}
	}
}
