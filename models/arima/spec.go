package arima

import (
	"fmt"
	"strconv"
	"strings"

	"trueup/inputerr"
)

// Spec is the form of a seasonal ARIMA model
//
//	φ(B)Φ(B^m)(1−B)^d(1−B^m)^D (y_t − x_tᵀβ) = θ(B)Θ(B^m) ε_t,
//
// with φ(B) = 1 − φ_1B − … − φ_pB^p, θ(B) = 1 + θ_1B + … + θ_qB^q and the
// seasonal polynomials Φ, Θ of orders P, Q in B^m. The regression x_tᵀβ
// holds the constant (a mean when d+D = 0, a drift slope times t when
// d+D = 1) and any Fourier pairs. y is log-transformed first when Log is
// set.
//
// Its spelling (String, ParseSpec) is our own:
//
//	ARIMA(0,1,1)(0,1,1) m=12
//	log ARIMA(0,1,1)(0,1,1) m=12
//	ARIMA(2,0,1) + mean
//	ARIMA(0,1,1) + drift
//	ARIMA(1,1,1) + 4 Fourier m=52
type Spec struct {
	P, D, Q    int // non-seasonal orders
	SP, SD, SQ int // seasonal orders (P, D, Q in the usual notation)
	// Period is the seasonal period m; 0 or 1 means non-seasonal.
	Period int
	// Constant adds a mean (d+D = 0) or a drift (d+D = 1); it is not
	// allowed with more differencing.
	Constant bool
	// Log fits the model to ln y (strictly positive series only).
	Log bool
	// Fourier is the number K of Fourier pairs cos(2πkt/m), sin(2πkt/m),
	// k = 1..K, used as regressors in place of seasonal ARMA terms for
	// long periods (dynamic harmonic regression).
	Fourier int
}

// seasonal reports whether the seasonal part is in use.
func (s Spec) seasonal() bool { return s.Period > 1 }

// nDiff is the total differencing d + D.
func (s Spec) nDiff() int { return s.D + s.SD }

// String spells the spec in trueup's own notation (see Spec).
func (s Spec) String() string {
	var b strings.Builder
	if s.Log {
		b.WriteString("log ")
	}
	fmt.Fprintf(&b, "ARIMA(%d,%d,%d)", s.P, s.D, s.Q)
	if s.seasonal() && (s.SP > 0 || s.SD > 0 || s.SQ > 0) {
		fmt.Fprintf(&b, "(%d,%d,%d)", s.SP, s.SD, s.SQ)
	}
	if s.Constant {
		if s.nDiff() == 0 {
			b.WriteString(" + mean")
		} else {
			b.WriteString(" + drift")
		}
	}
	if s.Fourier > 0 {
		fmt.Fprintf(&b, " + %d Fourier", s.Fourier)
	}
	if s.seasonal() && (s.SP > 0 || s.SD > 0 || s.SQ > 0 || s.Fourier > 0) {
		fmt.Fprintf(&b, " m=%d", s.Period)
	}
	return b.String()
}

// ParseSpec reads a spec written as String writes it. The seasonal triple,
// "m=", the "log" prefix and the "+ mean", "+ drift" (or "+ constant") and
// "+ K Fourier" suffixes are optional; spaces are free. Without "m=" the
// Period is 0 and the caller supplies it. Errors are input errors.
func ParseSpec(text string) (Spec, error) {
	var s Spec
	bad := func(why string) (Spec, error) {
		return Spec{}, inputerr.New("cannot read model %q: %s (write e.g. \"ARIMA(0,1,1)(0,1,1) m=12\")", text, why)
	}
	t := strings.TrimSpace(text)
	if rest, ok := cutPrefixFold(t, "log"); ok && strings.HasPrefix(strings.TrimSpace(rest), "ARIMA") {
		s.Log = true
		t = strings.TrimSpace(rest)
	}
	rest, ok := cutPrefixFold(t, "ARIMA")
	if !ok {
		return bad("it must start with ARIMA")
	}
	triple := func(r string) ([3]int, string, bool) {
		r = strings.TrimSpace(r)
		if !strings.HasPrefix(r, "(") {
			return [3]int{}, r, false
		}
		end := strings.IndexByte(r, ')')
		if end < 0 {
			return [3]int{}, r, false
		}
		parts := strings.Split(r[1:end], ",")
		if len(parts) != 3 {
			return [3]int{}, r, false
		}
		var o [3]int
		for i, p := range parts {
			v, err := strconv.Atoi(strings.TrimSpace(p))
			if err != nil || v < 0 {
				return [3]int{}, r, false
			}
			o[i] = v
		}
		return o, r[end+1:], true
	}
	o, rest, ok := triple(rest)
	if !ok {
		return bad("expected (p,d,q) with non-negative integers")
	}
	s.P, s.D, s.Q = o[0], o[1], o[2]
	if so, r2, ok := triple(rest); ok {
		s.SP, s.SD, s.SQ = so[0], so[1], so[2]
		rest = r2
	} else if strings.HasPrefix(strings.TrimSpace(rest), "(") {
		return bad("expected (P,D,Q) with non-negative integers")
	}
	toks := strings.Fields(strings.ReplaceAll(rest, "+", " + "))
	for i := 0; i < len(toks); i++ {
		tok := strings.ToLower(toks[i])
		switch {
		case tok == "+":
		case tok == "mean" || tok == "drift" || tok == "constant":
			s.Constant = true
		case strings.HasPrefix(tok, "m="):
			m, err := strconv.Atoi(tok[2:])
			if err != nil || m < 1 {
				return bad("m= needs a positive integer period")
			}
			s.Period = m
		case i+1 < len(toks) && strings.EqualFold(toks[i+1], "fourier"):
			k, err := strconv.Atoi(tok)
			if err != nil || k < 1 {
				return bad("Fourier needs a positive count")
			}
			s.Fourier = k
			i++
		default:
			return bad(fmt.Sprintf("unexpected %q", toks[i]))
		}
	}
	if s.D > 2 || s.SD > 1 {
		return bad("at most d=2 and D=1 are supported")
	}
	return s, nil
}

func cutPrefixFold(s, prefix string) (string, bool) {
	if len(s) >= len(prefix) && strings.EqualFold(s[:len(prefix)], prefix) {
		return s[len(prefix):], true
	}
	return s, false
}
