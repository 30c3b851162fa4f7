package models

import "math"

// PathForm is a fitted model's future written as a function of its
// innovations, so that future sample paths can be simulated from any
// innovations, in particular from the model's own in-sample residuals
// (a bootstrap). A path over steps k = 0..h−1 is
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
	// BoxCox, when not nil, is the λ of the Box–Cox transform z is on
	// (0: the log).
	BoxCox *float64
}

// Simulator is implemented by fitted models whose future can be
// simulated from given innovations. PathForm returns nil when the fitted
// form has no linear innovations form (multiplicative errors, say).
type Simulator interface {
	PathForm(h int) *PathForm
}

// Path fills dst (h values) with the path driven by the innovations eps
// (h values).
func (p *PathForm) Path(dst, eps []float64) {
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
	if p.BoxCox == nil {
		return z
	}
	l := *p.BoxCox
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
