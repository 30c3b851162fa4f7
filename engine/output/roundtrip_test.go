package output_test

import (
	"context"
	"fmt"
	"math"
	"path/filepath"
	"strings"
	"testing"

	"trueup/engine"
	"trueup/engine/output"
	"trueup/fixtures"
	"trueup/inputerr"
	"trueup/models/families"
	"trueup/reconcile"
)

// TestReconcileForecastTablesRoundTrip reconciles forecast's own tables
// (forecasts, residuals and the input history) with every method and
// covariance (but the temporal ones, which fit the nodes again), and checks that the result is forecast's: the same
// forecasts and variances, hence bounds, the same non-negativity and the
// same shrinkage λ. The chain has stores that close inside the history,
// so the closed-store rule is exercised on both paths.
func TestReconcileForecastTablesRoundTrip(t *testing.T) {
	d := smallChain(t)
	if d.Panel.Stats.EarlyEnds == 0 {
		t.Fatal("the test chain has no closed store")
	}
	// Fit once; every run below reuses these fits through the Fitter seam.
	jobsSeen := 0
	var cached []engine.NodeFit
	fitter := engine.FitterFunc(func(ctx context.Context, jobs []engine.FitJob, progress func(int, int)) ([]engine.NodeFit, error) {
		jobsSeen = len(jobs)
		if cached == nil {
			var err error
			cached, err = engine.Local{Workers: 2}.Fit(ctx, jobs, progress)
			return cached, err
		}
		return cached, nil
	})
	var settings []engine.Reconciliation
	for _, m := range reconcile.MethodNames() {
		if info, _ := reconcile.LookupMethod(m); info.Temporal {
			// It fits every node by quarter and year itself: from given
			// base forecasts it refuses (TestTemporalNeedsTheModels).
			continue
		}
		switch m {
		case "mint":
			for _, c := range reconcile.CovNames() {
				settings = append(settings, engine.Reconciliation{Method: m, Cov: c})
			}
		case "middle-out":
			settings = append(settings, engine.Reconciliation{Method: m, At: "region+store"})
		default:
			settings = append(settings, engine.Reconciliation{Method: m})
		}
	}
	// The base forecasts and residuals do not depend on the method, so
	// one run's tables serve every method.
	first, err := engine.Forecast(context.Background(), d, engine.Options{Horizon: 6, Fitter: fitter})
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if _, err := output.Write(dir, first, []string{"parquet"}); err != nil {
		t.Fatal(err)
	}
	bs, err := engine.LoadTables(engine.Tables{
		Base: filepath.Join(dir, "forecasts.parquet"), Residuals: filepath.Join(dir, "residuals.parquet"),
		History: engine.Source{Path: d.Input.Path, Time: fixtures.DemoTimeColumn, Value: fixtures.DemoValueColumn},
		Chains:  fixtures.DemoChains()})
	if err != nil {
		t.Fatal(err)
	}
	for _, rc := range settings {
		name := fmt.Sprintf("%s/%s", rc.Method, rc.Cov)
		want, errF := engine.Forecast(context.Background(), d, engine.Options{Horizon: 6, Reconcile: rc, Fitter: fitter})
		got, err := engine.Reconcile(context.Background(), bs, engine.ReconcileOptions{Reconcile: rc})
		if errF != nil || err != nil {
			// A method that cannot run on this structure must refuse on
			// both paths, for the same reason.
			if errF == nil || err == nil || errF.Error() != err.Error() {
				t.Fatalf("%s: forecast says %v, reconcile says %v", name, errF, err)
			}
			continue
		}
		if got.Nonnegative != want.Nonnegative {
			t.Errorf("%s: non-negative %v, forecast %v", name, got.Nonnegative, want.Nonnegative)
		}
		for k, v := range want.Solution.Notes {
			if g := got.Solution.Notes[k]; !close(g, v) {
				t.Errorf("%s: note %s = %v, forecast %v", name, k, g, v)
			}
		}
		if len(want.Solution.Notes) != len(got.Solution.Notes) {
			t.Errorf("%s: notes %v, forecast %v", name, got.Solution.Notes, want.Solution.Notes)
		}
		for i := range want.Solution.Forecast {
			for k := range want.Solution.Forecast[i] {
				if !close(got.Solution.Forecast[i][k], want.Solution.Forecast[i][k]) {
					t.Fatalf("%s: node %s step %d: forecast %v, forecast run %v", name, want.Structure.Label(i), k+1,
						got.Solution.Forecast[i][k], want.Solution.Forecast[i][k])
				}
				for _, lv := range want.Levels {
					glo, ghi := got.Bounds(i, k, lv)
					wlo, whi := want.Bounds(i, k, lv)
					if !close(glo, wlo) || !close(ghi, whi) {
						t.Fatalf("%s: node %s step %d: %v%% interval [%v, %v], forecast run [%v, %v]", name,
							want.Structure.Label(i), k+1, lv, glo, ghi, wlo, whi)
					}
				}
			}
		}
	}
	if jobsSeen == 0 {
		t.Fatal("the fitter was never called")
	}
}

// close compares to 1e-9 relative (the tables store float64 exactly, so
// differences come only from summation order).
func close(a, b float64) bool {
	if math.IsNaN(a) || math.IsNaN(b) {
		return math.IsNaN(a) && math.IsNaN(b)
	}
	return math.Abs(a-b) <= 1e-9*math.Max(1, math.Max(math.Abs(a), math.Abs(b)))
}

// TestTemporalNeedsTheModels: reconciling given base forecasts with a
// temporal method is refused, naming the option and saying where it
// runs, since it must fit every node again by quarter and year.
func TestTemporalNeedsTheModels(t *testing.T) {
	d := smallChain(t)
	res, err := engine.Forecast(context.Background(), d, engine.Options{Horizon: 6, Model: families.Spec{Family: "drift"}})
	if err != nil {
		t.Fatal(err)
	}
	dir := t.TempDir()
	if _, err := output.Write(dir, res, []string{"parquet"}); err != nil {
		t.Fatal(err)
	}
	bs, err := engine.LoadTables(engine.Tables{Base: filepath.Join(dir, "forecasts.parquet"),
		Residuals: filepath.Join(dir, "residuals.parquet"), Chains: fixtures.DemoChains()})
	if err != nil {
		t.Fatal(err)
	}
	for _, info := range reconcile.Methods() {
		if !info.Temporal {
			continue
		}
		_, err := engine.Reconcile(context.Background(), bs, engine.ReconcileOptions{Reconcile: engine.Reconciliation{Method: info.Name}})
		if !inputerr.Is(err) || inputerr.OptionOf(err) != "Method" || !strings.Contains(err.Error(), "runs in forecast and backtest") {
			t.Errorf("%s from tables: %v", info.Name, err)
		}
	}
}
