// Package ets fits exponential smoothing state-space models in the
// error-trend-seasonal taxonomy of Hyndman, Koehler, Snyder & Grose (2002,
// "A state space framework for automatic forecasting using exponential
// smoothing methods", International Journal of Forecasting 18:439–454) and
// Hyndman, Koehler, Ord & Snyder (2008, Forecasting with Exponential
// Smoothing: The State Space Approach, Springer; cited below as HKOS).
//
// Error is additive (A) or multiplicative (M); trend none (N), additive (A)
// or additive damped (Ad); seasonality none (N), additive (A) or
// multiplicative (M). Parameters and initial states are estimated by
// maximum likelihood (FitSpec); Family chooses the form by AICc.
//
// Excluded combinations: additive error with multiplicative seasonality,
// ETS(A,N,M), ETS(A,A,M) and ETS(A,Ad,M). Their one-step error divides by a
// seasonal state that additive errors can push towards zero, so the
// likelihood surface and the forecast distribution become unstable (HKOS
// §2.5.3 and §15.1). Multiplicative trends are outside the taxonomy used
// here for the same reason of explosive long-horizon forecasts.
package ets

import (
	"fmt"
	"strings"

	"trueup/inputerr"
)

// Component kinds of a Spec.
const (
	None  = 'N' // no trend or no seasonality
	Add   = 'A' // additive
	Mul   = 'M' // multiplicative
	Dampd = 'D' // additive damped trend, written "Ad"
)

// Spec is one ETS form: Error ∈ {A, M}, Trend ∈ {N, A, D (=Ad)},
// Season ∈ {N, A, M}.
type Spec struct {
	Error, Trend, Season byte
}

// String writes the published notation, such as "ETS(M,Ad,M)".
func (s Spec) String() string {
	t := string(s.Trend)
	if s.Trend == Dampd {
		t = "Ad"
	}
	return fmt.Sprintf("ETS(%c,%s,%c)", s.Error, t, s.Season)
}

// HasTrend reports an additive (possibly damped) trend.
func (s Spec) HasTrend() bool { return s.Trend != None }

// Damped reports a damped trend.
func (s Spec) Damped() bool { return s.Trend == Dampd }

// Seasonal reports a seasonal component.
func (s Spec) Seasonal() bool { return s.Season != None }

// Multiplicative reports whether any component is multiplicative, which
// requires strictly positive data.
func (s Spec) Multiplicative() bool { return s.Error == Mul || s.Season == Mul }

// Valid returns an error for unknown letters and for the excluded
// combinations (additive error with multiplicative seasonality).
func (s Spec) Valid() error {
	if s.Error != Add && s.Error != Mul {
		return inputerr.New("ETS error must be A or M, got %q", string(s.Error))
	}
	if s.Trend != None && s.Trend != Add && s.Trend != Dampd {
		return inputerr.New("ETS trend must be N, A or Ad, got %q", string(s.Trend))
	}
	if s.Season != None && s.Season != Add && s.Season != Mul {
		return inputerr.New("ETS seasonality must be N, A or M, got %q", string(s.Season))
	}
	if s.Error == Add && s.Season == Mul {
		return inputerr.New("%s is excluded: additive errors with multiplicative seasonality are numerically unstable; use ETS(M,%s,M)", s, trendName(s.Trend))
	}
	return nil
}

func trendName(t byte) string {
	if t == Dampd {
		return "Ad"
	}
	return string(t)
}

// ParseSpec reads the published notation "ETS(E,T,S)", for example
// "ETS(M,Ad,M)"; the "ETS" prefix and parentheses are optional, letters
// are case-insensitive ("a,ad,n" works).
func ParseSpec(text string) (Spec, error) {
	t := strings.ToUpper(strings.TrimSpace(text))
	t = strings.TrimPrefix(t, "ETS")
	t = strings.TrimSpace(t)
	t = strings.TrimPrefix(t, "(")
	t = strings.TrimSuffix(t, ")")
	parts := strings.Split(t, ",")
	if len(parts) != 3 {
		return Spec{}, inputerr.New("ETS spec %q: want three components like ETS(M,Ad,M)", text)
	}
	for i := range parts {
		parts[i] = strings.TrimSpace(parts[i])
	}
	var s Spec
	if len(parts[0]) != 1 || len(parts[2]) != 1 {
		return Spec{}, inputerr.New("ETS spec %q: error and seasonality are single letters", text)
	}
	s.Error, s.Season = parts[0][0], parts[2][0]
	switch parts[1] {
	case "N":
		s.Trend = None
	case "A":
		s.Trend = Add
	case "AD":
		s.Trend = Dampd
	default:
		return Spec{}, inputerr.New("ETS spec %q: trend must be N, A or Ad", text)
	}
	if err := s.Valid(); err != nil {
		return Spec{}, fmt.Errorf("ETS spec %q: %w", text, err)
	}
	return s, nil
}

// AllSpecs lists the 15 admissible forms in a fixed order (simplest first),
// which makes the automatic choice deterministic on ties.
func AllSpecs() []Spec {
	var out []Spec
	for _, e := range []byte{Add, Mul} {
		for _, se := range []byte{None, Add, Mul} {
			for _, tr := range []byte{None, Add, Dampd} {
				s := Spec{e, tr, se}
				if s.Valid() == nil {
					out = append(out, s)
				}
			}
		}
	}
	return out
}
