package engine_test

import (
	"context"
	"testing"

	"trueup/engine"
	"trueup/models/families"
	"trueup/reconcile"
)

// TestMethodLabelIsTheSameMethod: the backtest's label of a method
// ("mint-variance", as the recommendation names it) runs the same
// reconciliation as its name with the covariance set apart, and run.json
// records the method as the table names and explains it.
func TestMethodLabelIsTheSameMethod(t *testing.T) {
	d := chain(t, 3)
	run := func(rc engine.Reconciliation) *engine.Result {
		t.Helper()
		res, err := engine.Forecast(context.Background(), d, engine.Options{Model: families.Spec{Family: "drift"}, Horizon: 3, Reconcile: rc})
		if err != nil {
			t.Fatal(err)
		}
		return res
	}
	byLabel := run(engine.Reconciliation{Method: "mint-variance"})
	byName := run(engine.Reconciliation{Method: "mint", Cov: "variance"})
	for i := range byName.Solution.Forecast {
		for k, v := range byName.Solution.Forecast[i] {
			if byLabel.Solution.Forecast[i][k] != v {
				t.Fatalf("node %d step %d: %v by label, %v by name", i, k+1, byLabel.Solution.Forecast[i][k], v)
			}
		}
	}
	info, _ := reconcile.LookupMethod("mint")
	for _, res := range []*engine.Result{byLabel, byName} {
		r := res.Report
		if r.Reconcile.Method != "mint" || r.Options["cov"] != "variance" || r.Reconcile.Explanation != info.Explanation {
			t.Errorf("run.json records method %q, cov %v, explanation %q", r.Reconcile.Method, r.Options["cov"], r.Reconcile.Explanation)
		}
	}
	if _, err := engine.Forecast(context.Background(), d, engine.Options{Model: families.Spec{Family: "drift"}, Horizon: 3,
		Reconcile: engine.Reconciliation{Method: "mint-variance", Cov: "shrink"}}); err == nil {
		t.Error("a label with a second covariance was accepted")
	}
}

// TestCompareTakesFullLabelsOnly: a compared method is named one way, so
// "mint" (which would be mint-shrink a second time) is refused.
func TestCompareTakesFullLabelsOnly(t *testing.T) {
	d := chain(t, 3)
	for _, c := range [][]string{{"base", "mint"}, {"base", "middle-out"}, {"base", "mint-diagonal"}} {
		_, err := engine.Backtest(context.Background(), d, engine.BacktestOptions{
			Options: engine.Options{Model: families.Spec{Family: "drift"}, Horizon: 2}, Origins: 1, Compare: c})
		if err == nil {
			t.Errorf("compare %v accepted", c)
		}
	}
}
