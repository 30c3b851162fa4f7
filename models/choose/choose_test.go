package choose

import (
	"encoding/json"
	"gonum.org/v1/gonum/stat"
	"math"
	"strings"
	"testing"
	"trueup/fixtures/reference"

	"trueup/models"
	"trueup/models/arima"
	"trueup/models/ets"
	"trueup/models/naive"
	"trueup/models/transform"
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

func newAuto() *Family { return Standard(Options{}) }

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
	if got := mase([]float64{7, 7}, []float64{8, 5}, 2); got != 0.75 {
		t.Errorf("MASE %g, want 0.75", got)
	}
}

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
	if len(sc) != 6 {
		t.Fatalf("%d candidates, want 6", len(sc))
	}
	names := map[string]bool{}
	for _, s := range sc {
		names[s.Family] = true
		if s.MASE < (1-0.1)*sc[f.winner].MASE {
			t.Errorf("%s scored %g, more than the margin below the winner %s %g", s.Family, s.MASE, sc[f.winner].Family, sc[f.winner].MASE)
		}
		if math.IsInf(s.MASE, 1) && s.Family != "drift" {
			t.Errorf("%s failed: %s", s.Family, s.Err)
		}
	}
	// AirPassengers is strongly seasonal: drift is not offered.
	if d := sc[1]; d.Family != "drift" || !strings.HasPrefix(d.Err, "not offered") {
		t.Errorf("drift on a seasonal series: %+v", d)
	}
	for _, n := range []string{"seasonal-naive", "drift", "theta", "ets", "arima", "theta+ets+arima"} {
		if !names[n] {
			t.Errorf("candidate %s missing", n)
		}
	}
	// The model used is the model validated: same form and transform.
	if f.Spec() != sc[f.winner].Spec {
		t.Errorf("refitted %q, validated %q", f.Spec(), sc[f.winner].Spec)
	}
	a, _ := f.Forecast(12)
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
	if _, err := newAuto().Fit(nil, models.FitOptions{Period: 12, Horizon: 12}); err == nil {
		t.Error("empty series accepted")
	}
}

// TestShortSeasonalSeriesKeepsTheSeason: a strongly seasonal series too
// short to validate (30 months of R's USAccDeaths, under three seasons)
// gets seasonal naive in its fallback median, so its forecast keeps the
// seasonal pattern; a short series without strong seasonality (12 quarters
// of R's austres, a smooth trend) does not.
func TestShortSeasonalSeriesKeepsTheSeason(t *testing.T) {
	y := series(t, "USAccDeaths")[:30]
	m, err := newAuto().Fit(y, models.FitOptions{Period: 12, Horizon: 12})
	if err != nil {
		t.Fatal(err)
	}
	if !strings.Contains(m.Family(), "seasonal-naive") || !strings.Contains(m.Warning(), "without validation") {
		t.Fatalf("family %q, warning %q", m.Family(), m.Warning())
	}
	// The forecast follows last year's pattern: correlation with the last
	// 12 observations above 0.9.
	fc, _ := m.Forecast(12)
	if r := stat.Correlation(fc, y[18:], nil); r < 0.9 {
		t.Errorf("forecast correlates %.2f with the last season; want > 0.9", r)
	}
	q := series(t, "austres")[:12]
	m, err = newAuto().Fit(q, models.FitOptions{Period: 4, Horizon: 4})
	if err != nil {
		t.Fatal(err)
	}
	if strings.Contains(m.Family(), "seasonal-naive") {
		t.Errorf("a trending series without strong seasonality got %q", m.Family())
	}
}

