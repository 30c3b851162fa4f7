package engine_test

import (
	"context"
	"math"
	"path/filepath"
	"strconv"
	"testing"
	"time"

	"trueup/engine"
	"trueup/fixtures"
	"trueup/inputerr"
	"trueup/models/families"
	"trueup/tableio"
)

var quarterYear = []tableio.Grain{tableio.Quarter, tableio.Year}

// smallPlans forecasts the small invented chain from an origin in May,
// by quarter and year.
func smallPlans(t *testing.T, opt engine.Options) *engine.Result {
	t.Helper()
	d := chain(t, 4)
	cut, err := d.Cut(d.Panel.T - 8) // the last history month is April
	if err != nil {
		t.Fatal(err)
	}
	if m := cut.Panel.Period(cut.Panel.T - 1).Start().Month(); m != time.April {
		t.Fatalf("last history month %v", m)
	}
	opt.PlanGrains = quarterYear
	res, err := engine.Forecast(context.Background(), cut, opt)
	if err != nil {
		t.Fatal(err)
	}
	return res
}

func closeTo(a, b float64) bool { return math.Abs(a-b) <= 1e-9*math.Max(1, math.Abs(b)) }

// TestPlanTotalsAreCoherent checks, from an origin in May with 12 months
// ahead, which plan periods are written (the year of the origin holds
// four months of actuals; the next year and its second quarter run past
// the horizon), that every total is its actual months from the history
// plus its forecast months, and that every total is the sum of its
// children's, for each way a node splits.
func TestPlanTotalsAreCoherent(t *testing.T) {
	res := smallPlans(t, engine.Options{Model: families.Spec{Family: "drift"}, Horizon: 12})
	p := res.Plans
	y := res.ForecastPeriod(0).Start().Year()
	want := []string{q(y, 2), q(y, 3), q(y, 4), q(y+1, 1), strconv.Itoa(y)}
	if len(p.Periods) != len(want) {
		t.Fatalf("%d plan periods, want %v", len(p.Periods), want)
	}
	for k, pp := range p.Periods {
		if pp.Period.String() != want[k] {
			t.Errorf("plan period %d is %s, want %s", k, pp.Period, want[k])
		}
	}
	if len(p.LeftOut) != 2 {
		t.Errorf("left out: %q, want the next year's Q2 and the next year", p.LeftOut)
	}
	T := res.Calendar.T
	if a, f := p.Periods[0].ActualPeriods(T), p.Periods[0].ForecastPeriods(T); a != 1 || f != 2 {
		t.Errorf("%s: %d actual and %d forecast months, want 1 and 2", p.Periods[0].Period, a, f)
	}
	if a, f := p.Periods[4].ActualPeriods(T), p.Periods[4].ForecastPeriods(T); a != 4 || f != 8 {
		t.Errorf("%s: %d actual and %d forecast months, want 4 and 8", p.Periods[4].Period, a, f)
	}

	st := res.Structure
	// Actuals are the sums of the bottom series that existed (as the
	// history table's value).
	bottom := res.History[st.BottomOffset():]
	for i := range st.Nodes {
		for k, pp := range p.Periods {
			var actual, forecast float64
			for t := pp.First; t < pp.End; t++ {
				if t >= T {
					forecast += res.Solution.Forecast[i][t-T]
					continue
				}
				for _, j := range st.S.Row(i) {
					if v := bottom[j][t]; !math.IsNaN(v) {
						actual += v
					}
				}
			}
			if !closeTo(p.Actual[i][k], actual) || !closeTo(p.Forecast[i][k], forecast) {
				t.Errorf("%s %s: actual %v forecast %v, want %v and %v", st.Label(i), pp.Period,
					p.Actual[i][k], p.Forecast[i][k], actual, forecast)
			}
			lo, hi := res.PlanBounds(i, k, 80)
			if total := actual + forecast; !(lo <= total && total <= hi) {
				t.Errorf("%s %s: total %v outside its interval [%v, %v]", st.Label(i), pp.Period, total, lo, hi)
			}
		}
		for _, split := range st.Splits(i) {
			for k, pp := range p.Periods {
				var a, f float64
				for _, c := range split.Nodes {
					a += p.Actual[c][k]
					f += p.Forecast[c][k]
				}
				if !closeTo(a, p.Actual[i][k]) || !closeTo(f, p.Forecast[i][k]) {
					t.Errorf("%s %s: children sum to %v + %v, the node is %v + %v", st.Label(i), pp.Period,
						a, f, p.Actual[i][k], p.Forecast[i][k])
				}
			}
		}
	}
}

