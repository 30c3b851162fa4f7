package ets

import (
	"encoding/json"
	"math"
	"math/rand/v2"
	"os"
	"testing"

	"trueup/fixtures/reference"
)

// TestPathFormAgainstR checks the ψ-weights of the linear forms against
// those of their ARIMA equivalents from base R 4.2.2's stats::ARMAtoMA
// (fixtures/reference/paths/psi.R; equivalences from Hyndman, Koehler, Ord
// & Snyder 2008, Table 11.1), and that a form with multiplicative errors
// has no path form.
func TestPathFormAgainstR(t *testing.T) {
	b, err := os.ReadFile("../../fixtures/reference/paths/psi.json")
	if err != nil {
		t.Fatal(err)
	}
	var cases []struct {
		Name             string
		Alpha, Beta, Phi float64
		Psi              []float64
	}
	if err := json.Unmarshal(b, &cases); err != nil {
		t.Fatal(err)
	}
	y, err := reference.Series("ets/data/Nile.csv")
	if err != nil {
		t.Fatal(err)
	}
	specs := map[string]Spec{"ANN": {Add, None, None}, "AAN": {Add, Add, None}, "AAdN": {Add, Dampd, None}}
	for _, c := range cases {
		f, err := newFitted(y, specs[c.Name], 1, Params{Alpha: c.Alpha, Beta: c.Beta, Phi: c.Phi, Level: y[0]})
		if err != nil {
			t.Fatal(err)
		}
		pf := f.PathForm(len(c.Psi))
		for j, want := range c.Psi {
			if math.Abs(pf.Psi[j]-want) > 1e-12 {
				t.Errorf("%s: ψ_%d = %.15g, R %.15g", c.Name, j, pf.Psi[j], want)
			}
		}
		mean, variance := f.Forecast(len(c.Psi))
		var s float64
		for k, p := range pf.Psi {
			s += p * p
			if math.Abs(pf.Mean[k]-mean[k]) > 1e-9*math.Abs(mean[k]) || math.Abs(f.sigma2*s/variance[k]-1) > 1e-12 {
				t.Errorf("%s h=%d: path form mean %g, var %g; forecast %g, %g", c.Name, k+1, pf.Mean[k], f.sigma2*s, mean[k], variance[k])
			}
		}
	}
}

// TestSmoothingFormAgainstClassTwoVariance simulates 40,000 paths of the
// forms with multiplicative errors and no seasonality (class 2) through
// their recursions, with Gaussian innovations of the fitted σ², and checks
// the paths' variance at each step against the analytic class 2 variance
// (Hyndman, Koehler, Ord & Snyder 2008, eq. 6.2, which Forecast computes)
// within five standard errors of a sample variance (with a fourth moment
// up to twice the Gaussian's: 5·√(4/N) = 5%), and their mean against the
// point forecast (HKOS §6.1: for class 2 the point forecast is the mean).
func TestSmoothingFormAgainstClassTwoVariance(t *testing.T) {
	y, err := reference.Series("ets/data/Nile.csv")
	if err != nil {
		t.Fatal(err)
	}
	const draws, h = 40000, 12
	for _, c := range []struct {
		sp  Spec
		par Params
	}{
		{Spec{Mul, None, None}, Params{Alpha: 0.3, Level: y[0]}},
		{Spec{Mul, Add, None}, Params{Alpha: 0.3, Beta: 0.05, Level: y[0], Trend: 1}},
		{Spec{Mul, Dampd, None}, Params{Alpha: 0.3, Beta: 0.05, Phi: 0.9, Level: y[0], Trend: 1}},
	} {
		f, err := newFitted(y, c.sp, 1, c.par)
		if err != nil {
			t.Fatal(err)
		}
		pf := f.PathForm(h)
		if pf.Smoothing == nil {
			t.Fatalf("%s: no recursion form", c.sp)
		}
		rng := rand.New(rand.NewPCG(3, 4))
		sd := math.Sqrt(f.sigma2)
		sum, sum2 := make([]float64, h), make([]float64, h)
		eps, path := make([]float64, h), make([]float64, h)
		for d := 0; d < draws; d++ {
			for k := range eps {
				eps[k] = sd * rng.NormFloat64()
			}
			pf.Path(path, eps)
			for k, v := range path {
				sum[k] += v
				sum2[k] += v * v
			}
		}
		mean, variance := f.Forecast(h)
		for k := 0; k < h; k++ {
			m := sum[k] / draws
			v := sum2[k]/draws - m*m
			if rel := math.Abs(v/variance[k] - 1); rel > 5*math.Sqrt(4.0/draws) {
				t.Errorf("%s h=%d: variance of paths %.6g, HKOS eq. 6.2 %.6g (%.1f%% off)", c.sp, k+1, v, variance[k], 100*rel)
			}
			if math.Abs(m-mean[k]) > 5*math.Sqrt(variance[k]/draws) {
				t.Errorf("%s h=%d: mean of paths %.6g, point forecast %.6g", c.sp, k+1, m, mean[k])
			}
		}
	}
}
