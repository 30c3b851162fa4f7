package choose

import (
	"encoding/json"
	"math"
	"strings"
	"testing"
	"trueup/fixtures/reference"

	"trueup/models"
	"trueup/models/arima"
	"trueup/models/ets"
	"trueup/models/naive"
)

// series reads one R dataset (R 4.2.2 datasets package) committed with
// provenance under fixtures/reference/ets/data.
func series(t testing.TB, name string) []float64 {
	t.Helper()
	y, err := reference.Series("ets/data/" + name + ".csv")
	if err != nil {
		t.Fatal(err)
	}
	return y
}

func newAuto() *Family {
	return New(arima.Family{}, ets.Family{}, naive.SeasonalNaive{}, naive.Drift{}, Options{})
}

// TestMASEWorkedExample: MASE by hand (Hyndman & Koehler 2006, eq. for
// the scaled error with a seasonal naive denominator). Training
// 1,2,3,4,3,4,5,6 with m = 4: seasonal differences 2,2,2,2, scale 2.
// Forecasts 7,7 against 8,5: errors 1,2, MAE 1.5, MASE 0.75.
func TestMASEWorkedExample(t *testing.T) {
	train := []float64{1, 2, 3, 4, 3, 4, 5, 6}
	if s := maseScale(train, 4); s != 2 {
		t.Fatalf("scale %g, want 2", s)
	}
	if s := maseScale([]float64{3, 3, 3, 3, 3, 3}, 2); s != 1 {
		t.Errorf("constant series scale %g, want 1", s)
	}
	mod := constModel{7}
	if got := mase(mod, []float64{8, 5}, 2); got != 0.75 {
		t.Errorf("MASE %g, want 0.75", got)
	}
}

// constModel forecasts a constant with unit variance.
type constModel struct{ c float64 }

func (constModel) Family() string         { return "const" }
func (constModel) Spec() string           { return "const" }
func (constModel) Params() map[string]any { return nil }
func (m constModel) Forecast(h int) ([]float64, []float64) {
	a, b := make([]float64, h), make([]float64, h)
	for i := range a {
		a[i], b[i] = m.c, 1
	}
	return a, b
}
func (constModel) Residuals() []float64      { return []float64{1, -1, 1, -1} }
func (constModel) Sigma2() float64           { return 1 }
func (constModel) Criteria() models.Criteria { return models.NewCriteria(-1, 1, 4) }
func (constModel) NObs() int                 { return 4 }
func (constModel) Warning() string           { return "" }

func TestAutoOnAirPassengers(t *testing.T) {
	y := series(t, "AirPassengers")
	fam := newAuto()
	if fam.Name() != "auto" {
		t.Fatal(fam.Name())
	}
	opt := models.FitOptions{Period: 12, Horizon: 12}
	m, err := fam.Fit(y, opt)
	if err != nil {
		t.Fatal(err)
	}
	f := m.(*Fitted)
	sc := f.Scores()
	if len(sc) != 5 {
		t.Fatalf("%d candidates, want 5", len(sc))
	}
	names := map[string]bool{}
	for _, s := range sc {
		names[s.Family] = true
		if s.MASE < sc[f.winner].MASE {
			t.Errorf("%s scored %g below the winner %s %g", s.Family, s.MASE, sc[f.winner].Family, sc[f.winner].MASE)
		}
		if math.IsInf(s.MASE, 1) {
			t.Errorf("%s failed: %s", s.Family, s.Err)
		}
	}
	for _, n := range []string{"seasonal-naive", "drift", "ets", "arima", "arima+ets"} {
		if !names[n] {
			t.Errorf("candidate %s missing", n)
		}
	}
	// The returned model is the winner refitted on all the data.
	direct, err := fam.fitCandidate(f.winner, y, opt)
	if err != nil {
		t.Fatal(err)
	}
	a, _ := f.Forecast(12)
	b, _ := direct.Forecast(12)
	for i := range a {
		if a[i] != b[i] {
			t.Fatalf("forecast %d: %g vs refit %g", i, a[i], b[i])
		}
	}
	if f.NObs() != len(y) {
		t.Errorf("NObs %d", f.NObs())
	}
	p := f.Params()
	if _, err := json.Marshal(p); err != nil {
		t.Errorf("params not JSON: %v", err)
	}
	choice := p["choice"].(map[string]any)
	if choice["winner"] != f.Family() || !strings.Contains(choice["reason"].(string), sc[f.winner].Family) {
		t.Errorf("winner %v reason %v", choice["winner"], choice["reason"])
	}
	lo, hi := f.Interval(12, 0.9)
	for i := range a {
		if !(lo[i] < a[i] && a[i] < hi[i]) {
			t.Errorf("interval %d [%g, %g] around %g", i, lo[i], hi[i], a[i])
		}
	}
	t.Log(f.Reason())
}

