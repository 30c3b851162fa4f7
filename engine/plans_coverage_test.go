package engine_test

import (
	"context"
	"fmt"
	"math"
	"math/rand/v2"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"trueup/engine"
	"trueup/hierarchy"
	"trueup/models/families"
	"trueup/tableio"
)

// simulateAirline returns n months of four stores (two regions of two)
// following the airline model (1−B)(1−B¹²)y = (1+θB)(1+ΘB¹²)ε with θ =
// −0.4, Θ = −0.6, starting from a level of 1000 with a seasonal swing;
// the stores' shocks share a chain-wide factor (correlation 0.36).
func simulateAirline(rng *rand.Rand, n int) [4][]float64 {
	const theta, stheta, sd = -0.4, -0.6, 20.0
	var out [4][]float64
	common := make([]float64, n)
	for t := range common {
		common[t] = rng.NormFloat64()
	}
	for s := range out {
		y, e := make([]float64, n), make([]float64, n)
		for t := range n {
			e[t] = sd * (0.6*common[t] + 0.8*rng.NormFloat64())
			if t < 13 {
				y[t] = 1000 + 150*math.Sin(2*math.Pi*float64(t)/12) + e[t]
				continue
			}
			y[t] = y[t-1] + y[t-12] - y[t-13] + e[t] + theta*e[t-1] + stheta*e[t-12] + theta*stheta*e[t-13]
		}
		out[s] = y
	}
	return out
}

// TestPlanIntervalsCoverInSimulation measures how often the 80% and 95%
// intervals of quarter and year totals hold the simulated outcome: 300
// simulated chains of four stores following the airline model, each
// forecast by trueup (the airline form fitted per node, MinT with
// shrinkage) from an origin in April with 63 months of history, 12
// months ahead, and compared with the months that follow in the
// simulation. The plan totals' intervals must cover as often as the
// monthly forecasts' own intervals do in the same runs (within 2.5
// points), and within 8 points of nominal. (Measured when written: 73.4%
// and 90.3% for the totals, 74.0% and 90.4% for the months; with 123
// months of history 77.2% and 91.9% against 77.5% and 92.5%: what falls
// short of nominal is the monthly intervals', from estimating the models
// and the reconciliation on a short history, not the totals'.) Adding
// the monthly variances as if the months erred independently, measured
// too, covers far less (49.7% and 68.7%), so the test can fail.
func TestPlanIntervalsCoverInSimulation(t *testing.T) {
	const reps, T, h = 300, 63, 12
	rng := rand.New(rand.NewPCG(17, 2026))
	dir := t.TempDir()
	levels := []float64{80, 95}
	inside := make([]int, len(levels))
	insideIndep := make([]int, len(levels))
	count := 0
	insideMonth, months := make([]int, len(levels)), 0
	for r := range reps {
		y := simulateAirline(rng, T+h)
		var b strings.Builder
		b.WriteString("period,region,store,sales\n")
		for s := range y {
			for t := range T {
				fmt.Fprintf(&b, "%s,R%d,S%d,%.4f\n", tableio.Period{Grain: tableio.Month, Index: 50*12 + t}, s/2, s, y[s][t])
			}
		}
		path := filepath.Join(dir, "sim.csv")
		if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
			t.Fatal(err)
		}
		d, err := engine.Load(engine.Source{Path: path, Time: "period", Value: "sales",
			Chains: []hierarchy.Chain{{"region", "store"}}})
		if err != nil {
			t.Fatal(err)
		}
		off := false
		res, err := engine.Forecast(context.Background(), d, engine.Options{
			Model: families.Spec{Form: "ARIMA(0,1,1)(0,1,1) m=12"}, Horizon: h, Levels: levels,
			Reconcile:  engine.Reconciliation{Nonnegative: &off},
			PlanGrains: []tableio.Grain{tableio.Quarter, tableio.Year}})
		if err != nil {
			t.Fatal(err)
		}
		if r == 0 && len(res.Plans.Periods) != 5 {
			t.Fatalf("%d plan periods", len(res.Plans.Periods))
		}
		st := res.Structure
		for i := range st.Nodes {
			for k := range h {
				outcome := 0.0
				for _, j := range st.S.Row(i) {
					outcome += y[j][T+k]
				}
				for l, lv := range levels {
					if lo, hi := res.Bounds(i, k, lv); lo <= outcome && outcome <= hi {
						insideMonth[l]++
					}
				}
				months++
			}
			for k, pp := range res.Plans.Periods {
				outcome := 0.0
				for _, j := range st.S.Row(i) {
					for c := pp.First; c < pp.End; c++ {
						outcome += y[j][c]
					}
				}
				indepVar := 0.0
				for c := max(pp.First, T); c < pp.End; c++ {
					indepVar += res.Solution.Variance[i][c-T]
				}
				total := res.Plans.Actual[i][k] + res.Plans.Forecast[i][k]
				for l, lv := range levels {
					lo, hi := res.PlanBounds(i, k, lv)
					if lo <= outcome && outcome <= hi {
						inside[l]++
					}
					if math.Abs(outcome-total) <= engine.Quantile(lv)*math.Sqrt(indepVar) {
						insideIndep[l]++
					}
				}
				count++
			}
		}
	}
	for l, lv := range levels {
		got, indep := float64(inside[l])/float64(count), float64(insideIndep[l])/float64(count)
		month := float64(insideMonth[l]) / float64(months)
		t.Logf("%v%% intervals of plan totals: %.1f%% cover (months as independent: %.1f%%), %d totals; monthly forecasts' own: %.1f%%",
			lv, 100*got, 100*indep, count, 100*month)
		if math.Abs(got-month) > 0.025 || math.Abs(got-lv/100) > 0.08 {
			t.Errorf("%v%% intervals cover %.1f%% of simulated totals, the monthly intervals %.1f%%", lv, 100*got, 100*month)
		}
		if indep > got-0.1 {
			t.Errorf("independent months cover %.1f%%, not clearly below %.1f%%", 100*indep, 100*got)
		}
	}
}
