package naive

import (
	"math"
	"testing"

	"trueup/models"
)

// air1959to1960 is the last two years of R's datasets::AirPassengers
// (monthly international airline passengers, thousands; Box, Jenkins &
// Reinsel Series G), R 4.2.2.
var air1959to1960 = []float64{
	360, 342, 406, 396, 420, 472, 548, 559, 463, 407, 362, 405,
	417, 391, 419, 461, 472, 535, 622, 606, 508, 461, 390, 432,
}

func TestSeasonalNaiveRepeatsLastSeason(t *testing.T) {
	f, err := SeasonalNaive{}.Fit(air1959to1960, models.FitOptions{Period: 12})
	if err != nil {
		t.Fatal(err)
	}
	mean, vars := f.Forecast(26)
	for h := 0; h < 26; h++ {
		if want := air1959to1960[12+h%12]; mean[h] != want {
			t.Fatalf("step %d: forecast %v, want %v (same month of 1960)", h+1, mean[h], want)
		}
	}
	// σ² is the mean squared year-on-year change of 1960 over 1959.
	var sse float64
	for i := 12; i < 24; i++ {
		d := air1959to1960[i] - air1959to1960[i-12]
		sse += d * d
	}
	s2 := sse / 12
	if math.Abs(f.Sigma2()-s2) > 1e-9 {
		t.Fatalf("sigma2 %v, want %v", f.Sigma2(), s2)
	}
	// Forecasting: Principles and Practice (3rd ed.) Table 5.2: σ_h = σ√(k+1), k = ⌊(h−1)/m⌋.
	for _, c := range []struct{ h, k int }{{1, 0}, {12, 0}, {13, 1}, {24, 1}, {25, 2}} {
		if got, want := vars[c.h-1], s2*float64(c.k+1); math.Abs(got-want) > 1e-9*want {
			t.Errorf("variance at h=%d: %v, want %v", c.h, got, want)
		}
	}
	res := f.Residuals()
	if len(res) != 24 || !math.IsNaN(res[11]) || res[12] != 417-360 {
		t.Errorf("residuals %v", res)
	}
}

func TestDriftLine(t *testing.T) {
	f, err := Drift{}.Fit(air1959to1960, models.FitOptions{Period: 12})
	if err != nil {
		t.Fatal(err)
	}
	T := float64(len(air1959to1960))
	c := (432.0 - 360.0) / (T - 1)
	mean, vars := f.Forecast(3)
	for h := 1; h <= 3; h++ {
		if want := 432 + float64(h)*c; math.Abs(mean[h-1]-want) > 1e-9 {
			t.Errorf("h=%d forecast %v want %v", h, mean[h-1], want)
		}
	}
	// Table 5.2 gives σ_h = σ√(h(1+h/T)); with the drift estimated from
	// T−1 differences the exact factor is h(1+h/(T−1)).
	if got, want := vars[2]/f.Sigma2(), 3*(1+3/(T-1)); math.Abs(got-want) > 1e-12 {
		t.Errorf("variance factor %v want %v", got, want)
	}
}

func TestShortSeries(t *testing.T) {
	if _, err := (SeasonalNaive{}).Fit([]float64{1, 2, 3}, models.FitOptions{Period: 12}); err == nil {
		t.Error("seasonal naive accepted 3 points with m=12")
	}
	if _, err := (Drift{}).Fit([]float64{1, 2}, models.FitOptions{}); err == nil {
		t.Error("drift accepted 2 points")
	}
	f, err := LastValue{}.Fit([]float64{50}, models.FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	mean, vars := f.Forecast(2)
	if mean[1] != 50 || vars[0] != 2500 || vars[1] != 5000 || f.Warning() == "" {
		t.Errorf("last value: %v %v %q", mean, vars, f.Warning())
	}
}

func TestConstantSeriesHasNoNaN(t *testing.T) {
	y := make([]float64, 30)
	for i := range y {
		y[i] = 7
	}
	for _, fam := range []models.Family{SeasonalNaive{}, Drift{}, LastValue{}} {
		f, err := fam.Fit(y, models.FitOptions{Period: 12})
		if err != nil {
			t.Fatal(err)
		}
		mean, vars := f.Forecast(5)
		for i := range mean {
			if math.IsNaN(mean[i]) || math.IsNaN(vars[i]) || mean[i] != 7 {
				t.Errorf("%s: step %d mean %v var %v", fam.Name(), i+1, mean[i], vars[i])
			}
		}
	}
}

// TestMean: the mean method's forecast and the prediction variance
// s²(1 + 1/T) of a new observation from a constant mean (Hyndman &
// Athanasopoulos, Forecasting: Principles and Practice, 3rd ed., §5.5);
// without variation the rough rule σ² = max(ȳ², 1)/T growing with h (ours,
// see Mean).
func TestMean(t *testing.T) {
	m, err := Mean{}.Fit([]float64{30, 50, 40}, models.FitOptions{Period: 12})
	if err != nil {
		t.Fatal(err)
	}
	mean, v := m.Forecast(2)
	if mean[0] != 40 || math.Abs(v[1]-100*(1+1.0/3)) > 1e-9 {
		t.Errorf("mean %v variance %v, want 40 and %g", mean, v, 100*(1+1.0/3))
	}
	flat, err := Mean{}.Fit([]float64{0, 0, 0, 0}, models.FitOptions{})
	if err != nil {
		t.Fatal(err)
	}
	mean, v = flat.Forecast(2)
	if mean[1] != 0 || v[0] != 0.25 || v[1] != 0.5 || flat.Warning() == "" {
		t.Errorf("flat: mean %v variance %v warning %q", mean, v, flat.Warning())
	}
	if _, err := (Mean{}).Fit(nil, models.FitOptions{}); err == nil {
		t.Error("empty series accepted")
	}
}
