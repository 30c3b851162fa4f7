package engine

import (
	"context"
	"math"
	"math/rand/v2"
	"path/filepath"
	"slices"
	"testing"

	"gonum.org/v1/gonum/floats"

	"trueup/fixtures"
	"trueup/models/families"
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

// TestCalibrationCheckHelpsNarrowIntervals: with every variance of one
// method divided by 100 (intervals a tenth as wide as the model says),
// calibration at the later origins brings coverage back towards nominal
// and the check says it helps.
func TestCalibrationCheckHelpsNarrowIntervals(t *testing.T) {
	input := filepath.Join(t.TempDir(), "small.parquet")
	if err := fixtures.WriteSmall(input, 4); err != nil {
		t.Fatal(err)
	}
	d, err := Load(Source{Path: input, Time: fixtures.DemoTimeColumn, Value: fixtures.DemoValueColumn, Chains: fixtures.DemoChains()})
	if err != nil {
		t.Fatal(err)
	}
	res, err := Backtest(context.Background(), d, BacktestOptions{
		Options: Options{Model: families.Spec{Family: "drift"}, Horizon: 4, Fitter: Local{Workers: 2}},
		Origins: 8, Compare: []string{"bottom-up"}})
	if err != nil {
		t.Fatal(err)
	}
	for _, org := range res.Origins {
		for _, row := range org.Results["bottom-up"].Solution.Variance {
			floats.Scale(0.01, row)
		}
	}
	res.checkCalibration()
	chk := res.Calibration[0]
	if !chk.Helps || chk.Origins != 4 {
		t.Fatalf("check %+v", chk)
	}
	for _, l := range chk.Levels {
		if !(l.CalibratedCoverage[0] > l.Coverage[0]+0.2) {
			t.Errorf("%s: 80%% coverage %v → %v", l.Level, l.Coverage[0], l.CalibratedCoverage[0])
		}
	}
}
