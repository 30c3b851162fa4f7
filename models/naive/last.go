package naive

import (
	"math"

	"trueup/inputerr"
	"trueup/models"
)

// LastValue is the fallback for series too short for any other family
// (a store that opened one or two periods ago): it repeats the last value.
// Its variance is a deliberately rough random-walk guess, σ²·h with σ² the
// mean squared change between observations, or the squared last value when
// there is only one observation (a ±100 % one-step spread). It is never
// chosen when another family fits; the pipeline records a warning.
type LastValue struct{}

var _ models.Family = LastValue{}

// Name implements models.Family.
func (LastValue) Name() string { return "last" }

// Fit implements models.Family.
func (LastValue) Fit(y []float64, _ models.FitOptions) (models.Model, error) {
	T := len(y)
	if T < 1 {
		return nil, inputerr.New("no observations")
	}
	f := &Fitted{family: "last", m: 1, y: append([]float64(nil), y...)}
	f.resid = make([]float64, T)
	f.resid[0] = math.NaN()
	var sse float64
	for t := 1; t < T; t++ {
		e := y[t] - y[t-1]
		f.resid[t] = e
		sse += e * e
	}
	if T > 1 {
		f.sigma2 = sse / float64(T-1)
		f.crit = models.NewCriteria(models.GaussianLogLik(sse, T-1), 1, T-1)
	} else {
		f.sigma2 = y[0] * y[0]
		f.crit = models.NewCriteria(math.NaN(), 1, 0)
	}
	f.warn = "too few observations for a fitted model: repeats the last value with a rough interval"
	return f, nil
}
