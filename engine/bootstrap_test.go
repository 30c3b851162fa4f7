package engine

import (
	"context"
	"errors"
	"math"
	"path/filepath"
	"slices"
	"testing"

	"trueup/fixtures"
	"trueup/inputerr"
	"trueup/internal/membudget"
	"trueup/models/families"
)

// smallData loads the small invented chain (property tests only).
func smallData(t *testing.T) *Data {
	t.Helper()
	input := filepath.Join(t.TempDir(), "small.parquet")
	if err := fixtures.WriteSmall(input, 4); err != nil {
		t.Fatal(err)
	}
	d, err := Load(Source{Path: input, Time: fixtures.DemoTimeColumn, Value: fixtures.DemoValueColumn, Chains: fixtures.DemoChains()})
	if err != nil {
		t.Fatal(err)
	}
	return d
}

// TestBootstrapDrawsAreCoherent: every reconciled sample path adds up (a
// coherent reconciliation of each path, Panagiotelis et al. 2023), for a
// projection and for methods that reconcile the paths themselves, and the
// bounds are empirical quantiles of those draws.
func TestBootstrapDrawsAreCoherent(t *testing.T) {
	d := smallData(t)
	for _, method := range []string{"mint", "bottom-up", "top-down-avg"} {
		res, err := Forecast(context.Background(), d, Options{Horizon: 6, Intervals: IntervalsBootstrap, Draws: 200,
			Reconcile: Reconciliation{Method: method}, joint: true})
		if err != nil {
			t.Fatal(err)
		}
		sp := res.Sampled
		if sp == nil || sp.samples == nil {
			t.Fatalf("%s: no draws kept", method)
		}
		st := res.Structure
		n, m := len(st.Nodes), st.NumBottom()
		off := st.BottomOffset()
		bottom, all := make([]float64, m), make([]float64, n)
		for k := 0; k < res.Horizon; k++ {
			for dr := 0; dr < sp.Draws; dr++ {
				for j := range bottom {
					bottom[j] = float64(sp.draws(off+j, k)[dr])
				}
				st.S.MulVec(all, bottom)
				for i := 0; i < off; i++ {
					got := float64(sp.draws(i, k)[dr])
					if math.Abs(got-all[i]) > 1e-5*math.Max(1, math.Abs(all[i])) {
						t.Fatalf("%s: draw %d step %d: %s is %g, its bottom series add to %g", method, dr, k+1, st.Label(i), got, all[i])
					}
				}
			}
		}
		for i := 0; i < n; i++ {
			for k := 0; k < res.Horizon; k++ {
				x := make([]float64, sp.Draws)
				for dr, v := range sp.draws(i, k) {
					x[dr] = float64(v)
				}
				slices.Sort(x)
				level := 80.0
				a := (1 - level/100) / 2 // as bootstrapIntervals computes it, at run time
				lo, hi := res.Bounds(i, k, level)
				wantLo := sampleQuantile(x, a)
				if res.Nonnegative {
					wantLo = math.Max(wantLo, 0)
				}
				if lo != wantLo || hi != sampleQuantile(x, 1-a) {
					t.Fatalf("%s: %s step %d: bounds %g, %g; quantiles of the draws %g, %g", method, st.Label(i), k+1, lo, hi, wantLo, sampleQuantile(x, 1-a))
				}
				if !(lo <= hi) {
					t.Fatalf("%s: %s step %d: bounds %g > %g", method, st.Label(i), k+1, lo, hi)
				}
			}
		}
	}
}

// TestBootstrapIsDeterministic: the same input gives the same bounds,
// bit for bit, whatever the number of workers.
func TestBootstrapIsDeterministic(t *testing.T) {
	d := smallData(t)
	var first *Sampled
	for _, workers := range []int{1, 3} {
		res, err := Forecast(context.Background(), d, Options{Horizon: 4, Intervals: IntervalsBootstrap, Draws: 100,
			Fitter: Local{Workers: workers}})
		if err != nil {
			t.Fatal(err)
		}
		if first == nil {
			first = res.Sampled
			continue
		}
		for q := range first.lo {
			if !slices.Equal(first.lo[q], res.Sampled.lo[q]) || !slices.Equal(first.hi[q], res.Sampled.hi[q]) {
				t.Fatalf("level %v: bounds differ between 1 and %d workers", first.levels[q], workers)
			}
		}
	}
}

