package engine_test

import (
	"context"
	"encoding/json"
	"maps"
	"math"
	"path/filepath"
	"slices"
	"strings"
	"testing"

	"trueup/accuracy"
	"trueup/engine"
	"trueup/fixtures"
	"trueup/models/families"
)

// chain writes a small invented chain (regions × stores × categories) and
// loads it.
func chain(t *testing.T, years int) *engine.Data {
	t.Helper()
	input := filepath.Join(t.TempDir(), "small.parquet")
	if err := fixtures.WriteSmall(input, years); err != nil {
		t.Fatal(err)
	}
	d, err := engine.Load(engine.Source{Path: input, Time: fixtures.DemoTimeColumn, Value: fixtures.DemoValueColumn,
		Chains: fixtures.DemoChains()})
	if err != nil {
		t.Fatal(err)
	}
	return d
}

func TestBacktestAttributionAddsUp(t *testing.T) {
	d := chain(t, 4)
	res, err := engine.Backtest(context.Background(), d, engine.BacktestOptions{
		Options: engine.Options{Model: families.Spec{Family: "drift"}, Horizon: 6, Fitter: engine.Local{Workers: 2}},
		Origins: 3, Every: 2})
	if err != nil {
		t.Fatal(err)
	}
	if len(res.Origins) != 3 || res.Origins[2].Periods != d.Panel.T-6 || res.Origins[1].Periods != d.Panel.T-8 {
		t.Fatalf("origins at %d, %d, %d periods of %d", res.Origins[0].Periods, res.Origins[1].Periods, res.Origins[2].Periods, d.Panel.T)
	}
	if len(res.Skipped) != 1 || res.Skipped[0].Method != "top-down-fcst" {
		t.Errorf("skipped %+v, want top-down-fcst (crossed chains)", res.Skipped)
	}
	// Every split of every aggregate: contributions add up to the
	// parent's error to 1e-9 relative.
	type key struct {
		m          string
		o, s, p, l int
	}
	sums := map[key]float64{}
	parent := map[key]float64{}
	for _, c := range res.Attribution.Contributions {
		st := res.Origins[c.Origin].Structure
		k := key{c.Method, c.Origin, c.Step, c.Parent, st.Nodes[c.Child].Level}
		sums[k] += c.Contribution
		parent[k] = c.ParentError
	}
	if len(sums) == 0 {
		t.Fatal("no contributions")
	}
	for k, s := range sums {
		org := res.Origins[k.o]
		scale := math.Abs(org.Actual[k.p][k.s-1]) + 1
		if math.Abs(s-parent[k]) > 1e-9*scale {
			t.Errorf("%+v: children add to %v, parent error %v", k, s, parent[k])
		}
	}
	if res.Recommendation.Method == "" || res.Recommendation.Method == engine.BaseMethod {
		t.Errorf("recommendation %+v", res.Recommendation)
	}
	// run.json names each cancellation's levels as the contributions
	// table does (parent_level, child_level), the parent's coarser: its
	// nodes split into the child level's.
	raw, err := json.Marshal(res.Report.Cancellation)
	if err != nil {
		t.Fatal(err)
	}
	var canc []map[string]any
	if err := json.Unmarshal(raw, &canc); err != nil || len(canc) == 0 {
		t.Fatalf("cancellation %s: %v", raw, err)
	}
	index := map[string]int{}
	for l, name := range res.Structure.LevelNames() {
		index[name] = l
	}
	for _, c := range canc {
		keys := slices.Sorted(maps.Keys(c))
		p, pok := c["parent_level"].(string)
		ch, cok := c["child_level"].(string)
		if !slices.Equal(keys, []string{"child_level", "mean", "parent_level"}) || !pok || !cok {
			t.Fatalf("a cancellation has the keys %v, want parent_level, child_level, mean", keys)
		}
		finer := p == "total"
		if !finer {
			finer = true
			for _, attr := range strings.Split(p, "+") {
				finer = finer && slices.Contains(strings.Split(ch, "+"), attr)
			}
		}
		if !finer || index[p] >= index[ch] {
			t.Errorf("cancellation of %s into %s: the child level is not a split of the parent's", p, ch)
		}
	}
}

