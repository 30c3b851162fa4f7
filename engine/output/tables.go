package output

import (
	"encoding/json"
	"fmt"
	"math"
	"strconv"

	"trueup/engine"
	"trueup/tableio"
)

// Table is a named result table; the file name is Name plus the format's
// extension.
type Table struct {
	Name  string
	Table *tableio.Table
}

// Tables returns the tables of a result: forecasts always; plans when the
// result holds plan totals; models, residuals and history when the result
// holds fitted models (a forecast run, not a reconciliation of given base
// forecasts).
func Tables(res *engine.Result) []Table {
	out := []Table{{"forecasts", ForecastTable(res)}}
	if res.Plans != nil {
		out = append(out, Table{"plans", PlanTable(res)})
	}
	for _, f := range res.Fits {
		if f.Fitted {
			return append(out, Table{"models", ModelTable(res)}, Table{"residuals", ResidualTable(res)},
				Table{"history", HistoryTable(res)})
		}
	}
	return out
}

// keyColumns returns one column per key attribute with the node's value,
// or null where the node aggregates over that attribute; an attribute that
// was an integer column in the input is written as integers again. repeat
// says how many consecutive rows each node occupies. A column is named by
// engine.KeyColumn: "key_origin" for an attribute named like a result
// column.
func keyColumns(res *engine.Result, repeat int) []tableio.Column {
	st := res.Structure
	cols := make([]tableio.Column, len(st.Attrs)+1)
	n := len(st.Nodes) * repeat
	cols[0] = tableio.Column{Name: "level", Type: tableio.String, Strings: make([]string, 0, n)}
	integer := make([]bool, len(st.Attrs))
	for a, name := range st.Attrs {
		integer[a] = a < len(res.KeyTypes) && res.KeyTypes[a] == tableio.Int64
		cols[a+1] = tableio.Column{Name: engine.KeyColumn(name), Type: tableio.String, Null: make([]bool, 0, n)}
		if integer[a] {
			cols[a+1].Type, cols[a+1].Ints = tableio.Int64, make([]int64, 0, n)
		} else {
			cols[a+1].Strings = make([]string, 0, n)
		}
	}
	for _, node := range st.Nodes {
		for r := 0; r < repeat; r++ {
			cols[0].Strings = append(cols[0].Strings, st.Levels[node.Level].Name)
			for a, v := range node.Key {
				c := &cols[a+1]
				c.Null = append(c.Null, v == "")
				if integer[a] {
					x, _ := strconv.ParseInt(v, 10, 64) // written from an integer by tableio; "" is null
					c.Ints = append(c.Ints, x)
				} else {
					c.Strings = append(c.Strings, v)
				}
			}
		}
	}
	return cols
}

// periodColumns returns the period as text ("period", e.g. 2026-03) and as
// a typed date, the first day of the period ("period_start"; null for a
// step index, which has no calendar), for the periods from the calendar's
// column first, count of them, each repeated for every node.
func periodColumns(res *engine.Result, first, count int) (label, start tableio.Column) {
	n := len(res.Structure.Nodes) * count
	label = tableio.Column{Name: "period", Type: tableio.String, Strings: make([]string, 0, n)}
	start = tableio.Column{Name: "period_start", Type: tableio.Date, Ints: make([]int64, 0, n), Null: make([]bool, 0, n)}
	labels, days, dated := make([]string, count), make([]int64, count), make([]bool, count)
	for k := range labels {
		p := res.Calendar.Period(first + k)
		labels[k] = p.String()
		if dated[k] = p.HasDate(); dated[k] {
			days[k] = p.Start().Unix() / 86400
		}
	}
	for range res.Structure.Nodes {
		for k := range labels {
			label.Strings = append(label.Strings, labels[k])
			start.Ints = append(start.Ints, days[k])
			start.Null = append(start.Null, !dated[k])
		}
	}
	return label, start
}