// TestBootstrapRefusals: the interval method is checked, a temporal
// method and calibration (whose factors scale a Gaussian z) are refused
// with input errors naming the option, and
// the draws are refused when they would not fit the memory budget.
func TestBootstrapRefusals(t *testing.T) {
	d := smallData(t)
	ctx := context.Background()
	for name, opt := range map[string]Options{
		"unknown method": {Intervals: "resampled"},
		"few draws":      {Intervals: IntervalsBootstrap, Draws: 10},
		"temporal":       {Intervals: IntervalsBootstrap, Horizon: 4, Reconcile: Reconciliation{Method: "temporal"}, Model: families.Spec{Family: "drift"}},
		"calibrated":     {Intervals: IntervalsBootstrap, Horizon: 4, Reconcile: Reconciliation{Calibrate: 2}, Model: families.Spec{Family: "drift"}},
	} {
		_, err := Forecast(ctx, d, opt)
		var ie *inputerr.Error
		if !errors.As(err, &ie) || ie.Option != "Intervals" && ie.Option != "Draws" && ie.Option != "Calibrate" {
			t.Errorf("%s: error %v, want an input error naming Intervals, Draws or Calibrate", name, err)
		}
	}
	err := checkBootstrapMemory(1<<30, 39442, 28, 1000)
	var me *membudget.Error
	if !inputerr.Is(err) || !errors.As(err, &me) {
		t.Fatalf("39,442 nodes × 28 steps × 1,000 draws in 1 GiB: %v, want a memory refusal", err)
	}
	if err := checkBootstrapMemory(8<<30, 39442, 28, 1000); err != nil {
		t.Fatalf("the same in 8 GiB: %v", err)
	}
}

// TestFallbackPathsHaveTheNodesVariance: a node whose model has no path
// form takes its own residuals, scaled so that its paths' variance at
// each step is its forecast variance (up to the residuals' mean).
func TestFallbackPathsHaveTheNodesVariance(t *testing.T) {
	T, h := 48, 3
	resid := make([]float64, T)
	for t := range resid {
		resid[t] = float64((t*7)%11) - 5 // mean 0 over whole cycles of 11
	}
	resid[0] = math.NaN()
	fit := NodeFit{Fitted: true, First: 0, Last: T - 1, Mean: []float64{10, 10, 10}, Variance: []float64{4, 9, 16}}
	sims := newPathSims([]NodeFit{fit}, [][]float64{resid}, [][]float64{make([]float64, T)}, h)
	if sims.fallback != 1 {
		t.Fatalf("fallback count %d", sims.fallback)
	}
	sum, sum2 := make([]float64, h), make([]float64, h)
	path := make([]float64, h)
	idx := make([]int, h)
	for t0 := 1; t0 < T; t0++ { // every period once at each step
		for k := range idx {
			idx[k] = t0
		}
		sims.path(path, 0, idx, 0)
		for k, v := range path {
			sum[k] += v - 10
			sum2[k] += (v - 10) * (v - 10)
		}
	}
	for k := 0; k < h; k++ {
		if got := sum2[k] / float64(T-1); math.Abs(got/fit.Variance[k]-1) > 1e-12 {
			t.Errorf("step %d: mean square %g, variance %g", k+1, got, fit.Variance[k])
		}
	}
}

// TestPathFormsReachTheFits: the fitted families' path forms are kept
// with the fits, so that only models with no simulator (or unbounded
// paths) fall back.
func TestPathFormsReachTheFits(t *testing.T) {
	d := smallData(t)
	res, err := Forecast(context.Background(), d, Options{Horizon: 4, Intervals: IntervalsBootstrap, Draws: 100})
	if err != nil {
		t.Fatal(err)
	}
	without := 0
	for _, f := range res.Fits {
		if f.Fitted && !f.Closed && f.Path == nil {
			without++
			if f.Family != "intermittent" {
				t.Errorf("a %s fit (%s) has no path form", f.Family, f.Spec)
			}
		}
	}
	if res.Sampled.Fallback < without {
		t.Errorf("%d fits without a path form, %d counted", without, res.Sampled.Fallback)
	}
}
