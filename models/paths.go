package models

import (
	"math"
	"slices"
)

// PathForm is a fitted model's future written as a function of its
// innovations, so that future sample paths can be simulated from any
// innovations, in particular from the model's own in-sample residuals
// (a bootstrap). It is plain data, so that it travels with a fit made
// in another process. A path over steps k = 0..h−1 of a linear form is
//
//	z_k = Mean_k + Scale_k · Σ_{j=0..k} Psi_j · ε_{k−j},   y_k = back(z_k),
//
// with ε_0..ε_{h−1} the innovations, Psi the ψ-weights of the model's
// linear innovations form (Psi_0 = 1), Scale a per-step factor (nil:
// every factor is 1) and back the inverse Box–Cox transform when
// BoxCox is set (identity otherwise). With Gaussian innovations of
// variance σ² and no transform this is exactly the model's Gaussian
// predictive distribution: its variance is Scale_k²·σ²·Σ Psi_j² (Box,
// Jenkins & Reinsel, Time Series Analysis, 4th ed., §5.2).
type PathForm struct {
	// Mean holds the h point forecasts on the scale z is simulated on.
	Mean []float64
	// Psi holds the h ψ-weights ψ_0 = 1, ψ_1, …, ψ_{h−1}.
	Psi []float64
	// Scale, when not nil, holds one factor per step.
	Scale []float64
	// Innovations holds the in-sample one-step errors on the scale of ε,
	// one per observation, NaN where the model has none.
	Innovations []float64
	// BoxCox says that z is on the scale of the Box–Cox transform with
	// λ = Lambda (0: the log). (A flag and a number rather than a
	// pointer: encodings such as gob drop a pointer to zero.)
	BoxCox bool
	Lambda float64
	// Smoothing, when not nil, makes the form an exponential smoothing
	// recursion, for the forms that are not linear in their innovations
	// (multiplicative errors or seasonality), whose paths are then
	// back-transformed as above; Mean, Psi and Scale are unused.
	Smoothing *SmoothingForm
	// Members, when not nil, makes the form a median combination: a path
	// is the median, step by step, of the members' paths, each driven by
	// its own innovations at the same periods (the other fields are then
	// unused).
	Members []*PathForm

	valid []int // observations with an innovation, found on first use
}

// Simulator is implemented by fitted models whose future can be
// simulated from given innovations. PathForm returns nil when the fitted
// form has no linear innovations form (multiplicative errors, say).
type Simulator interface {
	PathForm(h int) *PathForm
}

// Simulate fills dst (h values) with the path driven by the model's own
// innovations at the observations at (0-based, one per step): a
// bootstrap path when at is drawn from the sample. An observation with no
// innovation (NaN, or outside the sample) is replaced by the valid
// observation at the same position modulo their number; with none at all
// the innovations are zero. Not safe for concurrent use before its first
// call.
func (p *PathForm) Simulate(dst []float64, at []int) {
	if p.Members != nil {
		paths := make([][]float64, len(p.Members))
		for m, q := range p.Members {
			paths[m] = make([]float64, len(dst))
			q.Simulate(paths[m], at)
		}
		buf := make([]float64, len(paths))
		for k := range dst {
			for m := range paths {
				buf[m] = paths[m][k]
			}
			dst[k] = median(buf)
		}
		return
	}
	if p.valid == nil {
		p.valid = []int{}
		for t, v := range p.Innovations {
			if !math.IsNaN(v) {
				p.valid = append(p.valid, t)
			}
		}
	}
	eps := make([]float64, len(dst))
	for k, t := range at {
		if t >= 0 && t < len(p.Innovations) && !math.IsNaN(p.Innovations[t]) {
			eps[k] = p.Innovations[t]
		} else if len(p.valid) > 0 {
			eps[k] = p.Innovations[p.valid[((t%len(p.valid))+len(p.valid))%len(p.valid)]]
		}
	}
	p.Path(dst, eps)
}

// SmoothingForm is an exponential smoothing model's state after the
// sample and its parameters, from which paths follow by the recursions
// of the innovations state-space model in error-correction form (Hyndman,
// Koehler, Ord & Snyder 2008, Table 2.3, as models/ets fits them):
//
//	q = ℓ + φb,  ŷ = q (+ or ×) s,  y = ŷ + ε or ŷ(1 + ε),
//	ℓ' = q + α(p − q),  b' = φb + β(p − q),  s' = s + γ((y (− or ÷) q) − s),
//
// with p = y (− or ÷) s. The innovations are on the error's own scale:
// y − ŷ for additive errors, (y − ŷ)/ŷ for multiplicative ones.
type SmoothingForm struct {
	MulError, MulSeason bool
	// Level and Trend are the final states (Trend 0 without a trend);
	// Season the final seasonal states in the order of use (nil
	// without a season).
	Level, Trend            float64
	Season                  []float64
	Alpha, Beta, Gamma, Phi float64
}

