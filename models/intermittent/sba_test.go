package intermittent

import (
	"math"
	"testing"

	"trueup/models"
)

// TestWorkedExample follows the recursions of Croston (1972) with the
// correction of Syntetos & Boylan (2005) by hand on 0, 4, 0, 0, 6, 0, 2:
// the first demand (4, at position 2) starts size 4 and interval 2; the
// demand 6 after 3 periods gives size 4 + 0.1·(6−4) = 4.2 and interval
// 2 + 0.1·(3−2) = 2.1; the demand 2 after 2 periods gives size
// 4.2 + 0.1·(2−4.2) = 3.98 and interval 2.1 + 0.1·(2−2.1) = 2.09. The
// forecast is (1 − 0.05)·3.98/2.09.
func TestWorkedExample(t *testing.T) {
	y := []float64{0, 4, 0, 0, 6, 0, 2}
	m, err := SBA{}.Fit(y, models.FitOptions{Period: 1})
	if err != nil {
		t.Fatal(err)
	}
	want := 0.95 * 3.98 / 2.09
	mean, v := m.Forecast(3)
	for i := range mean {
		if math.Abs(mean[i]-want) > 1e-12 {
			t.Errorf("step %d: %g, want %g", i+1, mean[i], want)
		}
		if !(v[i] > 0) || (i > 0 && v[i] < v[i-1]) {
			t.Errorf("step %d: variance %g", i+1, v[i])
		}
	}
	// One-step errors from the first demand on: at t=3 the rate is
	// 0.95·4/2 = 1.9, so the error is 0 − 1.9.
	r := m.Residuals()
	if !math.IsNaN(r[0]) || !math.IsNaN(r[1]) || math.Abs(r[2]+1.9) > 1e-12 {
		t.Errorf("residuals %v", r)
	}
}

// TestClassification: the cut-off of Syntetos, Boylan & Croston (2005),
// average inter-demand interval 1.32.
func TestClassification(t *testing.T) {
	cases := []struct {
		y    []float64
		want bool
	}{
		{[]float64{1, 0, 2, 0, 3, 0}, true},   // ADI 2
		{[]float64{1, 2, 3, 0, 4, 5}, false},  // ADI 1.2
		{[]float64{0, 0, 0, 0, 0, 7}, false},  // one demand: too few
		{[]float64{1, 0, -2, 0, 3, 0}, false}, // returns: not a demand series
	}
	for _, c := range cases {
		if got := Intermittent(c.y); got != c.want {
			t.Errorf("%v: %v, want %v", c.y, got, c.want)
		}
	}
	if _, err := (SBA{}).Fit([]float64{0, 0, 5, 0}, models.FitOptions{}); err == nil {
		t.Error("one demand accepted")
	}
}
