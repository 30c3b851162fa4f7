package transform

import (
	"math"

	"trueup/models"
)

// Options choose the transform a Family applies.
type Options struct {
	// Kind is none, log or boxcox (λ by Guerrero's method unless Lambda is
	// set). The zero value means none.
	Kind Kind
	// Lambda, when not nil, fixes the Box–Cox λ instead of choosing it
	// (still subject to the zero and sign rules).
	Lambda *float64
	// BiasAdjust makes Forecast return back-transformed means instead of
	// medians (see Fitted.Forecast).
	BiasAdjust bool
}

// Family fits Inner to the transformed series. It implements
// models.Family under Inner's name.
type Family struct {
	Inner models.Family
	Opt   Options
}

// Interval is implemented by models whose prediction intervals are not
// mean ± z·sd (simulated or back-transformed ones).
type Interval interface {
	Interval(h int, level float64) (lo, hi []float64)
}

var (
	_ models.Family = Family{}
	_ models.Model  = (*Fitted)(nil)
	_ Interval      = (*Fitted)(nil)
)

// Name implements models.Family: the inner family's name.
func (f Family) Name() string { return f.Inner.Name() }

// Fit implements models.Family.
func (f Family) Fit(y []float64, opt models.FitOptions) (models.Model, error) {
	tr, note := Choose(f.Opt.Kind, y, opt.Period)
	if f.Opt.Lambda != nil && !tr.Identity {
		l := *f.Opt.Lambda
		lo := math.Inf(1)
		for _, v := range y {
			lo = math.Min(lo, v)
		}
		if lo > 0 || l > 0 {
			tr = Transform{Lambda: l}
		} else {
			note = joinNote(note, "fixed lambda ≤ 0 not possible with zeros: chosen lambda used instead")
		}
	}
	return FitWith(f.Inner, tr, note, f.Opt.BiasAdjust, y, opt)
}

// FitWith fits inner to tr(y); note is carried into the Warning.
func FitWith(inner models.Family, tr Transform, note string, bias bool, y []float64, opt models.FitOptions) (models.Model, error) {
	z := tr.Apply(make([]float64, len(y)), y)
	m, err := inner.Fit(z, opt)
	if err != nil {
		return nil, err
	}
	if tr.Identity && note == "" {
		return m, nil
	}
	return &Fitted{inner: m, tr: tr, bias: bias, note: note, y: append([]float64(nil), y...)}, nil
}

// Fitted is a model fitted on the transformed scale, reporting on the data
// scale.
type Fitted struct {
	inner models.Model
	tr    Transform
	bias  bool
	note  string
	y     []float64
}

// Inner returns the model fitted to the transformed series.
func (f *Fitted) Inner() models.Model { return f.inner }

// Transform returns the transform used.
func (f *Fitted) Transform() Transform { return f.tr }

// Family implements models.Model.
func (f *Fitted) Family() string { return f.inner.Family() }

// Spec implements models.Model: the inner spec, then the transform.
func (f *Fitted) Spec() string {
	if f.tr.Identity {
		return f.inner.Spec()
	}
	return f.inner.Spec() + " on " + f.tr.String()
}

// Params implements models.Model: the inner parameters plus "transform":
// {"kind": none, log or boxcox, "lambda": λ (Box–Cox only), "bias_adjusted":
// whether forecasts are means rather than medians}.
func (f *Fitted) Params() map[string]any {
	p := f.inner.Params()
	out := make(map[string]any, len(p)+1)
	for k, v := range p {
		out[k] = v
	}
	tr := map[string]any{"kind": string(None), "bias_adjusted": f.bias}
	switch {
	case f.tr.Identity:
	case f.tr.Lambda == 0:
		tr["kind"] = string(Log)
	default:
		tr["kind"], tr["lambda"] = string(BoxCox), f.tr.Lambda
	}
	out["transform"] = tr
	return out
}

// Forecast implements models.Model on the data scale. With μ and v the
// inner forecast mean and variance on the transformed scale, the point
// forecast is the back-transformed median f⁻¹(μ), or with bias adjustment
// the mean: for the log exp(μ + v/2), for Box–Cox the second-order
// approximation f⁻¹(μ)·(1 + v(1−λ)/(2(λμ+1)²)) (Hyndman & Athanasopoulos,
// Forecasting: Principles and Practice, 3rd ed., §5.6). The variance is
// (e^v − 1)e^{2μ+v} for the log (lognormal) and f⁻¹′(μ)²·v for Box–Cox
// (delta method). Intervals should come from Interval, which
// back-transforms quantiles exactly.
func (f *Fitted) Forecast(h int) (mean, variance []float64) {
	mu, v := f.inner.Forecast(h)
	mean, variance = make([]float64, len(mu)), make([]float64, len(mu))
	for i := range mu {
		mean[i], variance[i] = f.moments(mu[i], v[i])
	}
	return mean, variance
}

// PointForecast returns the back-transformed point forecasts without the
// variances when the inner model can give its point forecasts alone and
// no bias adjustment is asked for (the median f⁻¹(μ) needs no variance);
// otherwise the means of Forecast.
func (f *Fitted) PointForecast(h int) []float64 {
	p, ok := f.inner.(interface{ PointForecast(int) []float64 })
	if f.bias || !ok {
		mean, _ := f.Forecast(h)
		return mean
	}
	mu := p.PointForecast(h)
	out := make([]float64, len(mu))
	for i, v := range mu {
		out[i], _ = f.moments(v, 0)
	}
	return out
}

