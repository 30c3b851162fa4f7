package engine_test

import (
	"context"
	"math"
	"testing"

	"trueup/engine"
	"trueup/models/families"
)

// TestTemporalMethodFitsQuartersAndYears: reconciling with the temporal
// method fits every node on its months, on its quarters (season 4,
// horizon 4) and on its years (season 1, horizon 1), and the result is
// coherent: every node equals the sum of its children, for each split.
func TestTemporalMethodFitsQuartersAndYears(t *testing.T) {
	d := chain(t, 4)
	grains := map[[2]int]int{}
	local := engine.Local{Workers: 2}
	fitter := engine.FitterFunc(func(ctx context.Context, jobs []engine.FitJob, p func(int, int)) ([]engine.NodeFit, error) {
		grains[[2]int{jobs[0].Period, jobs[0].Horizon}] = len(jobs[0].Series)
		return local.Fit(ctx, jobs, p)
	})
	res, err := engine.Forecast(context.Background(), d, engine.Options{Model: families.Spec{Family: "drift"},
		Horizon: 12, Fitter: fitter, Reconcile: engine.Reconciliation{Method: "temporal"}})
	if err != nil {
		t.Fatal(err)
	}
	T := d.Panel.T
	want := map[[2]int]int{{12, 12}: T, {4, 4}: T / 3, {1, 1}: T / 12}
	if len(grains) != len(want) {
		t.Fatalf("fitted grains %v, want %v", grains, want)
	}
	for g, n := range want {
		if grains[g] != n {
			t.Errorf("season %d, horizon %d: series of %d, want %d", g[0], g[1], grains[g], n)
		}
	}
	st := res.Structure
	for i := range st.Nodes {
		for _, split := range st.Splits(i) {
			for k := range res.Horizon {
				sum := 0.0
				for _, c := range split.Nodes {
					sum += res.Solution.Forecast[c][k]
				}
				if f := res.Solution.Forecast[i][k]; math.Abs(f-sum) > 1e-6*math.Max(1, math.Abs(f)) {
					t.Fatalf("%s step %d: %v, children %v", st.Label(i), k+1, f, sum)
				}
			}
		}
	}
}

// TestBacktestKeepsTheTemporalFits: a backtest comparing mint and the
// temporal method at one origin gives the temporal method exactly the
// forecasts of a temporal run on the cut history (its coarser fits are
// not the monthly ones handed back).
func TestBacktestKeepsTheTemporalFits(t *testing.T) {
	d := chain(t, 4)
	opt := engine.Options{Model: families.Spec{Family: "drift"}, Horizon: 12}
	bt, err := engine.Backtest(context.Background(), d, engine.BacktestOptions{Options: opt, Origins: 1,
		Compare: []string{"mint-shrink", "temporal"}})
	if err != nil {
		t.Fatal(err)
	}
	cut, err := d.Cut(d.Panel.T - 12)
	if err != nil {
		t.Fatal(err)
	}
	opt.Reconcile.Method = "temporal"
	direct, err := engine.Forecast(context.Background(), cut, opt)
	if err != nil {
		t.Fatal(err)
	}
	got := bt.Origins[0].Results["temporal"].Solution.Forecast
	for i, row := range direct.Solution.Forecast {
		for k, v := range row {
			if got[i][k] != v {
				t.Fatalf("node %d step %d: backtest %v, forecast %v", i, k+1, got[i][k], v)
			}
		}
	}
}
