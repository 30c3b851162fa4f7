package engine

import (
	"math"
	"testing"

	"trueup/fixtures/reference"
	"trueup/models/arima"
)

// psiCovariance is the covariance of the forecast errors at steps i and j
// (1-based) of a linear model with ψ-weights psi and innovation variance
// s2: s2 Σ_{k<min(i,j)} ψ_k ψ_{k+|i−j|} (Box, Jenkins, Reinsel & Ljung
// 2015, §5.1).
func psiCovariance(psi []float64, s2 float64, i, j int) float64 {
	d := i - j
	if d < 0 {
		d = -d
	}
	c := 0.0
	for k := 0; k < min(i, j); k++ {
		c += psi[k] * psi[k+d]
	}
	return s2 * c
}

// psiSum is the variance of the sum of the errors at steps a+1..b.
func psiSum(psi []float64, s2 float64, a, b int) float64 {
	v := 0.0
	for i := a + 1; i <= b; i++ {
		for j := a + 1; j <= b; j++ {
			v += psiCovariance(psi, s2, i, j)
		}
	}
	return v
}

// airlinePsi expands ψ(B) = (1+θB)(1+ΘB¹²) / ((1−B)(1−B¹²)) to n terms:
// the MA polynomial's coefficients, summed once for each difference.
func airlinePsi(theta, stheta float64, n int) []float64 {
	psi := make([]float64, n)
	for k, c := range map[int]float64{0: 1, 1: theta, 12: stheta, 13: theta * stheta} {
		if k < n {
			psi[k] = c
		}
	}
	for k := 1; k < n; k++ { // 1/(1−B)
		psi[k] += psi[k-1]
	}
	for k := 12; k < n; k++ { // 1/(1−B¹²)
		psi[k] += psi[k-12]
	}
	return psi
}

// TestPlanVarianceIsThePsiWeightFormula fits the airline model
// ARIMA(0,1,1)(0,1,1) m=12 to Box & Jenkins' Series G (monthly airline
// passengers, R datasets::AirPassengers, untransformed so that the model
// is linear), whose ψ-weights at the estimates are all non-negative, and
// checks that the variance of a quarter's and a year's forecast total
// computed from the model's per-step variances alone equals the
// ψ-weight formula σ² Σ_{i,j} Σ_k ψ_k ψ_{k+|i−j|}.
func TestPlanVarianceIsThePsiWeightFormula(t *testing.T) {
	y, err := reference.Series("arima/airpass.csv")
	if err != nil {
		t.Fatal(err)
	}
	spec, _ := arima.ParseSpec("ARIMA(0,1,1)(0,1,1) m=12")
	f, err := arima.FitOrder(y, spec, arima.Options{})
	if err != nil {
		t.Fatal(err)
	}
	const h = 24
	psi := airlinePsi(f.MA()[0], f.SMA()[0], h)
	for k, p := range psi {
		if p < 0 {
			t.Fatalf("ψ%d = %v < 0 at θ = %v, Θ = %v: the check needs non-negative weights", k, p, f.MA()[0], f.SMA()[0])
		}
	}
	_, v := f.Forecast(h)
	s2 := f.Sigma2()
	for k := range v {
		if want := psiCovariance(psi, s2, k+1, k+1); math.Abs(v[k]/want-1) > 1e-3 {
			t.Fatalf("step %d: model variance %v, ψ-weights give %v", k+1, v[k], want)
		}
	}
	var s stepShape
	s.set(v)
	for _, r := range [][2]int{{0, 3}, {3, 6}, {9, 12}, {0, 12}, {12, 24}, {5, 17}, {7, 8}} {
		got, want := s.sumVariance(r[0], r[1]), psiSum(psi, s2, r[0], r[1])
		if math.Abs(got/want-1) > 2e-3 {
			t.Errorf("steps %d..%d: variance of the total %v, ψ-weight formula %v", r[0]+1, r[1], got, want)
		}
	}
	// Summing the steps as if their errors were independent understates
	// a year's variance several times over: the check can fail.
	indep := 0.0
	for _, x := range v[:12] {
		indep += x
	}
	if want := psiSum(psi, s2, 0, 12); indep > want/2 {
		t.Errorf("independent steps give %v, the formula %v: expected far less", indep, want)
	}
}

// TestPlanVarianceOverstatesWithNegativeWeights: for an AR(1) with φ =
// −0.6, ψ_k = φ^k alternates in sign, and the variance of a total taken
// from the per-step variances (all weights non-negative) is larger than
// the ψ-weight formula: the interval is wider, never narrower.
func TestPlanVarianceOverstatesWithNegativeWeights(t *testing.T) {
	const h, phi = 12, -0.6
	psi := make([]float64, h)
	v := make([]float64, h)
	for k := range psi {
		psi[k] = math.Pow(phi, float64(k))
		v[k] = psiCovariance(psi, 1, k+1, k+1)
	}
	var s stepShape
	s.set(v)
	for _, r := range [][2]int{{0, 3}, {0, 12}, {4, 9}} {
		got, exact := s.sumVariance(r[0], r[1]), psiSum(psi, 1, r[0], r[1])
		if got < exact {
			t.Errorf("steps %d..%d: %v below the exact %v", r[0]+1, r[1], got, exact)
		}
	}
	// Each step keeps its own variance.
	for k := range v {
		if got := s.sumVariance(k, k+1); math.Abs(got-v[k]) > 1e-12 {
			t.Errorf("step %d alone: %v, want %v", k+1, got, v[k])
		}
	}
}
