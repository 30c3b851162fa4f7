package arima

import (
	"math"
	"testing"

	"trueup/inputerr"
	"trueup/models"
)

// TestAutoAirline: on log Series G the automatic search should take one
// regular and one seasonal difference (the differencing Box, Jenkins &
// Reinsel use for this series) and find a model at least as good by AICc
// as the airline model they fit.
func TestAutoAirline(t *testing.T) {
	y := loadSeries(t, "airpass")
	f, err := Auto(y, AutoOptions{Period: 12, Log: true})
	if err != nil {
		t.Fatal(err)
	}
	s := f.Form()
	if s.D != 1 || s.SD != 1 {
		t.Fatalf("chose %s, want d=1, D=1", f.Spec())
	}
	air, err := FitOrder(y, Spec{Q: 1, D: 1, SQ: 1, SD: 1, Period: 12, Log: true}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	if f.Criteria().AICc > air.Criteria().AICc+1e-6 {
		t.Errorf("chose %s with AICc %.3f, worse than the airline model's %.3f", f.Spec(), f.Criteria().AICc, air.Criteria().AICc)
	}
	t.Logf("chose %s AICc %.3f (airline %.3f)", f.Spec(), f.Criteria().AICc, air.Criteria().AICc)
}

// TestAutoNonSeasonal: the Nile flows (R datasets::Nile) are not
// stationary by KPSS (statistic 0.97 > 0.463, see kpss.json), so d = 1.
func TestAutoNonSeasonal(t *testing.T) {
	f, err := Auto(loadSeries(t, "nile"), AutoOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if f.Form().D != 1 || f.Form().Period > 1 {
		t.Errorf("chose %s, want d=1, non-seasonal", f.Spec())
	}
	// lh is stationary by KPSS (0.29 < 0.463): d = 0, with a mean.
	g, err := Auto(loadSeries(t, "lh"), AutoOptions{})
	if err != nil {
		t.Fatal(err)
	}
	if g.Form().D != 0 || !g.Form().Constant {
		t.Errorf("lh: chose %s, want d=0 with a mean", g.Spec())
	}
}

func checkFinite(t *testing.T, m models.Model, h int) {
	t.Helper()
	mean, v := m.Forecast(h)
	for i := range mean {
		if math.IsNaN(mean[i]) || math.IsInf(mean[i], 0) || math.IsNaN(v[i]) || math.IsInf(v[i], 0) || v[i] < 0 {
			t.Fatalf("%s: forecast %d: mean %v var %v", m.Spec(), i+1, mean[i], v[i])
		}
	}
	res := m.Residuals()
	if len(res) != m.NObs() {
		t.Fatalf("%s: %d residuals for %d observations", m.Spec(), len(res), m.NObs())
	}
	// NaN only for the first d+mD observations, which have no one-step
	// prediction.
	nd := 0
	if f, ok := m.(*Fitted); ok {
		nd = len(f.delta)
	}
	for i, r := range res {
		if (i >= nd && math.IsNaN(r)) || math.IsInf(r, 0) || (i < nd && !math.IsNaN(r)) {
			t.Fatalf("%s: residual %d is %v", m.Spec(), i+1, r)
		}
	}
	c := m.Criteria()
	for _, x := range []float64{c.LogLik, c.AIC, c.BIC, m.Sigma2()} {
		if math.IsNaN(x) {
			t.Fatalf("%s: NaN criterion", m.Spec())
		}
	}
}

// TestAutoRobust feeds the awkward series of the robustness list: no
// panic, no NaN, a warning where a fallback was taken.
func TestAutoRobust(t *testing.T) {
	ramp := make([]float64, 40)
	for i := range ramp {
		ramp[i] = float64(i)
	}
	walk := make([]float64, 60)
	x := 0.0
	for i := range walk { // deterministic near-unit-root path
		x = 0.999*x + math.Sin(float64(i)*1.7)
		walk[i] = x
	}
	cases := map[string]struct {
		y      []float64
		period int
		warn   bool
	}{
		"constant":      {[]float64{5, 5, 5, 5, 5, 5, 5, 5}, 4, true},
		"all zero":      {make([]float64, 30), 12, true},
		"short":         {[]float64{1, 3, 2, 5, 4, 6, 5, 8, 7, 9}, 12, true},
		"single":        {[]float64{3}, 1, true},
		"two values":    {[]float64{2, 1}, 12, true},
		"ramp":          {ramp, 1, false},
		"near unit":     {walk, 1, false},
		"negative":      {[]float64{-3, 2, -1, 4, -2, 5, -3, 6, -1, 3, -2, 4, -4, 2, -1, 5}, 4, false},
		"two seasons":   {[]float64{1, 5, 2, 8, 1.5, 5.5, 2.2, 8.1}, 4, false},
		"spike of zero": {[]float64{0, 0, 0, 0, 0, 0, 0, 10, 0, 0, 0, 0, 0, 0}, 1, false},
	}
	for name, c := range cases {
		t.Run(name, func(t *testing.T) {
			m, err := Family{}.Fit(c.y, models.FitOptions{Period: c.period})
			if err != nil {
				t.Fatalf("error: %v", err)
			}
			checkFinite(t, m, 8)
			if c.warn && m.Warning() == "" {
				t.Errorf("%s: expected a warning", m.Spec())
			}
			t.Logf("%s: %s", m.Spec(), m.Warning())
		})
	}
}

// TestLogForecastMoments: with the log transform the response-scale mean
// is the lognormal mean, above the back-transformed median, and the
// Interval is the exponential of the log-scale interval.
func TestLogForecastMoments(t *testing.T) {
	y := loadSeries(t, "airpass")
	f, err := FitOrder(y, Spec{Q: 1, D: 1, SQ: 1, SD: 1, Period: 12, Log: true}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	mu, v := f.forecastTransformed(12, nil, false)
	mean, _ := f.Forecast(12)
	lo, hi := f.Interval(12, 0.95)
	for k := range mu {
		if math.Abs(mean[k]-math.Exp(mu[k]+v[k]/2)) > 1e-9*mean[k] {
			t.Fatalf("h=%d: mean %v", k+1, mean[k])
		}
		if math.Abs(lo[k]-math.Exp(mu[k]-1.959963984540054*math.Sqrt(v[k]))) > 1e-9*lo[k] || !(hi[k] > mean[k]) {
			t.Fatalf("h=%d: interval [%v, %v]", k+1, lo[k], hi[k])
		}
	}
	// Residuals on the response scale: NaN for the first d+mD = 13 values,
	// then y_t minus the back-transformed one-step prediction.
	r := f.Residuals()
	if !math.IsNaN(r[0]) || !math.IsNaN(r[12]) || math.IsNaN(r[13]) {
		t.Fatalf("residuals %v", r[:15])
	}
}

// TestAutoFourier: periods above 24 use Fourier pairs, never seasonal ARMA
// terms. nottem (R datasets, monthly) is fed with a pretended period of 36
// only to take that path; the check is on the form and finiteness.
func TestAutoFourier(t *testing.T) {
	y := loadSeries(t, "nottem")
	f, err := Auto(y, AutoOptions{Period: 36})
	if err != nil {
		t.Fatal(err)
	}
	s := f.Form()
	if s.SP != 0 || s.SQ != 0 || s.SD != 0 || s.Fourier < 1 {
		t.Errorf("chose %s, want Fourier terms only", f.Spec())
	}
	checkFinite(t, f, 40)
}

// TestFitOrderAwkward: fixed orders that are hard to estimate — AR and MA
// roots that cancel on white-noise-like data, over-differencing, a model
// too large for the series — give a finite fit or an input error, never a
// panic or NaN.
func TestFitOrderAwkward(t *testing.T) {
	lh := loadSeries(t, "lh")
	nile := loadSeries(t, "nile")
	cases := []struct {
		y    []float64
		spec Spec
	}{
		{lh, Spec{P: 2, Q: 2, Constant: true}},
		{lh, Spec{P: 1, Q: 1, D: 2}},
		{nile, Spec{P: 3, Q: 3, D: 1, Constant: true}},
		{lh[:10], Spec{P: 2, Q: 2, SP: 1, SD: 1, SQ: 1, Period: 4}},
		{[]float64{1, 2}, Spec{P: 1}},
	}
	for _, c := range cases {
		f, err := FitOrder(c.y, c.spec, Options{})
		if err != nil {
			t.Logf("%s: %v", c.spec, err)
			if !inputerr.Is(err) {
				t.Errorf("%s: non-input error %v", c.spec, err)
			}
			continue
		}
		checkFinite(t, f, 12)
	}
}

// TestResidualsAreOneStepErrors: for an AR(1) with mean the one-step
// prediction of y_t is μ + φ(y_{t−1} − μ) for t ≥ 2 (Box, Jenkins &
// Reinsel, AR(1) forecast function), so the residuals must be exactly
// those errors at the fitted μ, φ.
func TestResidualsAreOneStepErrors(t *testing.T) {
	y := loadSeries(t, "lh")
	f, err := FitOrder(y, Spec{P: 1, Constant: true}, Options{})
	if err != nil {
		t.Fatal(err)
	}
	mu, _ := f.Intercept()
	phi := f.AR()[0]
	r := f.Residuals()
	for i := 1; i < len(y); i++ {
		want := y[i] - (mu + phi*(y[i-1]-mu))
		if math.Abs(r[i]-want) > 1e-9 {
			t.Fatalf("t=%d: residual %v, want %v", i+1, r[i], want)
		}
	}
	// The first has the stationary mean as its prediction.
	if math.Abs(r[0]-(y[0]-mu)) > 1e-9 {
		t.Fatalf("t=1: residual %v, want %v", r[0], y[0]-mu)
	}
}

// TestAutoSeasonalDifferencing: strongly seasonal quarterly and monthly
// series from R's datasets (UKgas on the log scale, co2 1990–1997) have an
// STL seasonal strength above 0.64, so one seasonal difference is taken.
func TestAutoSeasonalDifferencing(t *testing.T) {
	for _, c := range []struct {
		series string
		m      int
		log    bool
	}{{"ukgas", 4, true}, {"co2w", 12, false}} {
		f, err := Auto(loadSeries(t, c.series), AutoOptions{Period: c.m, Log: c.log})
		if err != nil {
			t.Fatal(err)
		}
		if f.Form().SD != 1 {
			t.Errorf("%s: chose %s, want D=1", c.series, f.Spec())
		}
	}
}

// TestAutoDeterministic: the same input gives bit-identical output.
func TestAutoDeterministic(t *testing.T) {
	y := loadSeries(t, "usaccdeaths")
	a, err := Auto(y, AutoOptions{Period: 12})
	if err != nil {
		t.Fatal(err)
	}
	b, err := Auto(y, AutoOptions{Period: 12})
	if err != nil {
		t.Fatal(err)
	}
	ma, va := a.Forecast(24)
	mb, vb := b.Forecast(24)
	if a.Spec() != b.Spec() {
		t.Fatalf("%s vs %s", a.Spec(), b.Spec())
	}
	for i := range ma {
		if ma[i] != mb[i] || va[i] != vb[i] {
			t.Fatalf("step %d differs", i+1)
		}
	}
}