// ForecastTable has one row per node and step: level, key columns,
// period, step, base forecast and its variance, the reconciled forecast,
// whether a lock fixed it (locked: true where the lock table gave the
// value, so its interval has no width) and, per interval level L, the
// bounds piL_lower and piL_upper (see engine.Result.Bounds; left out
// when the result has no variances).
func ForecastTable(res *engine.Result) *tableio.Table {
	h := res.Horizon
	st := res.Structure
	n := len(st.Nodes)
	cols := keyColumns(res, h)
	period, periodStart := periodColumns(res, res.Calendar.T, h)
	step := tableio.Column{Name: "step", Type: tableio.Int64, Ints: make([]int64, 0, n*h)}
	base := tableio.Column{Name: "base", Type: tableio.Float64, Floats: make([]float64, 0, n*h)}
	baseVar := tableio.Column{Name: "base_variance", Type: tableio.Float64, Floats: make([]float64, 0, n*h)}
	fc := tableio.Column{Name: "forecast", Type: tableio.Float64, Floats: make([]float64, 0, n*h)}
	locked := tableio.Column{Name: "locked", Type: tableio.Bool, Ints: make([]int64, n*h)}
	for _, l := range res.Locks {
		locked.Ints[l.Node*h+l.Step] = 1
	}
	levels := res.Levels
	if res.Solution.Variance == nil {
		levels = nil // no variances, no intervals: the columns are left out
	}
	bounds := make([]tableio.Column, 2*len(levels))
	for l, lv := range levels {
		name := "pi" + engine.LevelLabel(lv)
		bounds[2*l] = tableio.Column{Name: name + "_lower", Type: tableio.Float64, Floats: make([]float64, 0, n*h)}
		bounds[2*l+1] = tableio.Column{Name: name + "_upper", Type: tableio.Float64, Floats: make([]float64, 0, n*h)}
	}
	for i := 0; i < n; i++ {
		for k := 0; k < h; k++ {
			step.Ints = append(step.Ints, int64(k+1))
			base.Floats = append(base.Floats, res.Fits[i].Mean[k])
			v := math.NaN()
			if res.Fits[i].Variance != nil {
				v = res.Fits[i].Variance[k]
			}
			baseVar.Floats = append(baseVar.Floats, v)
			fc.Floats = append(fc.Floats, res.Solution.Forecast[i][k])
			for l, lv := range levels {
				lo, hi := res.Bounds(i, k, lv)
				bounds[2*l].Floats = append(bounds[2*l].Floats, lo)
				bounds[2*l+1].Floats = append(bounds[2*l+1].Floats, hi)
			}
		}
	}
	cols = append(cols, period, periodStart, step, base, baseVar, fc, locked)
	cols = append(cols, bounds...)
	return &tableio.Table{Columns: cols}
}

// ResidualTable has one row per node and history period: level, key
// columns, period and the in-sample one-step residual y_t − ŷ_t|t−1 of the
// node's model (null where there is none: before the node existed, or
// where the model has no one-step forecast). It is what the reconciliation
// estimated its covariance from, and what trueup reconcile --residuals
// reads.
func ResidualTable(res *engine.Result) *tableio.Table {
	T := res.Calendar.T
	n := len(res.Fits)
	cols := keyColumns(res, T)
	period, periodStart := periodColumns(res, 0, T)
	resid := tableio.Column{Name: "residual", Type: tableio.Float64, Floats: make([]float64, 0, n*T)}
	row := make([]float64, T)
	for _, f := range res.Fits {
		f.ResidualsOnCalendar(row)
		resid.Floats = append(resid.Floats, row...)
	}
	return &tableio.Table{Columns: append(cols, period, periodStart, resid)}
}

// HistoryTable has one row per node and history period: level, key
// columns, period, period_start, value and like_for_like. value is the
// sum of the node's bottom series that existed in the period (null when
// none did), so every aggregate row is the sum of its children's rows,
// closed stores included. like_for_like is the series the node's model
// was fitted on (engine.Result.History): for an aggregate with closed
// members, the sum of its still-trading members only; otherwise value.
func HistoryTable(res *engine.Result) *tableio.Table {
	T := res.Calendar.T
	n := len(res.History)
	cols := keyColumns(res, T)
	period, periodStart := periodColumns(res, 0, T)
	// The bottom rows of the fitted history are the bottom series
	// themselves (a closed series is fitted on its own span).
	coherent := res.Structure.S.Aggregate(res.History[res.Structure.BottomOffset():])
	value := tableio.Column{Name: "value", Type: tableio.Float64, Floats: make([]float64, 0, n*T)}
	fitted := tableio.Column{Name: "like_for_like", Type: tableio.Float64, Floats: make([]float64, 0, n*T)}
	for i, h := range res.History {
		value.Floats = append(value.Floats, coherent[i][:T]...)
		fitted.Floats = append(fitted.Floats, h[:T]...)
	}
	return &tableio.Table{Columns: append(cols, period, periodStart, value, fitted)}
}