// TestOneForecastMonthHasItsOwnVariance: a quarter whose last month alone
// is forecast has the variance of that month's forecast.
func TestOneForecastMonthHasItsOwnVariance(t *testing.T) {
	d := chain(t, 4)
	cut, err := d.Cut(d.Panel.T - 7) // last history month May: June is Q2's one forecast month
	if err != nil {
		t.Fatal(err)
	}
	res, err := engine.Forecast(context.Background(), cut, engine.Options{Model: families.Spec{Family: "drift"},
		Horizon: 7, PlanGrains: []tableio.Grain{tableio.Quarter}})
	if err != nil {
		t.Fatal(err)
	}
	p := res.Plans
	if p.Periods[0].ForecastPeriods(res.Calendar.T) != 1 {
		t.Fatalf("%s has %d forecast months", p.Periods[0].Period, p.Periods[0].ForecastPeriods(res.Calendar.T))
	}
	for i := range res.Structure.Nodes {
		if v := res.Solution.Variance[i][0]; !closeTo(p.Variance[i][0], v) {
			t.Errorf("%s: plan variance %v, month variance %v", res.Structure.Label(i), p.Variance[i][0], v)
		}
	}
}

// TestWeeklyPlansCountEachWeekOnce: from weekly data, months, quarters and
// years hold the weeks whose Thursday falls in them, and every forecast
// week lies in exactly one plan period of each grain.
func TestWeeklyPlansCountEachWeekOnce(t *testing.T) {
	cfg := fixtures.SmallConfig(3)
	cfg.Grain = "week"
	input := filepath.Join(t.TempDir(), "weekly.parquet")
	if err := tableio.WriteTable(input, fixtures.Generate(cfg).Table(), tableio.Parquet); err != nil {
		t.Fatal(err)
	}
	d, err := engine.Load(engine.Source{Path: input, Time: fixtures.DemoTimeColumn, Value: fixtures.DemoValueColumn,
		Chains: fixtures.DemoChains()})
	if err != nil {
		t.Fatal(err)
	}
	cut, err := d.Cut(d.Panel.T - 30)
	if err != nil {
		t.Fatal(err)
	}
	grains := []tableio.Grain{tableio.Year, tableio.Month, tableio.Quarter}
	res, err := engine.Forecast(context.Background(), cut, engine.Options{Model: families.Spec{Family: "drift"},
		Horizon: 60, PlanGrains: grains})
	if err != nil {
		t.Fatal(err)
	}
	T := res.Calendar.T
	for _, g := range grains {
		counted := map[int]int{}
		for _, pp := range res.Plans.Periods {
			if pp.Period.Grain != g {
				continue
			}
			for c := pp.First; c < pp.End; c++ {
				counted[c]++
				thursday := res.Calendar.Period(c).Start().AddDate(0, 0, 3)
				if tableio.FromDate(thursday, g) != pp.Period {
					t.Errorf("week %s counted in %s", res.Calendar.Period(c), pp.Period)
				}
			}
			if n := pp.End - pp.First; g == tableio.Month && (n < 4 || n > 5) || g == tableio.Quarter && (n < 13 || n > 14) {
				t.Errorf("%s holds %d weeks", pp.Period, n)
			}
		}
		for c := T; c < T+60; c++ {
			if counted[c] > 1 {
				t.Errorf("%s: week %s counted %d times", g, res.Calendar.Period(c), counted[c])
			}
		}
	}
}

func TestPlanGrainsMustBeCoarser(t *testing.T) {
	d := chain(t, 3)
	for _, grains := range [][]tableio.Grain{{tableio.Month}, {tableio.Week}, {tableio.Year, tableio.Year}, {tableio.Index}} {
		_, err := engine.Forecast(context.Background(), d, engine.Options{Model: families.Spec{Family: "drift"},
			PlanGrains: grains})
		if !inputerr.Is(err) || inputerr.OptionOf(err) != "PlanGrains" {
			t.Errorf("plan grains %v on monthly data: %v", grains, err)
		}
	}
}

func q(y, n int) string { return strconv.Itoa(y) + "-Q" + strconv.Itoa(n) }