// TestPlantedErrorDrivesItsAncestors plants a large jump in one bottom
// series after the first origin: that series must rank first among the
// bottom series under each of its ancestors.
func TestPlantedErrorDrivesItsAncestors(t *testing.T) {
	d := chain(t, 4)
	T := d.Panel.T
	planted := -1
	for j, y := range d.Bottom {
		if !math.IsNaN(y[0]) && !math.IsNaN(y[T-1]) {
			planted = j
			break
		}
	}
	y := d.Bottom[planted] // the actuals; the rows the origins are cut from keep the history
	for t := T - 8; t < T; t++ {
		y[t] += 1e6
	}
	res, err := engine.Backtest(context.Background(), d, engine.BacktestOptions{
		Options: engine.Options{Model: families.Spec{Family: "seasonal-naive"}, Horizon: 4},
		Origins: 2, Every: 2, Compare: []string{"base", "bottom-up", "mint-shrink"}})
	if err != nil {
		t.Fatal(err)
	}
	st := d.Structure
	bottomLevel := st.Levels[len(st.Levels)-1].Name
	want := st.Label(st.BottomOffset() + planted)
	ancestors := 0
	for _, m := range res.Methods {
		if m == engine.BaseMethod {
			continue
		}
		for _, dr := range res.Attribution.Drivers {
			if dr.Method != m || dr.ChildLevel != bottomLevel || dr.Rank != 1 {
				continue
			}
			under := false
			for _, dr2 := range res.Attribution.Drivers {
				if dr2.Method == m && dr2.Parent == dr.Parent && dr2.Child == want {
					under = true
				}
			}
			if !under {
				continue
			}
			ancestors++
			if dr.Child != want {
				t.Errorf("%s: first driver of %s is %s, want %s", m, dr.Parent, dr.Child, want)
			}
		}
	}
	if ancestors != 2*(len(st.Levels)-1) {
		t.Errorf("checked %d ancestor rankings, want %d", ancestors, 2*(len(st.Levels)-1))
	}
}

func TestBacktestRefusesTooShortHistory(t *testing.T) {
	d := chain(t, 3)
	_, err := engine.Backtest(context.Background(), d, engine.BacktestOptions{Origins: 20})
	if err == nil || !strings.Contains(err.Error(), "need at least 55") {
		t.Fatalf("got %v, want a message naming the 55 periods needed", err)
	}
}

// TestBacktestScoresAreTheAccuracyMeasures recomputes the total's level
// scores from the origins with package accuracy (checked against base R
// in accuracy_test.go).
func TestBacktestScoresAreTheAccuracyMeasures(t *testing.T) {
	d := chain(t, 4)
	res, err := engine.Backtest(context.Background(), d, engine.BacktestOptions{
		Options: engine.Options{Model: families.Spec{Family: "seasonal-naive"}, Horizon: 5},
		Origins: 3, Compare: []string{"base", "mint-shrink"}})
	if err != nil {
		t.Fatal(err)
	}
	for _, m := range res.Methods {
		var mase, rmsse float64
		cov := make([]float64, len(res.Levels))
		for _, org := range res.Origins {
			r := org.Results[m]
			mae, mse, _ := accuracy.Scale(r.History[0], res.Period)
			if mae != org.ScaleMAE[0] || mse != org.ScaleMSE[0] {
				t.Errorf("scale %v %v, accuracy.Scale %v %v", org.ScaleMAE[0], org.ScaleMSE[0], mae, mse)
			}
			mase += accuracy.MASE(org.Actual[0], r.Solution.Forecast[0], mae) / 3
			rmsse += accuracy.RMSSE(org.Actual[0], r.Solution.Forecast[0], mse) / 3
			for l, lv := range res.Levels {
				for k, a := range org.Actual[0] {
					lo, hi := r.Bounds(0, k, lv)
					if accuracy.Covered(lo, hi, a) {
						cov[l] += 1.0 / 15
					}
				}
			}
		}
		s, ok := res.LevelScore("total", m)
		if !ok || math.Abs(s.MASE-mase) > 1e-12 || math.Abs(s.RMSSE-rmsse) > 1e-12 {
			t.Errorf("%s: total MASE %v RMSSE %v, recomputed %v %v", m, s.MASE, s.RMSSE, mase, rmsse)
		}
		for l := range cov {
			if math.Abs(s.Coverage[l]-cov[l]) > 1e-12 {
				t.Errorf("%s: coverage %v, recomputed %v", m, s.Coverage[l], cov[l])
			}
		}
		// run.json names each interval's coverage by the interval, as
		// the scores table does (it was once an unlabelled array).
		raw, err := json.Marshal(s)
		if err != nil {
			t.Fatal(err)
		}
		var named map[string]any
		if err := json.Unmarshal(raw, &named); err != nil {
			t.Fatal(err)
		}
		for l, lv := range res.Levels {
			key := "coverage_" + engine.LevelLabel(lv)
			if got, ok := named[key].(float64); !ok || math.Abs(got-cov[l]) > 1e-12 {
				t.Errorf("%s: run.json's %s is %v, recomputed %v", m, key, named[key], cov[l])
			}
		}
	}
}