func (f *SmoothingForm) path(dst, eps []float64) {
	l, b := f.Level, f.Trend
	ring := slices.Clone(f.Season)
	j := 0
	for k := range dst {
		q := l + f.Phi*b
		s := 0.0
		if ring != nil {
			s = ring[j]
		}
		mu, pt := q+s, 0.0
		if f.MulSeason {
			mu = q * s
		}
		y := mu + eps[k]
		if f.MulError {
			y = mu * (1 + eps[k])
		}
		dst[k] = y
		if f.MulSeason && (q <= 0 || s <= 0) {
			// The path has left the positive region where the
			// multiplicative recursions are defined: hold its states.
			continue
		}
		pt = y - s
		if f.MulSeason {
			pt = y / s
		}
		d := pt - q
		l = q + f.Alpha*d
		b = f.Phi*b + f.Beta*d
		if ring != nil {
			if f.MulSeason {
				ring[j] = s + f.Gamma*(y/q-s)
			} else {
				ring[j] = s + f.Gamma*(y-q-s)
			}
			j = (j + 1) % len(ring)
		}
	}
}

// median returns the median of x, reordering it.
func median(x []float64) float64 {
	slices.Sort(x)
	n := len(x)
	if n%2 == 1 {
		return x[n/2]
	}
	return (x[n/2-1] + x[n/2]) / 2
}

// Path fills dst (h values) with the path driven by the innovations eps
// (h values). A median combination (Members) is driven by its members'
// own innovations only: use Simulate.
func (p *PathForm) Path(dst, eps []float64) {
	if p.Smoothing != nil {
		p.Smoothing.path(dst, eps)
		for k, v := range dst {
			dst[k] = p.back(v)
		}
		return
	}
	for k := range dst {
		var s float64
		for j := 0; j <= k; j++ {
			s += p.Psi[j] * eps[k-j]
		}
		if p.Scale != nil {
			s *= p.Scale[k]
		}
		dst[k] = p.back(p.Mean[k] + s)
	}
}

// maxBack keeps back-transformed paths finite.
const maxBack = 700

// back is the inverse Box–Cox transform (Box & Cox 1964): exp(z) for
// λ = 0, (λz + 1)^{1/λ} otherwise; where λz + 1 ≤ 0 has no inverse it
// gives 0 (the bottom of the transform's range for λ > 0).
func (p *PathForm) back(z float64) float64 {
	if !p.BoxCox {
		return z
	}
	l := p.Lambda
	if l == 0 {
		return math.Exp(math.Min(z, maxBack))
	}
	b := l*z + 1
	if b <= 0 {
		if l > 0 {
			return 0
		}
		return math.MaxFloat64
	}
	v := math.Pow(b, 1/l)
	if math.IsInf(v, 0) {
		return math.MaxFloat64
	}
	return v
}

// PsiFromARMA returns h ψ-weights of the model π(B)·y_t = θ(B)·ε_t with
// π(B) = 1 − Σ ar_i B^i and θ(B) = 1 + Σ ma_i B^i: ψ_0 = 1 and ψ_j = θ_j +
// Σ_{i=1..j} ar_i ψ_{j−i} (Box, Jenkins & Reinsel, §5.2.1; what R's
// ARMAtoMA computes). A non-stationary π (differencing multiplied in)
// is allowed: the weights then do not die out.
func PsiFromARMA(ar, ma []float64, h int) []float64 {
	psi := make([]float64, h)
	if h == 0 {
		return psi
	}
	psi[0] = 1
	for j := 1; j < h; j++ {
		var v float64
		if j <= len(ma) {
			v = ma[j-1]
		}
		for i := 1; i <= j && i <= len(ar); i++ {
			v += ar[i-1] * psi[j-i]
		}
		psi[j] = v
	}
	return psi
}

// TailSDs is how many standard deviations from the centre the checks of
// a forecast distribution's tails look (PathForm.Bounded, and the
// automatic choice's check of the Box–Cox pole): beyond 4σ lies less
// than 0.01% of a Gaussian's mass (common practice for a plausibility
// check).
const TailSDs = 4

// Bounded reports whether the form's paths stay within ±bound: for a
// linear form on a Box–Cox scale, whether back(z) is defined and within
// bound at z = Mean ± TailSDs standard deviations at every step (σ² the
// mean square of the innovations); for a combination, whether every
// member is. A negative λ puts a pole in the back-transform (y → ∞ as
// λz + 1 → 0), and a model whose own paths reach it has no usable upper
// tail there. Untransformed linear forms and recursions are bounded
// (their single values are only clamped).
func (p *PathForm) Bounded(bound float64) bool {
	for _, m := range p.Members {
		if !m.Bounded(bound) {
			return false
		}
	}
	if !p.BoxCox || p.Smoothing != nil || p.Members != nil {
		return true
	}
	var ss float64
	n := 0
	for _, v := range p.Innovations {
		if !math.IsNaN(v) {
			ss += v * v
			n++
		}
	}
	s2 := ss / float64(max(n, 1))
	var acc float64
	for k, psi := range p.Psi {
		acc += psi * psi
		sd := math.Sqrt(s2 * acc)
		if p.Scale != nil {
			sd *= math.Abs(p.Scale[k])
		}
		for _, z := range []float64{p.Mean[k] - TailSDs*sd, p.Mean[k] + TailSDs*sd} {
			if p.Lambda*z+1 <= 0 && p.Lambda != 0 {
				return false
			}
			if y := p.back(z); !(math.Abs(y) <= bound) {
				return false
			}
		}
	}
	return true
}
