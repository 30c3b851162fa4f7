package ets

import (
	"math"
	"testing"

	"trueup/models/arima"
)

// TestARIMAEquivalence checks the equivalences of HKOS ch. 11 (Table 11.1,
// from memory of the table) against the project's ARIMA family, fitted by
// exact maximum likelihood: with the ETS parameters mapped from the ARIMA
// estimates, both give the same point forecasts once the initial states
// have been forgotten (the series are long enough that (1−α)^T is
// negligible).
//
//	ETS(A,N,N)  ⇔ ARIMA(0,1,1): θ1 = α − 1
//	ETS(A,A,N)  ⇔ ARIMA(0,2,2): θ1 = α + β − 2, θ2 = 1 − α
//	ETS(A,Ad,N) ⇔ ARIMA(1,1,2): φ1 = φ, θ1 = α + φβ − 1 − φ, θ2 = (1 − α)φ
func TestARIMAEquivalence(t *testing.T) {
	cases := []struct {
		series string
		order  arima.Spec
		ets    string
	}{
		{"Nile", arima.Spec{P: 0, D: 1, Q: 1}, "A,N,N"},
		{"WWWusage", arima.Spec{P: 0, D: 2, Q: 2}, "A,A,N"},
		{"WWWusage", arima.Spec{P: 1, D: 1, Q: 2}, "A,Ad,N"},
	}
	for _, c := range cases {
		y := loadSeries(t, c.series)
		a, err := arima.FitOrder(y, c.order, arima.Options{})
		if err != nil {
			t.Fatalf("%s %v: %v", c.series, c.order, err)
		}
		sp, _ := ParseSpec(c.ets)
		th := a.MA()
		p := Params{Level: y[0], Phi: 1}
		switch c.ets {
		case "A,N,N":
			p.Alpha = 1 + th[0]
		case "A,A,N":
			p.Alpha = 1 - th[1]
			p.Beta = th[0] + 2 - p.Alpha
		case "A,Ad,N":
			p.Phi = a.AR()[0]
			p.Alpha = 1 - th[1]/p.Phi
			p.Beta = (th[0] + 1 + p.Phi - p.Alpha) / p.Phi
		}
		f, err := newFitted(y, sp, 1, p)
		if err != nil {
			t.Fatal(err)
		}
		const h = 10
		em, _ := f.Forecast(h)
		am, _ := a.Forecast(h)
		for i := 0; i < h; i++ {
			if math.Abs(em[i]-am[i]) > 1e-5*math.Abs(am[i]) {
				t.Errorf("%s %s vs %s h=%d: ETS %.6f ARIMA %.6f", c.series, sp, c.order, i+1, em[i], am[i])
			}
		}
	}
}