// TestBacktestDistributionScores: each level's CRPS is the mean of
// accuracy.CRPSGaussian of every scored node, origin and step's Gaussian
// N(forecast, variance) over the node's scale (the per-node formula is
// checked against base R in accuracy); every method's energy score is
// finite, positive and repeats exactly in a second run (seeded draws).
// A method whose distribution is narrower than the errors (here the
// forecasts scored with a tenth of their spread) gets a worse CRPS.
func TestBacktestDistributionScores(t *testing.T) {
	d := chain(t, 4)
	opt := engine.BacktestOptions{
		Options: engine.Options{Model: families.Spec{Family: "drift"}, Horizon: 4, Fitter: engine.Local{Workers: 2}},
		Origins: 2, Compare: []string{"base", "bottom-up", "mint-shrink"}}
	res, err := engine.Backtest(context.Background(), d, opt)
	if err != nil {
		t.Fatal(err)
	}
	type key struct{ level, method string }
	sum, count, narrow := map[key]float64{}, map[key]int{}, map[key]float64{}
	for _, org := range res.Origins {
		st := org.Structure
		for _, m := range res.Methods {
			sol := org.Results[m].Solution
			for i, node := range st.Nodes {
				if !org.Scored(i) {
					continue
				}
				k := key{st.Levels[node.Level].Name, m}
				count[k]++
				for s := 0; s < res.Horizon; s++ {
					sd := math.Sqrt(sol.Variance[i][s])
					sum[k] += accuracy.CRPSGaussian(sol.Forecast[i][s], sd, org.Actual[i][s]) / org.ScaleMAE[i] / float64(res.Horizon)
					narrow[k] += accuracy.CRPSGaussian(sol.Forecast[i][s], sd/10, org.Actual[i][s]) / org.ScaleMAE[i] / float64(res.Horizon)
				}
			}
		}
	}
	for k, n := range count {
		s, ok := res.LevelScore(k.level, k.method)
		if !ok {
			t.Fatalf("no score for %+v", k)
		}
		if want := sum[k] / float64(n); math.Abs(s.CRPS-want) > 1e-9*want {
			t.Errorf("%+v: CRPS %v, direct %v", k, s.CRPS, want)
		}
		if narrow[k] <= sum[k] {
			t.Errorf("%+v: a tenth of the spread scores %v, no worse than %v", k, narrow[k]/float64(n), sum[k]/float64(n))
		}
	}
	again, err := engine.Backtest(context.Background(), d, opt)
	if err != nil {
		t.Fatal(err)
	}
	for i, h := range res.Headline {
		if !(h.EnergyScore > 0) || math.IsInf(h.EnergyScore, 0) || len(h.EnergyByStep) != res.Horizon {
			t.Errorf("%s: energy score %v by step %v", h.Method, h.EnergyScore, h.EnergyByStep)
		}
		if again.Headline[i].EnergyScore != h.EnergyScore {
			t.Errorf("%s: energy score %v then %v", h.Method, h.EnergyScore, again.Headline[i].EnergyScore)
		}
	}
}