func TestShortSeries(t *testing.T) {
	y := series(t, "USAccDeaths")[:45]
	m, err := newAuto().Fit(y, models.FitOptions{Period: 12, Horizon: 12})
	if err != nil {
		t.Fatal(err)
	}
	f := m.(*Fitted)
	if f.origins < 1 || f.horizon < 1 || !strings.Contains(f.Warning(), "validation shortened") {
		t.Errorf("origins %d horizon %d warning %q", f.origins, f.horizon, f.Warning())
	}
	m, err = newAuto().Fit(y[:12], models.FitOptions{Period: 12, Horizon: 12})
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(m.Warning(), "without validation") {
		t.Errorf("12 observations: warning %q", m.Warning())
	}
	for _, tiny := range [][]float64{{}, {1}, {2, 2, 2}} {
		m, err := newAuto().Fit(tiny, models.FitOptions{Period: 12, Horizon: 12})
		if err != nil {
			continue
		}
		mean, v := m.Forecast(12)
		for i := range mean {
			if math.IsNaN(mean[i]) || math.IsNaN(v[i]) {
				t.Errorf("%v: NaN forecast", tiny)
			}
		}
	}
}

// TestCombination: the average of two models' forecasts, with variance
// (v_A + v_B + 2ρ√(v_A v_B))/4 and averaged residuals.
func TestCombination(t *testing.T) {
	y := series(t, "USAccDeaths")
	opt := models.FitOptions{Period: 12, Horizon: 6}
	a, err := arima.Family{}.Fit(y, opt)
	if err != nil {
		t.Fatal(err)
	}
	b, err := ets.Family{}.Fit(y, opt)
	if err != nil {
		t.Fatal(err)
	}
	c := Combine(a, b)
	ma, va := a.Forecast(6)
	mb, vb := b.Forecast(6)
	mc, vc := c.Forecast(6)
	if c.rho <= 0 || c.rho > 1 {
		t.Errorf("residual correlation %g", c.rho)
	}
	for i := range mc {
		if math.Abs(mc[i]-(ma[i]+mb[i])/2) > 1e-9*mc[i] {
			t.Errorf("mean %d", i)
		}
		lo, hi := math.Min(va[i], vb[i])/4, math.Pow((math.Sqrt(va[i])+math.Sqrt(vb[i]))/2, 2)
		if vc[i] < lo || vc[i] > hi {
			t.Errorf("variance %d: %g outside [%g, %g]", i, vc[i], lo, hi)
		}
	}
	ra, rb, rc := a.Residuals(), b.Residuals(), c.Residuals()
	for i := range rc {
		if !math.IsNaN(rc[i]) && math.Abs(rc[i]-(ra[i]+rb[i])/2) > 1e-9 {
			t.Fatalf("residual %d", i)
		}
	}
	if c.Family() != "arima+ets" {
		t.Error(c.Family())
	}
}

func TestDeterministic(t *testing.T) {
	y := series(t, "UKgas")
	opt := models.FitOptions{Period: 4, Horizon: 8}
	m1, err := newAuto().Fit(y, opt)
	if err != nil {
		t.Fatal(err)
	}
	m2, _ := newAuto().Fit(y, opt)
	a, _ := m1.Forecast(8)
	b, _ := m2.Forecast(8)
	for i := range a {
		if a[i] != b[i] {
			t.Fatal("not deterministic")
		}
	}
	if m1.(*Fitted).Reason() != m2.(*Fitted).Reason() {
		t.Fatal("reasons differ")
	}
}
