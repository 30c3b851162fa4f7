// Package theta implements the Theta method of Assimakopoulos &
// Nikolopoulos (2000, "The theta model: a decomposition approach to
// forecasting", IJF 16:521–530), the best method of the M3 competition, in
// the form shown by Hyndman & Billah (2003, "Unmasking the Theta method",
// IJF 19:287–290) to be simple exponential smoothing with a drift of half
// the slope of the linear trend:
//
//	ŷ_{T+h|T} = ℓ_T + ½·b0·(h − 1 + 1/α − (1−α)^T/α)
//
// where b0 is the least-squares slope of y on t, ℓ_T the SES level with
// smoothing parameter α (fitted by least squares of the one-step errors,
// initial level y_1), and ½ = (θ−1)/θ for the usual θ = 2. When the
// lag-m autocorrelation is significant at 90% (numeric.Seasonal90, the M3
// test) the series is first divided by the seasonal indices of the
// classical multiplicative decomposition (subtracted, additive, when the
// series is not strictly positive), and the forecasts are reseasonalised.
//
// Forecast variances are those of SES (Hyndman, Koehler, Ord & Snyder
// 2008, Table 6.1, class 1: σ²(1 + (h−1)α²)) on the seasonally adjusted
// scale, multiplied by the squared seasonal index in the multiplicative
// case; σ² is the mean squared one-step error of the adjusted series.
package theta

import (
	"fmt"
	"math"

	"trueup/inputerr"
	"trueup/internal/numeric"
	"trueup/models"
)

// Name is the registry name of the Theta family.
const Name = "theta"

// Family is the Theta method with the seasonality test. The zero value is
// ready to use.
type Family struct{}

var (
	_ models.Family = Family{}
	_ models.Model  = (*Fitted)(nil)
)

// Name implements models.Family.
func (Family) Name() string { return Name }

// Seasonality says how a fit treats the seasonal period.
type Seasonality int

// The seasonal adjustments.
const (
	NotSeasonal Seasonality = iota
	Multiplicative
	Additive
)

// Fit implements models.Family. It needs two observations; seasonal
// adjustment needs three full seasons (for the test) and is skipped
// otherwise.
func (Family) Fit(y []float64, opt models.FitOptions) (models.Model, error) {
	f, err := FitWith(y, opt.Period, Detect(y, opt.Period))
	if err != nil {
		return nil, err
	}
	return f, nil
}

// Detect returns the seasonal adjustment the method applies to y with
// period m: none unless Seasonal90 finds seasonality; then multiplicative
// for strictly positive series whose classical indices are all positive,
// additive otherwise.
func Detect(y []float64, m int) Seasonality {
	if !numeric.Seasonal90(y, m) {
		return NotSeasonal
	}
	pos := true
	for _, v := range y {
		pos = pos && v > 0
	}
	if pos {
		if _, ok := numeric.ClassicalSeasonal(y, m, true); ok {
			return Multiplicative
		}
	}
	return Additive
}

// FitWith fits the method with a given seasonal adjustment (the automatic
// choice uses it to keep the adjustment found at validation).
func FitWith(y []float64, m int, s Seasonality) (*Fitted, error) {
	for i, v := range y {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, inputerr.New("observation %d is not a finite number", i+1)
		}
	}
	n := len(y)
	if n < 2 {
		return nil, inputerr.New("the Theta method needs at least 2 observations, the series has %d", n)
	}
	f := &Fitted{n: n, m: max(m, 1), season: s}
	x := append([]float64(nil), y...)
	if s != NotSeasonal {
		idx, ok := numeric.ClassicalSeasonal(y, m, s == Multiplicative)
		if !ok {
			return nil, inputerr.New("the Theta method's %s seasonal adjustment needs two full seasons with positive indices", s)
		}
		f.index = idx
		for t := range x {
			if s == Multiplicative {
				x[t] /= idx[t%m]
			} else {
				x[t] -= idx[t%m]
			}
		}
	}
	f.b0 = slope(x)
	f.alpha = fitAlpha(x)
	f.level, f.resid, f.sigma2 = f.filter(x)
	sse, k := 0.0, 0
	for t, e := range f.resid {
		if !math.IsNaN(e) {
			sse += f.adjusted(e, t) * f.adjusted(e, t)
			k++
		}
	}
	f.crit = models.NewCriteria(models.GaussianLogLik(math.Max(sse, 1e-300), k), 3, k)
	return f, nil
}

// slope is the least-squares slope of x on t = 0, 1, ….
func slope(x []float64) float64 {
	n := float64(len(x))
	tm := (n - 1) / 2
	xm := 0.0
	for _, v := range x {
		xm += v
	}
	xm /= n
	var sxy, sxx float64
	for t, v := range x {
		d := float64(t) - tm
		sxy += d * (v - xm)
		sxx += d * d
	}
	return sxy / sxx
}

// sesSSE is the sum of squared one-step errors of SES with parameter a and
// initial level x_0 (so the first error is zero).
func sesSSE(x []float64, a float64) float64 {
	l, s := x[0], 0.0
	for _, v := range x[1:] {
		e := v - l
		s += e * e
		l += a * e
	}
	return s
}

// fitAlpha minimises sesSSE over α ∈ [0, 1] by a grid of step 0.01 and a
// golden-section refinement (numeric.GridGolden).
func fitAlpha(x []float64) float64 {
	return numeric.GridGolden(func(a float64) float64 { return sesSSE(x, a) }, 0, 1, 0.01)
}