// TestForecastCalibration: a forecast asked to calibrate records the
// backtest's check and applies factors only when it says they helped;
// Bounds then widen or narrow z·sd by the factor of the node's level,
// step group and interval level, and stay centred on the forecast.
func TestForecastCalibration(t *testing.T) {
	d := chain(t, 4)
	opt := engine.Options{Model: families.Spec{Family: "drift"}, Horizon: 6, Fitter: engine.Local{Workers: 2},
		Reconcile: engine.Reconciliation{Method: "bottom-up", Calibrate: 4}}
	res, err := engine.Forecast(context.Background(), d, opt)
	if err != nil {
		t.Fatal(err)
	}
	rec := res.Report.Reconcile.Calibration
	if rec == nil || rec.Origins != 4 || rec.Check.Method != "bottom-up" || rec.Check.Origins != 2 {
		t.Fatalf("calibration record %+v", rec)
	}
	if rec.Applied != rec.Check.Helps || (res.Calibration != nil) != rec.Applied {
		t.Fatalf("applied %v, helps %v, factors %v", rec.Applied, rec.Check.Helps, res.Calibration != nil)
	}
	plain := *res
	plain.Calibration, plain.Shape = nil, nil // Gaussian
	cal := &engine.Calibration{Levels: res.Structure.LevelNames(), Groups: [][2]int{{1, 3}, {4, 6}}, Intervals: []float64{80, 95}}
	for range cal.Levels {
		cal.Factor = append(cal.Factor, [][]float64{{2, 1}, {0.5, 1}})
		cal.Count = append(cal.Count, []int{12, 0})
	}
	res.Calibration = cal
	// run.json writes one object per level and horizon group, each
	// factor named by its interval ("level" is a level of the structure).
	raw, err := json.Marshal(cal)
	if err != nil {
		t.Fatal(err)
	}
	var named struct {
		Factors []map[string]any `json:"factors"`
	}
	if err := json.Unmarshal(raw, &named); err != nil {
		t.Fatal(err)
	}
	if len(named.Factors) != 2*len(cal.Levels) {
		t.Fatalf("the calibration is written as %s", raw)
	}
	if f := named.Factors[1]; f["level"] != cal.Levels[0] || f["first_step"] != 4.0 || f["last_step"] != 6.0 ||
		f["errors"] != 0.0 || f["factor_80"] != 0.5 || f["factor_95"] != 1.0 {
		t.Errorf("the second horizon group of %s is written as %v", cal.Levels[0], f)
	}
	for i := range res.Structure.Nodes {
		for k := 0; k < 6; k++ {
			want := 2.0
			if k >= 3 {
				want = 0.5
			}
			lo, hi := res.Bounds(i, k, 80)
			plo, phi := plain.Bounds(i, k, 80)
			f := res.Solution.Forecast[i][k]
			if res.Nonnegative || plo <= 0 {
				continue // a clamped lower bound does not scale
			}
			if math.Abs((hi-lo)-want*(phi-plo)) > 1e-9*(phi-plo) || math.Abs((hi+lo)/2-f) > 1e-9*math.Abs(f) {
				t.Fatalf("node %d step %d: [%v, %v], uncalibrated [%v, %v], factor %v", i, k+1, lo, hi, plo, phi, want)
			}
			lo, hi = res.Bounds(i, k, 95)
			plo, phi = plain.Bounds(i, k, 95)
			if lo != plo || hi != phi {
				t.Fatalf("node %d step %d: 95%% interval [%v, %v] with factor 1, uncalibrated [%v, %v]", i, k+1, lo, hi, plo, phi)
			}
		}
	}
	opt.Reconcile.Calibrate = -1
	if _, err := engine.Forecast(context.Background(), d, opt); err == nil || !strings.Contains(err.Error(), "calibration origins") {
		t.Errorf("negative calibration origins: %v", err)
	}
}

// TestCoverageRange: the share CoverageRange returns is the scores
// table's coverage at that level, its range holds it, and the same
// backtest gives the same range.
func TestCoverageRange(t *testing.T) {
	d := chain(t, 4)
	res, err := engine.Backtest(context.Background(), d, engine.BacktestOptions{
		Options: engine.Options{Model: families.Spec{Family: "seasonal-naive"}, Horizon: 5},
		Origins: 3, Compare: []string{"base", "mint-shrink"}})
	if err != nil {
		t.Fatal(err)
	}
	for _, m := range res.Methods {
		for _, level := range res.Structure.LevelNames() {
			s, ok := res.LevelScore(level, m)
			if !ok {
				continue
			}
			for l, lv := range res.Levels {
				share, lo, hi, ok := res.CoverageRange(m, level, lv)
				if !ok {
					t.Fatalf("%s %s: no range", m, level)
				}
				if math.Abs(share-s.Coverage[l]) > 1e-12 {
					t.Errorf("%s %s %g%%: share %g, scores %g", m, level, lv, share, s.Coverage[l])
				}
				if !(lo <= share && share <= hi) {
					t.Errorf("%s %s %g%%: range %g–%g does not hold %g", m, level, lv, lo, hi, share)
				}
				_, lo2, hi2, _ := res.CoverageRange(m, level, lv)
				if lo2 != lo || hi2 != hi {
					t.Errorf("%s %s %g%%: range %g–%g, then %g–%g", m, level, lv, lo, hi, lo2, hi2)
				}
			}
		}
	}
}
