package choose

import (
	"math"
	"testing"

	"trueup/models"
)

// TestOddSeries: constant, all-zero, intermittent and negative series
// through the automatic choice (with ARIMA on the Box–Cox scale) give an
// error or finite forecasts, variances and intervals — never a panic or
// NaN.
func TestOddSeries(t *testing.T) {
	fam := Standard(Options{})
	n := 60
	cases := map[string]func(i int) float64{
		"constant":     func(int) float64 { return 7 },
		"zeros":        func(int) float64 { return 0 },
		"intermittent": func(i int) float64 { return float64((i * 7 % 5) / 4 * 3) },
		"negative":     func(i int) float64 { return -50 + float64(i%12) - 0.2*float64(i) },
		"step":         func(i int) float64 { return map[bool]float64{true: 1, false: 1000}[i < 30] },
	}
	for name, gen := range cases {
		y := make([]float64, n)
		for i := range y {
			y[i] = gen(i)
		}
		m, err := fam.Fit(y, models.FitOptions{Period: 12, Horizon: 12})
		if err != nil {
			t.Logf("%s: %v", name, err)
			continue
		}
		mean, v := m.Forecast(12)
		lo, hi := m.(*Fitted).Interval(12, 0.95)
		for i := range mean {
			for _, x := range []float64{mean[i], v[i], lo[i], hi[i]} {
				if math.IsNaN(x) {
					t.Errorf("%s (%s): NaN at h=%d", name, m.Spec(), i+1)
				}
			}
		}
		for _, c := range m.(*Fitted).Scores() {
			if math.IsNaN(c.MASE) {
				t.Errorf("%s: NaN score for %s", name, c.Family)
			}
		}
		t.Logf("%s: %s — %s", name, m.Spec(), m.(*Fitted).Reason())
	}
}
