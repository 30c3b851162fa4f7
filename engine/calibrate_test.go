package engine

import (
	"math"
	"math/rand/v2"
	"slices"
	"testing"
)

// TestConformalFactor: the factor of level L is the ⌈(n+1)·L/100⌉-th
// smallest score over z_L (split conformal, Lei et al. 2018, §2.2): for
// the scores 1…20 that is the 17th (80%) and, as ⌈21·0.95⌉ = 20, the
// 20th (95%); with fewer than CalibrationMin scores there is none.
func TestConformalFactor(t *testing.T) {
	var xs []float64
	for i := 1; i <= 20; i++ {
		xs = append(xs, float64(i))
	}
	f := conformal(xs, []float64{80, 95})
	if want := 17 / Quantile(80); math.Abs(f[0]-want) > 1e-12 {
		t.Errorf("80%% factor %v, want %v", f[0], want)
	}
	if want := 20 / Quantile(95); math.Abs(f[1]-want) > 1e-12 {
		t.Errorf("95%% factor %v, want %v", f[1], want)
	}
	if f := conformal(xs[:CalibrationMin-1], []float64{80}); f != nil {
		t.Errorf("factor %v from %d scores", f, CalibrationMin-1)
	}
}

// TestCalibrationFindsTheScale: errors three times as spread as the
// model says (seeded N(0, 3²) errors with sd 1) give factors near 3 at
// every level, step group and interval level with enough errors; a
// level with too few errors in one group takes the level's pooled factor,
// and a level without errors keeps 1.
func TestCalibrationFindsTheScale(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 9))
	c := newCalScores([]string{"total", "store", "empty"}, 6)
	for k := 0; k < 6; k++ {
		for s := 0; s < 2000; s++ {
			c.add("store", k, 3*rng.NormFloat64(), 1)
		}
		if k < 2 { // the total has errors at the first two steps only
			for s := 0; s < 2000; s++ {
				c.add("total", k, 3*rng.NormFloat64(), 1)
			}
		}
	}
	cal := c.fit([]float64{80, 95})
	if !slices.Equal(cal.Groups, [][2]int{{1, 2}, {3, 4}, {5, 6}}) {
		t.Fatalf("horizon groups %v", cal.Groups)
	}
	for _, level := range []string{"total", "store"} {
		for k := 0; k < 6; k++ {
			for q := range cal.Intervals {
				// 4,000 to 12,000 scores: the quantile's error is
				// well under 5%.
				if f := cal.factor(level, k, q); math.Abs(f-3) > 0.15 {
					t.Errorf("%s step %d level %v: factor %v, want about 3", level, k+1, cal.Intervals[q], f)
				}
			}
		}
	}
	if n := cal.Count[0][2]; n != 4000 {
		t.Errorf("the total's last group pooled %d errors, want the level's 4,000", n)
	}
	if f := cal.factor("empty", 0, 0); f != 1 {
		t.Errorf("a level without errors has factor %v", f)
	}
	if f := cal.factor("unknown", 0, 0); f != 1 {
		t.Errorf("an unknown level has factor %v", f)
	}
}
