// Package naive provides the two benchmark families every forecaster is
// measured against: the seasonal naive method and the random walk with
// drift, with their analytic forecast variances (Hyndman & Athanasopoulos,
// Forecasting: Principles and Practice, 3rd ed., §5.5, Table 5.2).
package naive

import (
	"fmt"
	"math"

	"trueup/inputerr"
	"trueup/models"
)

// SeasonalNaive forecasts each period by the value one season earlier:
// ŷ_{T+h} = y_{T+h−m(k+1)} with k = ⌊(h−1)/m⌋. With one-step residual
// variance σ², the h-step variance is σ²(k+1). With m = 1 it is the plain
// random walk.
type SeasonalNaive struct{}

// Drift is the random walk with drift: ŷ_{T+h} = y_T + h·c with
// c = (y_T − y_1)/(T−1). The drift is estimated from the T−1 differences,
// so Var(c) = σ²/(T−1) and the h-step variance is σ²·h·(1 + h/(T−1)).
type Drift struct{}

var (
	_ models.Family = SeasonalNaive{}
	_ models.Family = Drift{}
	_ models.Model  = (*Fitted)(nil)
)

// SeasonalNaiveName is the registry name of the seasonal naive family.
const SeasonalNaiveName = "seasonal-naive"

// Name implements models.Family.
func (SeasonalNaive) Name() string { return SeasonalNaiveName }

// Name implements models.Family.
func (Drift) Name() string { return "drift" }

// Fitted is a fitted naive model.
type Fitted struct {
	family string
	m      int       // seasonal lag (1 for drift)
	y      []float64 // the data
	drift  float64
	level  float64 // the mean method's level
	flat   bool    // the mean method on a history without variation
	resid  []float64
	sigma2 float64
	crit   models.Criteria
	warn   string
}

// Fit implements models.Family. It needs at least m+2 observations so that
// at least two residuals define σ².
func (SeasonalNaive) Fit(y []float64, opt models.FitOptions) (models.Model, error) {
	m := opt.Period
	if m < 1 {
		m = 1
	}
	if len(y) < m+2 {
		return nil, inputerr.New("seasonal naive needs at least %d observations, have %d", m+2, len(y))
	}
	f := &Fitted{family: SeasonalNaiveName, m: m, y: append([]float64(nil), y...)}
	f.resid = make([]float64, len(y))
	var sse float64
	for t := range y {
		if t < m {
			f.resid[t] = math.NaN()
			continue
		}
		e := y[t] - y[t-m]
		f.resid[t] = e
		sse += e * e
	}
	n := len(y) - m
	f.sigma2 = sse / float64(n)
	f.crit = models.NewCriteria(models.GaussianLogLik(sse, n), 1, n)
	if sse == 0 {
		f.warn = "series repeats exactly each season: zero residual variance"
	}
	return f, nil
}

// Fit implements models.Family. It needs at least three observations.
func (Drift) Fit(y []float64, _ models.FitOptions) (models.Model, error) {
	T := len(y)
	if T < 3 {
		return nil, inputerr.New("drift needs at least 3 observations, have %d", T)
	}
	f := &Fitted{family: "drift", m: 1, y: append([]float64(nil), y...)}
	f.drift = (y[T-1] - y[0]) / float64(T-1)
	f.resid = make([]float64, T)
	f.resid[0] = math.NaN()
	var sse float64
	for t := 1; t < T; t++ {
		e := y[t] - y[t-1] - f.drift
		f.resid[t] = e
		sse += e * e
	}
	n := T - 1
	// One parameter (c) is estimated from the n differences.
	f.sigma2 = sse / float64(n-1)
	f.crit = models.NewCriteria(models.GaussianLogLik(sse, n), 2, n)
	if sse == 0 {
		f.warn = "series is an exact straight line: zero residual variance"
	}
	return f, nil
}

// Family implements models.Model.
func (f *Fitted) Family() string { return f.family }

// Spec implements models.Model.
func (f *Fitted) Spec() string {
	switch f.family {
	case "drift":
		return "random walk with drift"
	case "last":
		return "last value"
	case MeanName:
		return "mean"
	}
	return fmt.Sprintf("seasonal naive m=%d", f.m)
}

// Params implements models.Model: "estimates" holds the drift c of the
// random walk with drift; the seasonal naive method gives its
// "season_length" m (the lag it repeats); the
// last-value fallback has no parameters.
func (f *Fitted) Params() map[string]any {
	switch f.family {
	case "drift":
		return map[string]any{"estimates": []models.Estimate{{Name: "drift", Value: f.drift}}}
	case "last":
		return map[string]any{}
	case MeanName:
		return map[string]any{"estimates": []models.Estimate{{Name: "mean", Value: f.level}}}
	}
	return map[string]any{"season_length": f.m}
}

// Forecast implements models.Model.
func (f *Fitted) Forecast(h int) (mean, variance []float64) {
	mean = make([]float64, h)
	variance = make([]float64, h)
	T := len(f.y)
	for i := 0; i < h; i++ {
		step := i + 1
		switch f.family {
		case "drift":
			mean[i] = f.y[T-1] + float64(step)*f.drift
			variance[i] = f.sigma2 * float64(step) * (1 + float64(step)/float64(T-1))
			continue
		case "last":
			mean[i] = f.y[T-1]
			variance[i] = f.sigma2 * float64(step)
			continue
		case MeanName:
			mean[i] = f.level
			if f.flat {
				variance[i] = f.sigma2 * float64(step)
			} else {
				variance[i] = f.sigma2 * (1 + 1/float64(T))
			}
			continue
		}
		k := (step - 1) / f.m
		mean[i] = f.y[T-f.m+(step-1)%f.m]
		variance[i] = f.sigma2 * float64(k+1)
	}
	return mean, variance
}

// Residuals implements models.Model.
func (f *Fitted) Residuals() []float64 { return f.resid }

// Sigma2 implements models.Model.
func (f *Fitted) Sigma2() float64 { return f.sigma2 }

// Criteria implements models.Model.
func (f *Fitted) Criteria() models.Criteria { return f.crit }

// NObs implements models.Model.
func (f *Fitted) NObs() int { return len(f.y) }

// Warning implements models.Model.
func (f *Fitted) Warning() string { return f.warn }