// ModelTable has one row per node: its status (NodeStatus), the family
// fitted and the model in the form --model accepts, its parameters as
// JSON text, AICc, the innovation variance and the scale it is on
// (VarianceScale), the number of observations, any warning, and the
// Ljung–Box check of its residuals (engine.ResidualCheck at the run's
// seasonal period): ljung_box_lags (0 when too few residuals),
// ljung_box_q and ljung_box_p (null then). A closed node's family and
// model are those its history was fitted with ("none" when it has no
// observations); its status says it is forecast as zero.
func ModelTable(res *engine.Result) *tableio.Table {
	n := len(res.Fits)
	cols := keyColumns(res, 1)
	status := tableio.Column{Name: "status", Type: tableio.String, Strings: make([]string, n)}
	family := tableio.Column{Name: "family", Type: tableio.String, Strings: make([]string, n)}
	model := tableio.Column{Name: "model", Type: tableio.String, Strings: make([]string, n)}
	params := tableio.Column{Name: "params", Type: tableio.String, Strings: make([]string, n)}
	aicc := tableio.Column{Name: "aicc", Type: tableio.Float64, Floats: make([]float64, n)}
	variance := tableio.Column{Name: "innovation_variance", Type: tableio.Float64, Floats: make([]float64, n)}
	scale := tableio.Column{Name: "variance_scale", Type: tableio.String, Strings: make([]string, n)}
	nobs := tableio.Column{Name: "observations", Type: tableio.Int64, Ints: make([]int64, n)}
	warn := tableio.Column{Name: "warning", Type: tableio.String, Strings: make([]string, n), Null: make([]bool, n)}
	lbLags := tableio.Column{Name: "ljung_box_lags", Type: tableio.Int64, Ints: make([]int64, n)}
	lbQ := tableio.Column{Name: "ljung_box_q", Type: tableio.Float64, Floats: make([]float64, n)}
	lbP := tableio.Column{Name: "ljung_box_p", Type: tableio.Float64, Floats: make([]float64, n)}
	m := max(res.Report.Counts.SeasonalLag, 1)
	for i, f := range res.Fits {
		check := f.ResidualCheck(m)
		lbLags.Ints[i], lbQ.Floats[i], lbP.Floats[i] = int64(check.Lags), check.Statistic, check.PValue
		warn.Strings[i] = f.Warning
		warn.Null[i] = f.Warning == ""
		status.Strings[i] = NodeStatus(f)
		family.Strings[i], model.Strings[i] = f.Family, f.Spec
		if !f.Fitted {
			family.Strings[i], model.Strings[i] = "none", "none"
		}
		scale.Strings[i] = VarianceScale(f)
		params.Strings[i] = paramsJSON(f.Params)
		aicc.Floats[i] = finiteOrNaN(f.Criteria.AICc)
		variance.Floats[i] = f.Sigma2
		nobs.Ints[i] = int64(f.NObs)
	}
	cols = append(cols, status, family, model, params, aicc, variance, scale, nobs, warn, lbLags, lbQ, lbP)
	return &tableio.Table{Columns: cols}
}

// Node states, one wording everywhere: a node trades over the whole
// history, opened after its first period, or closed (no sales in the
// latest periods: forecast as zero).
const (
	StatusTrading    = "trading"
	StatusOpenedLate = "opened late"
	StatusClosed     = "closed"
)

// NodeStatus is the node's state: closed wins over opened late.
func NodeStatus(f engine.NodeFit) string {
	switch {
	case f.Closed:
		return StatusClosed
	case f.First > 0:
		return StatusOpenedLate
	default:
		return StatusTrading
	}
}

// VarianceScale names the scale a fit's innovation variance is on: "log"
// or "Box-Cox" when the model was fitted to transformed values,
// "seasonally adjusted" for a Theta fit to seasonally adjusted values,
// and "data" otherwise (sales units squared).
func VarianceScale(f engine.NodeFit) string {
	if tr, ok := f.Params["transform"].(map[string]any); ok {
		switch tr["kind"] {
		case "log":
			return "log"
		case "boxcox":
			return "Box-Cox"
		}
	}
	if _, ok := f.Params["seasonal_indices"]; ok && f.Family == "theta" {
		return "seasonally adjusted"
	}
	return "data"
}

// paramsJSON marshals parameters with sorted keys (encoding/json sorts map
// keys), replacing non-finite numbers, which JSON cannot carry, by null.
func paramsJSON(p map[string]any) string {
	clean := make(map[string]any, len(p))
	for k, v := range p {
		if f, ok := v.(float64); ok && (math.IsNaN(f) || math.IsInf(f, 0)) {
			clean[k] = nil
			continue
		}
		clean[k] = v
	}
	b, err := json.Marshal(clean)
	if err != nil {
		return fmt.Sprintf(`{"error":%q}`, err.Error())
	}
	return string(b)
}

func finiteOrNaN(x float64) float64 {
	if math.IsInf(x, 0) {
		return math.NaN()
	}
	return x
}
