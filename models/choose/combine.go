package choose

import (
	"math"

	"trueup/models"
)

// Combination is the equal-weight average of two fitted models' forecasts.
// Simple averages of exponential smoothing and ARIMA forecasts are a strong
// published baseline (Makridakis & Hibon 2000, the M3 competition;
// Makridakis, Spiliotis & Assimakopoulos 2020, the M4 competition).
type Combination struct {
	a, b models.Model
	rho  float64 // correlation of the two models' in-sample residuals
}

var _ models.Model = (*Combination)(nil)

// Combine averages a and b with weights ½, ½.
func Combine(a, b models.Model) *Combination {
	return &Combination{a: a, b: b, rho: residualCorrelation(a.Residuals(), b.Residuals())}
}

// residualCorrelation is the Pearson correlation over the times where both
// residuals are defined; 1 (the conservative choice for the variance of the
// average) when it cannot be computed.
func residualCorrelation(ra, rb []float64) float64 {
	var n, sa, sb float64
	for i := range ra {
		if i < len(rb) && !math.IsNaN(ra[i]) && !math.IsNaN(rb[i]) {
			n++
			sa += ra[i]
			sb += rb[i]
		}
	}
	if n < 3 {
		return 1
	}
	ma, mb := sa/n, sb/n
	var saa, sbb, sab float64
	for i := range ra {
		if i < len(rb) && !math.IsNaN(ra[i]) && !math.IsNaN(rb[i]) {
			da, db := ra[i]-ma, rb[i]-mb
			saa += da * da
			sbb += db * db
			sab += da * db
		}
	}
	if saa == 0 || sbb == 0 {
		return 1
	}
	return math.Max(-1, math.Min(1, sab/math.Sqrt(saa*sbb)))
}

// Family implements models.Model: "arima+ets" for an ARIMA and an ETS model.
func (c *Combination) Family() string { return c.a.Family() + "+" + c.b.Family() }

// Spec implements models.Model.
func (c *Combination) Spec() string { return "mean of " + c.a.Spec() + " and " + c.b.Spec() }

// Components returns the two models.
func (c *Combination) Components() (a, b models.Model) { return c.a, c.b }

// Params implements models.Model: "components" (each with its "family",
// "form" and "params"), the "weights" and the "residual_correlation" used
// for the variances.
func (c *Combination) Params() map[string]any {
	comp := func(m models.Model) map[string]any {
		return map[string]any{"family": m.Family(), "form": m.Spec(), "params": m.Params()}
	}
	return map[string]any{
		"components":           []any{comp(c.a), comp(c.b)},
		"weights":              []float64{0.5, 0.5},
		"residual_correlation": c.rho,
	}
}

// Forecast implements models.Model: the average of the two point forecasts
// and Var((A+B)/2) = (v_A + v_B + 2ρ√(v_A v_B))/4, with ρ the correlation of
// the in-sample residuals standing in for that of the forecast errors.
func (c *Combination) Forecast(h int) (mean, variance []float64) {
	ma, va := c.a.Forecast(h)
	mb, vb := c.b.Forecast(h)
	mean, variance = make([]float64, len(ma)), make([]float64, len(ma))
	for i := range ma {
		mean[i] = (ma[i] + mb[i]) / 2
		variance[i] = (va[i] + vb[i] + 2*c.rho*math.Sqrt(va[i]*vb[i])) / 4
	}
	return mean, variance
}

// Residuals implements models.Model: y − (ŷ_A + ŷ_B)/2 = (e_A + e_B)/2.
func (c *Combination) Residuals() []float64 {
	ra, rb := c.a.Residuals(), c.b.Residuals()
	out := make([]float64, len(ra))
	for i := range ra {
		if i < len(rb) {
			out[i] = (ra[i] + rb[i]) / 2
		} else {
			out[i] = math.NaN()
		}
	}
	return out
}

// Sigma2 implements models.Model: the mean squared combined residual.
func (c *Combination) Sigma2() float64 {
	sse, n := sumSquares(c.Residuals())
	if n == 0 {
		return 0
	}
	return sse / float64(n)
}

func sumSquares(r []float64) (float64, int) {
	s, n := 0.0, 0
	for _, v := range r {
		if !math.IsNaN(v) {
			s += v * v
			n++
		}
	}
	return s, n
}

// Criteria implements models.Model: the Gaussian log-likelihood of the
// combined residuals, counting both components' parameters.
func (c *Combination) Criteria() models.Criteria {
	sse, n := sumSquares(c.Residuals())
	k := c.a.Criteria().K + c.b.Criteria().K
	if n == 0 {
		return models.NewCriteria(0, k, 0)
	}
	if sse == 0 {
		sse = 1e-300
	}
	return models.NewCriteria(models.GaussianLogLik(sse, n), k, n)
}

// NObs implements models.Model.
func (c *Combination) NObs() int { return c.a.NObs() }

// Warning implements models.Model: the components' warnings.
func (c *Combination) Warning() string { return join(c.a.Warning(), c.b.Warning()) }

func join(parts ...string) string {
	out := ""
	for _, p := range parts {
		if p == "" {
			continue
		}
		if out != "" {
			out += "; "
		}
		out += p
	}
	return out
}
