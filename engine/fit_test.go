package engine

import (
	"math"
	"testing"
)

func TestUsableRejectsExplodingFits(t *testing.T) {
	y := []float64{10, 12, 11}
	ok := []float64{11, 12}
	if err := usable(y, []float64{math.NaN(), 2, -1}, ok, []float64{4, 9}); err != nil {
		t.Errorf("a sane fit was rejected: %v", err)
	}
	for name, c := range map[string][4][]float64{
		"sentinel residual": {y, {math.NaN(), -math.MaxFloat64, 1}, ok, {4, 9}},
		"huge forecast":     {y, {1, 1, 1}, {11, 1e9}, {4, 9}},
		"NaN forecast":      {y, {1, 1, 1}, {math.NaN(), 1}, {4, 9}},
		"infinite variance": {y, {1, 1, 1}, ok, {4, math.Inf(1)}},
		"negative variance": {y, {1, 1, 1}, ok, {-4, 9}},
	} {
		if err := usable(c[0], c[1], c[2], c[3]); err == nil {
			t.Errorf("%s: accepted", name)
		}
	}
}
