package naive

import (
	"math"

	"trueup/inputerr"
	"trueup/models"
)

// Mean forecasts the mean of the history: the method for series too short
// or too flat for anything else (a store open for two or three periods, a
// series that never changed). With sample variance s² > 0 its h-step
// variance is s²(1 + 1/T), the prediction variance of a new observation
// from a constant mean (Hyndman & Athanasopoulos, Forecasting: Principles
// and Practice, 3rd ed., §5.5). A history without variation says nothing
// about the spread; then σ² = max(ȳ², 1)/T and the variance grows as σ²·h,
// so a long flat history gives a narrow interval, a short one a wide
// interval, and an all-zero series still gets an interval of about one
// unit (our choice; the Warning says the width is a rough rule).
type Mean struct{}

var _ models.Family = Mean{}

// MeanName is the registry name of the mean method.
const MeanName = "mean"

// Name implements models.Family.
func (Mean) Name() string { return MeanName }

// Fit implements models.Family.
func (Mean) Fit(y []float64, _ models.FitOptions) (models.Model, error) {
	T := len(y)
	if T < 1 {
		return nil, inputerr.New("no observations")
	}
	mu := 0.0
	for _, v := range y {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, inputerr.New("observation is not a finite number")
		}
		mu += v
	}
	mu /= float64(T)
	f := &Fitted{family: MeanName, m: 1, y: append([]float64(nil), y...), level: mu}
	f.resid = make([]float64, T)
	sse := 0.0
	for t, v := range y {
		f.resid[t] = v - mu
		sse += (v - mu) * (v - mu)
	}
	if sse > 0 && T > 1 {
		f.sigma2 = sse / float64(T-1)
		f.crit = models.NewCriteria(models.GaussianLogLik(sse, T), 2, T)
		return f, nil
	}
	f.flat = true
	f.sigma2 = math.Max(mu*mu, 1) / float64(T)
	f.crit = models.NewCriteria(0, 2, T)
	f.warn = "no variation in the history: forecast is its level, and the interval width is a rough rule"
	return f, nil
}
