package arima

import (
	"math"
	"testing"
)

// TestSeriesGAirline checks the airline model ARIMA(0,1,1)(0,1,1) m=12 on
// the log of Box & Jenkins' Series G (monthly airline passengers
// 1949–1960, R datasets::AirPassengers) against the estimates published in
// Box, Jenkins & Reinsel, Time Series Analysis: Forecasting and Control
// (airline model chapter): θ1 = −0.4018, Θ1 = −0.5569, σ² = 0.001348 and
// log-likelihood 244.70, which R 4.2.2 stats::arima also reproduces.
func TestSeriesGAirline(t *testing.T) {
	y := loadSeries(t, "airpass")
	spec, err := ParseSpec("log ARIMA(0,1,1)(0,1,1) m=12")
	if err != nil {
		t.Fatal(err)
	}
	f, err := FitOrder(y, spec, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if got := f.MA()[0]; math.Abs(got-(-0.4018)) > 0.001 {
		t.Errorf("θ1 = %.4f, want −0.4018", got)
	}
	if got := f.SMA()[0]; math.Abs(got-(-0.5569)) > 0.001 {
		t.Errorf("Θ1 = %.4f, want −0.5569", got)
	}
	if got := f.Sigma2(); math.Abs(got/0.001348-1) > 0.01 {
		t.Errorf("σ² = %.6f, want 0.001348", got)
	}
	if got := f.Criteria().LogLik; math.Abs(got-244.70) > 0.05 {
		t.Errorf("log-likelihood %.3f, want 244.70", got)
	}
	if got := f.Spec(); got != "log ARIMA(0,1,1)(0,1,1) m=12" {
		t.Errorf("spec %q", got)
	}
}
