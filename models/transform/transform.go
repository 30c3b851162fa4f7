// Package transform fits any model family to a transformed series — none,
// log, or Box–Cox (Box & Cox 1964, "An analysis of transformations", JRSS
// B 26:211–252) with λ chosen by Guerrero's method (Guerrero 1993,
// "Time-series analysis supported by power transformations", Journal of
// Forecasting 12:37–48) — and back-transforms forecasts, intervals and
// residuals to the data scale.
//
// Zeros and negative values. The log needs y > 0 and Box–Cox with λ ≤ 0
// does too; Box–Cox with λ > 0 is defined at 0 (it maps 0 to −1/λ).
// Therefore: a series with a negative value is never transformed; a series
// with zeros is never logged, and its Box–Cox λ is searched in
// [ZeroLambdaMin, 2] so that zeros land at −1/λ ≥ −4 rather than far below
// the positive values (our choice, stated here); a requested log of such a
// series falls back to Box–Cox on that range. Every fallback is reported in
// the model's Warning. A back-transformed value below the transform's
// domain (λz + 1 ≤ 0 for λ > 0) is returned as 0, the smallest value the
// data scale allows.
package transform

import (
	"fmt"
	"math"

	"trueup/inputerr"
	"trueup/internal/numeric"
)

// Kind names a transform.
type Kind string

// The transforms.
const (
	None   Kind = "none"
	Log    Kind = "log"
	BoxCox Kind = "boxcox"
)

// ParseKind accepts "none", "log" or "boxcox" (also "box-cox").
func ParseKind(s string) (Kind, error) {
	switch s {
	case "", "none":
		return None, nil
	case "log":
		return Log, nil
	case "boxcox", "box-cox":
		return BoxCox, nil
	}
	return "", inputerr.New("unknown transform %q (want none, log or boxcox)", s)
}

// Lambda bounds of the Guerrero search (common practice).
const (
	LambdaMin     = -1.0
	LambdaMax     = 2.0
	ZeroLambdaMin = 0.25
)

// Transform is a fitted power transform z = (y^λ − 1)/λ, with λ = 0
// meaning z = ln y, and Identity meaning z = y.
type Transform struct {
	Identity bool
	Lambda   float64
}

// Apply writes the transformed y into dst (len(dst) == len(y)) and returns
// it. Values outside the domain are the caller's responsibility (Choose
// never picks a transform that cannot take the data).
func (t Transform) Apply(dst, y []float64) []float64 {
	for i, v := range y {
		dst[i] = t.forward(v)
	}
	return dst
}

func (t Transform) forward(v float64) float64 {
	switch {
	case t.Identity:
		return v
	case t.Lambda == 0:
		return math.Log(v)
	}
	return (math.Pow(v, t.Lambda) - 1) / t.Lambda
}

// Inverse maps z back to the data scale: y = (λz + 1)^{1/λ}, or e^z.
// Below the domain it returns 0; above the float range, MaxFloat64.
func (t Transform) Inverse(z float64) float64 {
	var y float64
	switch {
	case t.Identity:
		return z
	case t.Lambda == 0:
		y = math.Exp(z)
	default:
		base := t.Lambda*z + 1
		if base <= 0 {
			if t.Lambda > 0 {
				return 0
			}
			return math.MaxFloat64
		}
		y = math.Pow(base, 1/t.Lambda)
	}
	if math.IsInf(y, 1) || math.IsNaN(y) {
		return math.MaxFloat64
	}
	return y
}

// invertible reports whether z lies in the range the inverse maps back to
// a finite data value: λz + 1 > 0 for Box–Cox, e^z below the float range
// for the log.
func (t Transform) invertible(z float64) bool {
	switch {
	case math.IsNaN(z) || math.IsInf(z, 0):
		return false
	case t.Identity:
		return true
	case t.Lambda == 0:
		return z < math.Log(math.MaxFloat64)
	}
	base := t.Lambda*z + 1
	if base <= 0 {
		return false
	}
	y := math.Pow(base, 1/t.Lambda)
	return !math.IsInf(y, 0) && !math.IsNaN(y)
}

