// Package models defines what every forecasting family provides to the rest
// of trueup: a Family fits one series and returns a fitted Model, which gives
// point forecasts, forecast-error variances, in-sample one-step residuals and
// information criteria. Families live in subpackages (naive, arima, ets) and
// are collected in a Registry by name.
package models

import "math"

// FitOptions carries what a family needs to know beyond the data.
type FitOptions struct {
	// Period is the seasonal period m (12 for monthly data, 52 weekly, 4
	// quarterly, 7 daily). 1 means no seasonality.
	Period int
	// Horizon is the run's forecast horizon; families that choose among
	// candidates by out-of-sample accuracy validate at this horizon.
	Horizon int
}

// Model is a model fitted to one series y_1..y_T.
type Model interface {
	// Family is the registry name of the family that produced the model.
	Family() string
	// Spec is a short human-readable description of the fitted form, such
	// as "seasonal naive (m=12)".
	Spec() string
	// Params returns the fitted form's settings and estimates as plain,
	// JSON-marshalable data without NaN or infinite numbers (nil stands
	// for a missing value). The key "estimates", when present, holds the
	// estimated coefficients as []Estimate in a fixed order; the other keys
	// are the family's own (orders, initial states, the automatic choice's
	// validation record) and are documented with each family. Programs
	// show Params without knowing the family, so a new family needs no
	// change to them.
	Params() map[string]any
	// Forecast returns point forecasts and forecast-error variances for
	// steps 1..h on the response (original) scale.
	Forecast(h int) (mean, variance []float64)
	// Residuals returns the in-sample one-step errors y_t − ŷ_{t|t−1} on the
	// response scale, one per observation, NaN where the model defines no
	// one-step forecast (the first m values of a seasonal naive fit, say).
	Residuals() []float64
	// Sigma2 is the estimated one-step innovation variance.
	Sigma2() float64
	// Criteria returns the log-likelihood and information criteria.
	Criteria() Criteria
	// NObs is the number of observations the model was fitted to.
	NObs() int
	// Warning is empty, or explains a fallback or a doubtful fit.
	Warning() string
}

// Family fits models of one kind.
type Family interface {
	// Name is the registry key, such as "seasonal-naive".
	Name() string
	// Fit estimates a model on y. It returns an error when y cannot carry
	// this family (too short, say); it never panics on finite input.
	Fit(y []float64, opt FitOptions) (Model, error)
}

// Estimate is one estimated coefficient of a fitted model, named in
// textbook notation: φ1, θ1, Φ1, Θ1 for ARIMA (AR polynomial 1 − φ1B − …,
// MA polynomial 1 + θ1B + …), α, β, γ, φ for exponential smoothing
// (Hyndman, Koehler, Ord & Snyder 2008), or a word such as "mean" or
// "drift".
type Estimate struct {
	Name  string  `json:"name"`
	Value float64 `json:"value"`
}

// Criteria holds a Gaussian log-likelihood and the information criteria
// derived from it. K counts estimated parameters including the innovation
// variance.
type Criteria struct {
	LogLik float64
	AIC    float64
	AICc   float64
	BIC    float64
	K      int
	N      int
}

// NewCriteria computes AIC = −2ℓ + 2k, AICc = AIC + 2k(k+1)/(n−k−1) and
// BIC = −2ℓ + k·ln n (Akaike 1974; Hurvich & Tsai 1989; Schwarz 1978).
// AICc is +Inf when n ≤ k+1.
func NewCriteria(loglik float64, k, n int) Criteria {
	c := Criteria{LogLik: loglik, K: k, N: n}
	c.AIC = -2*loglik + 2*float64(k)
	c.BIC = -2*loglik + float64(k)*math.Log(float64(n))
	if n-k-1 > 0 {
		c.AICc = c.AIC + 2*float64(k)*float64(k+1)/float64(n-k-1)
	} else {
		c.AICc = math.Inf(1)
	}
	return c
}

// GaussianLogLik is the log-likelihood of n independent N(0, σ²) errors at
// the maximum-likelihood σ² = sse/n: −n/2·(ln(2π·sse/n) + 1).
func GaussianLogLik(sse float64, n int) float64 {
	if n == 0 {
		return math.NaN()
	}
	s2 := sse / float64(n)
	return -0.5 * float64(n) * (math.Log(2*math.Pi*s2) + 1)
}