func (f *Fitted) moments(mu, v float64) (mean, variance float64) {
	tr := f.tr
	if tr.Identity {
		return mu, v
	}
	if tr.Lambda == 0 {
		mean = tr.Inverse(mu)
		if f.bias {
			mean = tr.Inverse(mu + v/2)
		}
		variance = math.Expm1(math.Min(v, 700)) * tr.Inverse(2*mu+v)
		return finite(mean), finite(variance)
	}
	mean = tr.Inverse(mu)
	if f.bias {
		base := tr.Lambda*mu + 1
		if base > 0 {
			mean *= 1 + v*(1-tr.Lambda)/(2*base*base)
		}
	}
	d := tr.derivInverse(mu)
	return finite(mean), finite(d * d * v)
}

func finite(x float64) float64 {
	switch {
	case math.IsNaN(x):
		return 0
	case math.IsInf(x, 1) || x > math.MaxFloat64:
		return math.MaxFloat64
	case math.IsInf(x, -1):
		return -math.MaxFloat64
	}
	return x
}

// ClearOfPole reports whether the forecast distribution at steps 1..h
// keeps its upper tail inside the back-transform's domain. For Box–Cox
// with λ < 0 the back-transform has a pole, y → ∞ as λz + 1 → 0, so a
// Gaussian forecast on the transformed scale that reaches it has no
// finite mean or variance on the data scale, and the delta-method
// variance of Forecast grows without bound as the forecast nears it
// (with ARIMA differencing twice, say). Clear means μ + TailSDs·√v <
// −1/λ at every step (models.TailSDs). Every other transform is clear:
// the log has no pole, and λ > 0 only clamps the lower tail at zero.
func (f *Fitted) ClearOfPole(h int) bool {
	if f.tr.Identity || f.tr.Lambda >= 0 || h <= 0 {
		return true
	}
	mu, v := f.inner.Forecast(h)
	pole := -1 / f.tr.Lambda
	for i := range mu {
		if !(mu[i]+models.TailSDs*math.Sqrt(math.Max(v[i], 0)) < pole) {
			return false
		}
	}
	return true
}

// Interval back-transforms the inner model's central interval (its own
// Interval if it has one, else μ ± z√v with Gaussian z); monotone maps keep
// quantiles, so the limits are exact and not symmetric about the forecast.
func (f *Fitted) Interval(h int, level float64) (lo, hi []float64) {
	if !(level > 0 && level < 1) || h <= 0 {
		return []float64{}, []float64{}
	}
	if iv, ok := f.inner.(Interval); ok {
		lo, hi = iv.Interval(h, level)
	} else {
		mu, v := f.inner.Forecast(h)
		z := math.Sqrt2 * math.Erfinv(level)
		lo, hi = make([]float64, h), make([]float64, h)
		for i := range mu {
			s := math.Sqrt(v[i])
			lo[i], hi[i] = mu[i]-z*s, mu[i]+z*s
		}
	}
	for i := range lo {
		lo[i], hi[i] = f.tr.Inverse(lo[i]), f.tr.Inverse(hi[i])
	}
	return lo, hi
}

// Residuals implements models.Model: y_t − f⁻¹(ẑ_{t|t−1}) with ẑ the inner
// one-step forecast (z_t minus the inner residual); NaN where the inner
// model has none or where ẑ has no inverse.
func (f *Fitted) Residuals() []float64 {
	rz := f.inner.Residuals()
	out := make([]float64, len(f.y))
	for t := range f.y {
		if t >= len(rz) || math.IsNaN(rz[t]) {
			out[t] = math.NaN()
			continue
		}
		zhat := f.tr.forward(f.y[t]) - rz[t]
		if !f.tr.invertible(zhat) {
			// The one-step prediction lies outside the range the
			// transform maps back from (λz + 1 ≤ 0, or beyond the float
			// range): there is no data-scale prediction to compare with.
			out[t] = math.NaN()
			continue
		}
		out[t] = f.y[t] - f.tr.Inverse(zhat)
	}
	return out
}

// Sigma2 implements models.Model: the inner innovation variance, on the
// transformed scale.
func (f *Fitted) Sigma2() float64 { return f.inner.Sigma2() }

// Criteria implements models.Model. The log-likelihood is moved to the
// data scale by the Jacobian (λ − 1)·Σ ln y_t so that fits with different
// transforms can be compared; K is the inner count (λ is chosen by
// Guerrero's method, not by likelihood).
func (f *Fitted) Criteria() models.Criteria {
	c := f.inner.Criteria()
	if f.tr.Identity {
		return c
	}
	lo := math.Inf(1)
	for _, v := range f.y {
		lo = math.Min(lo, v)
	}
	if lo <= 0 {
		return c // the Jacobian is undefined at zero; stay on the z scale
	}
	return models.NewCriteria(c.LogLik+f.tr.logJacobian(f.y), c.K, c.N)
}

// NObs implements models.Model.
func (f *Fitted) NObs() int { return f.inner.NObs() }

// Warning implements models.Model: the transform's note and the inner
// model's warning.
func (f *Fitted) Warning() string {
	w := f.inner.Warning()
	if f.note == "" {
		return w
	}
	if w == "" {
		return f.note
	}
	return f.note + "; " + w
}