// derivInverse is dy/dz at z: (λz + 1)^{1/λ − 1}, or e^z.
func (t Transform) derivInverse(z float64) float64 {
	switch {
	case t.Identity:
		return 1
	case t.Lambda == 0:
		return math.Min(math.Exp(z), math.MaxFloat64)
	}
	base := t.Lambda*z + 1
	if base <= 0 {
		return 0
	}
	d := math.Pow(base, 1/t.Lambda-1)
	if math.IsInf(d, 1) || math.IsNaN(d) {
		return math.MaxFloat64
	}
	return d
}

// logJacobian is Σ ln|dz/dy| = (λ − 1)·Σ ln y over the data, which turns a
// log-likelihood of z into one of y.
func (t Transform) logJacobian(y []float64) float64 {
	if t.Identity {
		return 0
	}
	s := 0.0
	for _, v := range y {
		s += math.Log(v)
	}
	return (t.Lambda - 1) * s
}

// String describes the transform: "none", "log" or "Box-Cox(λ=0.123)".
func (t Transform) String() string {
	switch {
	case t.Identity:
		return "none"
	case t.Lambda == 0:
		return "log"
	}
	return fmt.Sprintf("Box-Cox(lambda=%.4g)", t.Lambda)
}

// Choose picks the transform of kind k for y with seasonal period m,
// applying the zero and sign rules of the package comment. The returned
// note explains any fallback.
func Choose(k Kind, y []float64, m int) (Transform, string) {
	lo := math.Inf(1)
	for _, v := range y {
		lo = math.Min(lo, v)
	}
	switch {
	case k == None || k == "":
		return Transform{Identity: true}, ""
	case lo < 0:
		return Transform{Identity: true}, fmt.Sprintf("%s transform not applied: the series has negative values", k)
	case k == Log && lo > 0:
		return Transform{Lambda: 0}, ""
	}
	minL, note := LambdaMin, ""
	if lo == 0 {
		minL = ZeroLambdaMin
		if k == Log {
			note = fmt.Sprintf("log not possible with zeros: Box-Cox with lambda in [%g, %g] used instead", ZeroLambdaMin, LambdaMax)
		}
	}
	lambda, ok := Guerrero(y, m, minL, LambdaMax)
	if !ok {
		return Transform{Identity: true}, joinNote(note, "Box-Cox not applied: too little data to choose lambda (need two full seasons with positive means)")
	}
	return Transform{Lambda: lambda}, note
}

func joinNote(a, b string) string {
	if a == "" {
		return b
	}
	return a + "; " + b
}

// Guerrero returns the λ in [lo, hi] that minimises the coefficient of
// variation of s_h / ȳ_h^{1−λ} over consecutive non-overlapping blocks h of
// length R (R = m, or 2 for non-seasonal data), where ȳ_h and s_h are the
// block means and standard deviations (Guerrero 1993, §3). Blocks are
// taken back from the end of the series; blocks with a non-positive mean
// are skipped. ok is false with fewer than two usable blocks. The search
// is a grid of step 0.05 refined by golden-section search around the best
// grid point (numeric.GridGolden).
func Guerrero(y []float64, m int, lo, hi float64) (float64, bool) {
	r := m
	if r < 2 {
		r = 2
	}
	var means, sds []float64
	for end := len(y); end-r >= 0; end -= r {
		b := y[end-r : end]
		mu := 0.0
		for _, v := range b {
			mu += v
		}
		mu /= float64(r)
		ss := 0.0
		for _, v := range b {
			ss += (v - mu) * (v - mu)
		}
		if mu > 0 {
			means = append(means, mu)
			sds = append(sds, math.Sqrt(ss/float64(r-1)))
		}
	}
	if len(means) < 2 {
		return 1, false
	}
	cv := func(lambda float64) float64 {
		var s, ss float64
		for i := range means {
			v := sds[i] / math.Pow(means[i], 1-lambda)
			s += v
			ss += v * v
		}
		n := float64(len(means))
		mean := s / n
		if mean == 0 {
			return math.Inf(1)
		}
		return math.Sqrt(math.Max(ss/n-mean*mean, 0)*n/(n-1)) / mean
	}
	return numeric.GridGolden(cv, lo, hi, 0.05), true
}
