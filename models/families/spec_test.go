package families

import (
	"math"
	"strings"
	"testing"

	"trueup/fixtures/reference"
	"trueup/inputerr"
	"trueup/models"
	"trueup/models/naive"
)

// TestResolveNames: each spec resolves to the family its name or its form
// says.
func TestResolveNames(t *testing.T) {
	for _, c := range []struct {
		spec Spec
		want string
	}{
		{Spec{}, Default},
		{Spec{Family: "arima"}, "arima"},
		{Spec{Form: "ARIMA(0,1,1)(0,1,1) m=12"}, "arima"},
		{Spec{Form: "log ARIMA(0,1,1)"}, "arima"},
		{Spec{Form: "ARIMA(1,1,0)", Constant: true, Transform: "boxcox"}, "arima"},
		{Spec{Form: "ets(m,ad,m)"}, "ets"},
		{Spec{Family: "ets", Transform: "log"}, "ets"},
		{Spec{Family: naive.SeasonalNaiveName, Transform: "boxcox"}, "seasonal-naive"},
		{Spec{Family: "drift"}, "drift"},
	} {
		f, err := c.spec.Resolve()
		if err != nil {
			t.Errorf("%+v: %v", c.spec, err)
			continue
		}
		if f.Name() != c.want {
			t.Errorf("%+v: family %q, want %q", c.spec, f.Name(), c.want)
		}
	}
}

// TestResolveErrors: every refusal is an input error naming the option at
// fault, in words that name no command-line flag.
func TestResolveErrors(t *testing.T) {
	for _, c := range []struct {
		spec   Spec
		option string
	}{
		{Spec{Family: "crystalball"}, "Family"},
		{Spec{Family: "arima", Form: "ETS(A,N,N)"}, "Family"},
		{Spec{Form: "ARIMA(0,1)"}, "Model"},
		{Spec{Form: "ARIMA(0,3,1)"}, "Model"},
		{Spec{Form: "ETS(A,N,M)"}, "Model"}, // excluded form
		{Spec{Form: "ETS(A,N,N)", Constant: true}, "Constant"},
		{Spec{Family: "arima", Constant: true}, "Constant"},
		{Spec{Constant: true}, "Constant"},
		{Spec{Transform: "sqrt"}, "Transform"},
		{Spec{Family: "auto", Transform: "log"}, "Transform"},
		{Spec{Form: "log ARIMA(0,1,1)", Transform: "boxcox"}, "Transform"},
	} {
		_, err := c.spec.Resolve()
		if !inputerr.Is(err) || inputerr.OptionOf(err) != c.option {
			t.Errorf("%+v: error %v (option %q), want an input error about %s", c.spec, err, inputerr.OptionOf(err), c.option)
			continue
		}
		if strings.Contains(err.Error(), "--") {
			t.Errorf("%+v: message names a flag: %v", c.spec, err)
		}
	}
}

// TestResolveAirline: the fixed airline form with a log transform, resolved
// from plain data, reproduces the published estimates for Series G (Box,
// Jenkins & Reinsel, Time Series Analysis: Forecasting and Control, airline
// model chapter: θ1 = −0.4018, Θ1 = −0.5569, log-likelihood 244.70 on the
// log scale; R 4.2.2 stats::arima reproduces them).
func TestResolveAirline(t *testing.T) {
	y, err := reference.Series("arima/airpass.csv")
	if err != nil {
		t.Fatal(err)
	}
	fam, err := Spec{Form: "ARIMA(0,1,1)(0,1,1)", Transform: "log"}.Resolve()
	if err != nil {
		t.Fatal(err)
	}
	m, err := fam.Fit(y, models.FitOptions{Period: 12, Horizon: 12})
	if err != nil {
		t.Fatal(err)
	}
	if m.Spec() != "log ARIMA(0,1,1)(0,1,1) m=12" {
		t.Errorf("spec %q", m.Spec())
	}
	est := map[string]float64{}
	for _, e := range m.Params()["estimates"].([]models.Estimate) {
		est[e.Name] = e.Value
	}
	if math.Abs(est["θ1"]+0.4018) > 0.001 || math.Abs(est["Θ1"]+0.5569) > 0.001 || len(est) != 2 {
		t.Errorf("estimates %v", est)
	}
	if ll := m.Criteria().LogLik; math.Abs(ll-244.70) > 0.05 {
		t.Errorf("log-likelihood %v", ll)
	}
}
