package models

import (
	"math"
	"testing"
)

// fixedErrors is a Model with given one-step errors and nothing else.
type fixedErrors struct {
	Model
	e []float64
}

func (f fixedErrors) Residuals() []float64 { return f.e }

// members is a Composite of fixedErrors.
type members struct {
	Model
	parts []Model
}

func (c members) Components() []Model { return c.parts }

// errorsOf returns n errors of size a followed by k of size b, with a NaN
// in front (a model's first error is often undefined).
func errorsOf(n int, a float64, k int, b float64) []float64 {
	e := []float64{math.NaN()}
	for t := 0; t < n; t++ {
		e = append(e, a*float64(1-2*(t%2)))
	}
	for t := 0; t < k; t++ {
		e = append(e, b)
	}
	return e
}

// TestRecentSpreadRatio checks the ratio against its definition worked by
// hand: 48 errors of size 1 then 24 of size 2 give a mean square of
// (48 + 24·4)/72 = 2 over all and 4 over the latest 24, a ratio of 2.
func TestRecentSpreadRatio(t *testing.T) {
	m := fixedErrors{e: errorsOf(48, 1, 24, 2)}
	if r, ok := RecentSpreadRatio(m, 24); !ok || math.Abs(r-2) > 1e-12 {
		t.Errorf("ratio %g (%v), want 2", r, ok)
	}
	// 72 errors hold two windows of 36, not of 37.
	if _, ok := RecentSpreadRatio(m, 36); !ok {
		t.Error("72 errors: a window of 36 refused")
	}
	if r, ok := RecentSpreadRatio(m, 37); ok || r != 1 {
		t.Errorf("72 errors, window 37: got %g, %v; want 1, false", r, ok)
	}
	// A combination takes its members' mean: (2 + 1)/2.
	calm := fixedErrors{e: errorsOf(48, 3, 24, 3)}
	if r, ok := RecentSpreadRatio(members{parts: []Model{m, calm}}, 24); !ok || math.Abs(r-1.5) > 1e-12 {
		t.Errorf("combination: ratio %g (%v), want 1.5", r, ok)
	}
	// No errors of any size: nothing to scale by.
	if r, ok := RecentSpreadRatio(fixedErrors{e: make([]float64, 100)}, 24); ok || r != 1 {
		t.Errorf("all errors zero: got %g, %v", r, ok)
	}
}

// TestSpreadFactorBounds: the factor stays within its bounds, and is 1
// without enough errors. Monthly data: a window of 36.
func TestSpreadFactorBounds(t *testing.T) {
	for _, c := range []struct {
		name string
		e    []float64
		want float64
	}{
		{"latest errors 10 times as large", errorsOf(200, 1, 36, 10), MaxSpreadFactor},
		{"latest errors zero", errorsOf(72, 1, 36, 0), MinSpreadFactor},
		{"too few errors", errorsOf(30, 1, 36, 10), 1},
		{"the same spread throughout", errorsOf(72, 2, 36, 2), 1},
	} {
		if got := SpreadFactor(fixedErrors{e: c.e}, 12); math.Abs(got-c.want) > 1e-12 {
			t.Errorf("%s: factor %g, want %g", c.name, got, c.want)
		}
	}
	if ErrorWindow(12) != 36 || ErrorWindow(4) != 24 || ErrorWindow(52) != 156 {
		t.Errorf("windows %d, %d, %d", ErrorWindow(12), ErrorWindow(4), ErrorWindow(52))
	}
}