// TestCombination: the median of three models' forecasts, the equal-weight
// mixture's mean squared error about it, and the median of the residuals.
func TestCombination(t *testing.T) {
	y := series(t, "USAccDeaths")
	opt := models.FitOptions{Period: 12, Horizon: 6}
	var parts []models.Model
	for _, fam := range []models.Family{arima.Family{}, ets.Family{}, naive.SeasonalNaive{}} {
		m, err := fam.Fit(y, opt)
		if err != nil {
			t.Fatal(err)
		}
		parts = append(parts, m)
	}
	c := Median(parts...)
	mc, vc := c.Forecast(6)
	med := func(a, b, c float64) float64 { return math.Max(math.Min(a, b), math.Min(math.Max(a, b), c)) }
	var ms, vs [3][]float64
	for i, p := range parts {
		ms[i], vs[i] = p.Forecast(6)
	}
	for i := range mc {
		if mc[i] != med(ms[0][i], ms[1][i], ms[2][i]) {
			t.Errorf("step %d: mean %g", i+1, mc[i])
		}
		// The mixture's second moment about the median, summed directly:
		// (1/3)Σ (v_j + (μ_j − median)²).
		want := 0.0
		for j := 0; j < 3; j++ {
			d := ms[j][i] - mc[i]
			want += (vs[j][i] + d*d) / 3
		}
		if math.Abs(vc[i]-want) > 1e-9*want {
			t.Errorf("step %d: variance %g, want %g", i+1, vc[i], want)
		}
	}
	r0, r1, r2, rc := parts[0].Residuals(), parts[1].Residuals(), parts[2].Residuals(), c.Residuals()
	for i := range rc {
		if !math.IsNaN(rc[i]) && math.Abs(rc[i]-med(r0[i], r1[i], r2[i])) > 1e-9 {
			t.Fatalf("residual %d", i)
		}
	}
	if c.Family() != "arima+ets+seasonal-naive" {
		t.Error(c.Family())
	}
	if two := Median(parts[0], parts[1]).PointForecast(6); math.Abs(two[0]-(ms[0][0]+ms[1][0])/2) > 1e-9 {
		t.Errorf("median of two %g, want the mean", two[0])
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

// TestSeasonalSeriesKeepSeason: on strongly seasonal public series (R's
// datasets UKgas, quarterly, and USAccDeaths, monthly) drift is not
// offered and the model used carries the season, whatever stretch the
// validation origins fall on.
func TestSeasonalSeriesKeepSeason(t *testing.T) {
	for _, c := range []struct {
		name string
		m    int
	}{{"UKgas", 4}, {"USAccDeaths", 12}} {
		y := series(t, c.name)
		for _, cut := range []int{0, 1, 2, 3} {
			m, err := newAuto().Fit(y[:len(y)-cut], models.FitOptions{Period: c.m, Horizon: c.m})
			if err != nil {
				t.Fatal(err)
			}
			f := m.(*Fitted)
			if !hasSeason(f.Model) {
				t.Errorf("%s minus %d: %s has no seasonal component", c.name, cut, f.Spec())
			}
			for _, s := range f.Scores() {
				if s.Family == "drift" && !strings.HasPrefix(s.Err, "not offered") {
					t.Errorf("%s minus %d: drift offered (%+v)", c.name, cut, s)
				}
			}
		}
	}
}

// TestPoleNotChosen checks that a candidate whose forecast distribution
// reaches the pole of its Box–Cox back-transform (λ < 0) is not used
// (transform.Fitted.ClearOfPole; the pole of y = (λz + 1)^{1/λ} at
// z = −1/λ is a fact of the formula, Box & Cox 1964). The series' values
// on the reciprocal scale rise in a straight line, which ARIMA(0,2,0)
// forecasts almost exactly, far better than seasonal naive; with larger
// wiggles its forecast variance carries the upper tail across the pole
// within the year, and seasonal naive must be chosen instead.
func TestPoleNotChosen(t *testing.T) {
	lambda := -1.0
	fam := New(Options{},
		Candidate{Family: naive.SeasonalNaive{}},
		Candidate{Family: transform.Family{Inner: arima.Fixed{Spec: arima.Spec{D: 2}},
			Opt: transform.Options{Kind: transform.BoxCox, Lambda: &lambda}}})
	for _, c := range []struct {
		wiggle float64
		want   string
	}{{0.0002, "arima"}, {0.005, naive.SeasonalNaiveName}} {
		y := make([]float64, 60)
		for i := range y {
			z := 0.5 + 0.004*float64(i) + c.wiggle*math.Sin(1.3*float64(i))
			y[i] = 1 / (1 - z)
		}
		mod, err := fam.Fit(y, models.FitOptions{Period: 12, Horizon: 12})
		if err != nil {
			t.Fatal(err)
		}
		if got := mod.(*Fitted).Model.Family(); got != c.want {
			t.Errorf("wiggle %g: chose %s (%s), want %s", c.wiggle, got, mod.Spec(), c.want)
		}
	}
}