// drift is the Theta forecast's trend term ½·b0·(h − 1 + 1/α − (1−α)^T/α)
// at step h from an origin after T observations; for α = 0 its limit
// ½·b0·(h − 1 + T).
func (f *Fitted) drift(h, T int) float64 {
	a := f.alpha
	k := float64(h - 1)
	if a > 0 {
		k += (1 - math.Pow(1-a, float64(T))) / a
	} else {
		k += float64(T)
	}
	return 0.5 * f.b0 * k
}

// filter runs SES over the adjusted series x and returns the final level,
// the one-step residuals on the adjusted scale (each the error of the
// method's own one-step forecast from the previous origin; NaN for the
// first) and their mean square.
func (f *Fitted) filter(x []float64) (level float64, resid []float64, sigma2 float64) {
	resid = make([]float64, len(x))
	resid[0] = math.NaN()
	l, sse := x[0], 0.0
	for t := 1; t < len(x); t++ {
		e := x[t] - (l + f.drift(1, t))
		resid[t] = e
		sse += e * e
		l += f.alpha * (x[t] - l)
	}
	sigma2 = sse / float64(len(x)-1)
	return l, resid, sigma2
}

// Fitted is a fitted Theta method.
type Fitted struct {
	n, m      int
	season    Seasonality
	index     []float64 // classical seasonal indices, by t mod m
	b0, alpha float64
	level     float64
	resid     []float64 // one-step errors on the adjusted scale
	sigma2    float64
	crit      models.Criteria
}

// seasonal returns the seasonal index at time t (0-based); only for a
// seasonally adjusted fit.
func (f *Fitted) seasonal(t int) float64 { return f.index[t%f.m] }

// adjusted maps an error on the adjusted scale at time t to the data scale.
func (f *Fitted) adjusted(e float64, t int) float64 {
	if f.season == Multiplicative {
		return e * f.index[t%f.m]
	}
	return e
}

// Seasonality returns the seasonal adjustment used.
func (f *Fitted) Seasonality() Seasonality { return f.season }

func (s Seasonality) String() string {
	switch s {
	case Multiplicative:
		return "multiplicative"
	case Additive:
		return "additive"
	}
	return "none"
}

// Family implements models.Model.
func (f *Fitted) Family() string { return Name }

// Spec implements models.Model, e.g. "Theta, multiplicative seasonal m=12".
func (f *Fitted) Spec() string {
	if f.season == NotSeasonal {
		return "Theta"
	}
	return fmt.Sprintf("Theta, %s seasonal m=%d", f.season, f.m)
}

// Params implements models.Model: "estimates" α and the trend slope b0
// ("slope"), the "seasonal_adjustment" (none, multiplicative, additive),
// its "seasonal_indices" by position in the season with their
// "season_length", and the "underlying" ℓ_T (the smoothed level, named so
// that "level" keeps its one meaning, a level of the structure).
func (f *Fitted) Params() map[string]any {
	p := map[string]any{
		"estimates": []models.Estimate{
			{Name: "α", Value: f.alpha},
			{Name: "slope", Value: f.b0},
		},
		"seasonal_adjustment": f.season.String(),
		"underlying":          f.level,
	}
	if f.season != NotSeasonal {
		p["seasonal_indices"] = append([]float64(nil), f.index...)
		p["season_length"] = f.m
	}
	return p
}

// PointForecast returns the point forecasts for steps 1..h.
func (f *Fitted) PointForecast(h int) []float64 {
	out := make([]float64, max(h, 0))
	for i := range out {
		v := f.level + f.drift(i+1, f.n)
		switch f.season {
		case Multiplicative:
			v *= f.seasonal(f.n + i)
		case Additive:
			v += f.seasonal(f.n + i)
		}
		out[i] = v
	}
	return out
}

// Forecast implements models.Model (see the package comment).
func (f *Fitted) Forecast(h int) (mean, variance []float64) {
	mean = f.PointForecast(h)
	variance = make([]float64, len(mean))
	for i := range variance {
		v := f.sigma2 * (1 + float64(i)*f.alpha*f.alpha)
		if f.season == Multiplicative {
			s := f.seasonal(f.n + i)
			v *= s * s
		}
		variance[i] = v
	}
	return mean, variance
}

// Residuals implements models.Model: one-step errors on the data scale.
func (f *Fitted) Residuals() []float64 {
	out := make([]float64, len(f.resid))
	for t, e := range f.resid {
		out[t] = f.adjusted(e, t)
	}
	return out
}

// Sigma2 implements models.Model (on the seasonally adjusted scale).
func (f *Fitted) Sigma2() float64 { return f.sigma2 }

// Criteria implements models.Model: the Gaussian likelihood of the
// data-scale residuals with K = 3 (α, slope, σ²).
func (f *Fitted) Criteria() models.Criteria { return f.crit }

// NObs implements models.Model.
func (f *Fitted) NObs() int { return f.n }

// Warning implements models.Model.
func (f *Fitted) Warning() string { return "" }

// Fixed is the Theta method with its seasonal adjustment fixed rather than
// tested (the automatic choice refits the adjustment it validated).
type Fixed struct {
	Season Seasonality
}

var _ models.Family = Fixed{}

// Name implements models.Family.
func (Fixed) Name() string { return Name }

// Fit implements models.Family by FitWith.
func (fam Fixed) Fit(y []float64, opt models.FitOptions) (models.Model, error) {
	f, err := FitWith(y, opt.Period, fam.Season)
	if err != nil {
		return nil, err
	}
	return f, nil
}
