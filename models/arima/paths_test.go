package arima

import (
	"math"
	"math/rand/v2"
	"testing"
)

// TestPathFormAgainstR simulates 20,000 future paths of every reference
// case from its ψ-form with Gaussian innovations of the fitted σ², and
// checks the paths' variance at each step against the forecast standard
// errors of R 4.2.2 stats::predict.Arima (cases.json, from
// fixtures/reference/arima/regenerate.R): the ψ-form must give the
// model's predictive variance, seasonal and differenced forms included.
// Tolerance: five standard errors of a sample variance, 5·√(2/N) = 5%,
// plus 2% for the final-state uncertainty that R's exact filter carries
// and the ψ-form leaves out. The mean of the paths (on the modelled
// scale) must be the point forecast within five standard errors.
func TestPathFormAgainstR(t *testing.T) {
	const draws = 20000
	for _, c := range loadCases(t) {
		if c.Trend || c.FourierK > 0 {
			continue // regression forms: the same ARMA errors, checked by the others
		}
		t.Run(c.Name, func(t *testing.T) {
			f, err := FitOrder(loadSeries(t, c.Series), c.spec(), Options{})
			if err != nil {
				t.Fatal(err)
			}
			h := len(c.SE)
			pf := f.PathForm(h)
			if c.Log != pf.BoxCox || pf.Lambda != 0 {
				t.Fatalf("log case %v, path form transform %v (λ %g)", c.Log, pf.BoxCox, pf.Lambda)
			}
			pf.BoxCox = false // compare on the modelled scale, as R's se are
			rng := rand.New(rand.NewPCG(1, 2))
			sd := math.Sqrt(f.Sigma2())
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
			mean, _ := f.forecastTransformed(h, f.future, true)
			for k := 0; k < h; k++ {
				m := sum[k] / draws
				v := sum2[k]/draws - m*m
				want := c.SE[k] * c.SE[k]
				if rel := math.Abs(v/want - 1); rel > 5*math.Sqrt(2.0/draws)+0.02 {
					t.Errorf("h=%d: variance of paths %.6g, R's se² %.6g (%.1f%% off)", k+1, v, want, 100*rel)
				}
				if math.Abs(m-mean[k]) > 5*c.SE[k]/math.Sqrt(draws) {
					t.Errorf("h=%d: mean of paths %.6g, point forecast %.6g", k+1, m, mean[k])
				}
			}
		})
	}
}
