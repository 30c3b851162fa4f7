package arima

import (
	"testing"

	"trueup/inputerr"
)

func TestParseSpecRoundTrip(t *testing.T) {
	for _, text := range []string{
		"ARIMA(0,1,1)(0,1,1) m=12",
		"log ARIMA(0,1,1)(0,1,1) m=12",
		"ARIMA(2,0,1) + mean",
		"ARIMA(0,1,1) + drift",
		"ARIMA(1,1,1) + 4 Fourier m=52",
		"ARIMA(1,0,0)(2,0,0) + mean m=12",
	} {
		s, err := ParseSpec(text)
		if err != nil {
			t.Fatalf("%q: %v", text, err)
		}
		if got := s.String(); got != text {
			t.Errorf("%q printed back as %q", text, got)
		}
	}
	s, err := ParseSpec(" arima( 0, 1 ,1 )(0,1,1) ")
	if err != nil || s.Q != 1 || s.D != 1 || s.SD != 1 || s.SQ != 1 || s.Period != 0 {
		t.Errorf("loose spelling: %+v, %v", s, err)
	}
}

func TestParseSpecErrors(t *testing.T) {
	for _, text := range []string{"", "ARMA(1,1)", "ARIMA(1,1)", "ARIMA(1,-1,0)", "ARIMA(0,1,1)(0,1)",
		"ARIMA(0,1,1) m=x", "ARIMA(0,3,1)", "ARIMA(0,1,1) + trend"} {
		if _, err := ParseSpec(text); err == nil || !inputerr.Is(err) {
			t.Errorf("%q: got %v, want an input error", text, err)
		}
	}
}

func TestSeasonalTermsNeedPeriod(t *testing.T) {
	y := loadSeries(t, "lh")
	if _, err := FitOrder(y, Spec{Q: 1, SQ: 1, Period: 1}, Options{}); err == nil || !inputerr.Is(err) {
		t.Errorf("seasonal MA without period: %v", err)
	}
}

func TestXRegErrors(t *testing.T) {
	y := loadSeries(t, "nile")
	n := len(y)
	ones := make([]float64, n)
	for i := range ones {
		ones[i] = 1
	}
	for name, opt := range map[string]Options{
		"short column":   {XReg: [][]float64{ones[:n-1]}},
		"constant after": {XReg: [][]float64{ones}},
		"future columns": {XReg: [][]float64{ones}, XRegFuture: [][]float64{{1}, {2}}},
	} {
		spec := Spec{Q: 1, D: 1}
		if _, err := FitOrder(y, spec, opt); err == nil || !inputerr.Is(err) {
			t.Errorf("%s: got %v, want an input error", name, err)
		}
	}
}
