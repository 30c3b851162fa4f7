package output

import (
	"math"

	"trueup/engine"
	"trueup/tableio"
)

// PlanTable has one row per node and plan period (engine.Plans): level,
// key columns, grain (quarter, year), period (2027-Q1, 2027),
// period_start, actual (the sum of the actuals of the plan period's data
// periods before the origin, 0 when none), forecast (the sum of the
// reconciled forecasts of the others), total (actual + forecast),
// periods_actual and periods_forecast (how many data periods each part
// holds), variance (of the forecast part's error, which is the total's)
// and per interval level L the bounds piL_lower and piL_upper of the
// total (engine.Result.PlanBounds; left out without variances).
func PlanTable(res *engine.Result) *tableio.Table {
	p := res.Plans
	m := len(p.Periods)
	n := len(res.Structure.Nodes)
	T := res.Calendar.T
	cols := keyColumns(res, m)
	float := func(name string) tableio.Column {
		return tableio.Column{Name: name, Type: tableio.Float64, Floats: make([]float64, 0, n*m)}
	}
	integer := func(name string) tableio.Column {
		return tableio.Column{Name: name, Type: tableio.Int64, Ints: make([]int64, 0, n*m)}
	}
	grain := tableio.Column{Name: "grain", Type: tableio.String, Strings: make([]string, 0, n*m)}
	period := tableio.Column{Name: "period", Type: tableio.String, Strings: make([]string, 0, n*m)}
	start := tableio.Column{Name: "period_start", Type: tableio.Date, Ints: make([]int64, 0, n*m)}
	actual, forecast, total := float("actual"), float("forecast"), float("total")
	nActual, nForecast := integer("periods_actual"), integer("periods_forecast")
	variance := float("variance")
	levels := res.Levels
	if p.Variance == nil {
		levels = nil
	}
	bounds := make([]tableio.Column, 2*len(levels))
	for l, lv := range levels {
		name := "pi" + engine.LevelLabel(lv)
		bounds[2*l], bounds[2*l+1] = float(name+"_lower"), float(name+"_upper")
	}
	for i := range n {
		for k, pp := range p.Periods {
			grain.Strings = append(grain.Strings, pp.Period.Grain.String())
			period.Strings = append(period.Strings, pp.Period.String())
			start.Ints = append(start.Ints, pp.Period.Start().Unix()/86400)
			actual.Floats = append(actual.Floats, p.Actual[i][k])
			forecast.Floats = append(forecast.Floats, p.Forecast[i][k])
			total.Floats = append(total.Floats, p.Actual[i][k]+p.Forecast[i][k])
			nActual.Ints = append(nActual.Ints, int64(pp.ActualPeriods(T)))
			nForecast.Ints = append(nForecast.Ints, int64(pp.ForecastPeriods(T)))
			v := math.NaN()
			if p.Variance != nil {
				v = p.Variance[i][k]
			}
			variance.Floats = append(variance.Floats, v)
			for l, lv := range levels {
				lo, hi := res.PlanBounds(i, k, lv)
				bounds[2*l].Floats = append(bounds[2*l].Floats, lo)
				bounds[2*l+1].Floats = append(bounds[2*l+1].Floats, hi)
			}
		}
	}
	cols = append(cols, grain, period, start, actual, forecast, total, nActual, nForecast, variance)
	return &tableio.Table{Columns: append(cols, bounds...)}
}
