package choose

import (
	"math"
	"testing"

	"trueup/models"
)

// TestOddSeries: short, flat, intermittent, negative and shifted series
// through the automatic choice get a finite forecast and a non-degenerate
// interval, and the forecast is the one the situation calls for. The
// expected values follow from the methods' definitions (the mean of the
// history; SBA's rate is positive and below the mean non-zero size; after
// a level shift the forecast follows the new level), not from an outside
// table.
func TestOddSeries(t *testing.T) {
	fam := Standard(Options{})
	gen := func(n int, f func(i int) float64) []float64 {
		y := make([]float64, n)
		for i := range y {
			y[i] = f(i)
		}
		return y
	}
	cases := []struct {
		name   string
		y      []float64
		family string
		check  func(mean float64) bool
	}{
		{"one point", []float64{40}, "mean", func(m float64) bool { return m == 40 }},
		{"two points", []float64{30, 50}, "mean", func(m float64) bool { return m == 40 }},
		{"three points", []float64{30, 50, 40}, "mean", func(m float64) bool { return m == 40 }},
		{"constant", gen(60, func(int) float64 { return 7 }), "mean", func(m float64) bool { return m == 7 }},
		{"zeros", gen(60, func(int) float64 { return 0 }), "mean", func(m float64) bool { return m == 0 }},
		{"intermittent", gen(60, func(i int) float64 { return float64((i * 7 % 5) / 4 * 3) }), "intermittent",
			func(m float64) bool { return m > 0 && m < 3 }},
		{"negative", gen(60, func(i int) float64 { return -50 + float64(i%12) - 0.2*float64(i) }), "",
			func(m float64) bool { return m < -50 && m > -80 }},
		{"level shift", gen(60, func(i int) float64 { return map[bool]float64{true: 10, false: 1000}[i < 30] + float64(i%3) }), "",
			func(m float64) bool { return m > 900 && m < 1100 }},
	}
	for _, c := range cases {
		m, err := fam.Fit(c.y, models.FitOptions{Period: 12, Horizon: 12})
		if err != nil {
			t.Errorf("%s: %v", c.name, err)
			continue
		}
		if c.family != "" && m.Family() != c.family {
			t.Errorf("%s: family %s, want %s", c.name, m.Family(), c.family)
		}
		mean, v := m.Forecast(12)
		lo, hi := m.(*Fitted).Interval(12, 0.95)
		for i := range mean {
			for _, x := range []float64{mean[i], v[i], lo[i], hi[i]} {
				if math.IsNaN(x) || math.IsInf(x, 0) {
					t.Errorf("%s (%s): non-finite value at h=%d", c.name, m.Spec(), i+1)
				}
			}
			if !(v[i] > 0 && hi[i] > lo[i]) {
				t.Errorf("%s (%s): degenerate interval at h=%d: variance %g", c.name, m.Spec(), i+1, v[i])
			}
		}
		if !c.check(mean[0]) {
			t.Errorf("%s (%s): first forecast %g", c.name, m.Spec(), mean[0])
		}
		t.Logf("%s: %s %.3f — %s", c.name, m.Spec(), mean[0], m.(*Fitted).Reason())
	}
}
