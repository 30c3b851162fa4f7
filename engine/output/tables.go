package engine

import (
	"encoding/json"
	"fmt"
	"math"
	"os"
	"path/filepath"

	"trueup/tableio"
)

// writeOutputs writes the forecasts and models tables in every requested
// format and returns the paths written. Each file is atomic; a failure
// part-way leaves the files already renamed in place and no partial file.
func writeOutputs(cfg Config, res *Result, rep *RunReport) ([]string, error) {
	if err := os.MkdirAll(cfg.OutDir, 0o755); err != nil {
		return nil, fmt.Errorf("create output directory: %w", err)
	}
	tables := []struct {
		name string
		t    *tableio.Table
	}{
		{"forecasts", forecastTable(cfg, res)},
		{"models", modelTable(res)},
		{"residuals", residualTable(res)},
	}
	var files []string
	for _, f := range cfg.Formats {
		for _, tb := range tables {
			path := filepath.Join(cfg.OutDir, tb.name+f.Ext())
			if err := tableio.WriteTable(path, tb.t, f); err != nil {
				return files, fmt.Errorf("write %s: %w", path, err)
			}
			files = append(files, path)
		}
	}
	return files, nil
}

// keyColumns returns one string column per key attribute with the node's
// value, or null where the node aggregates over that attribute. repeat
// says how many consecutive rows each node occupies.
func keyColumns(res *Result, repeat int) []tableio.Column {
	st := res.Structure
	cols := make([]tableio.Column, len(st.Attrs)+1)
	n := len(st.Nodes) * repeat
	cols[0] = tableio.Column{Name: "level", Type: tableio.String, Strings: make([]string, 0, n)}
	for a, name := range st.Attrs {
		cols[a+1] = tableio.Column{Name: name, Type: tableio.String, Strings: make([]string, 0, n), Null: make([]bool, 0, n)}
	}
	for _, node := range st.Nodes {
		for r := 0; r < repeat; r++ {
			cols[0].Strings = append(cols[0].Strings, st.Levels[node.Level].Name)
			for a, v := range node.Key {
				cols[a+1].Strings = append(cols[a+1].Strings, v)
				cols[a+1].Null = append(cols[a+1].Null, v == "")
			}
		}
	}
	return cols
}

// forecastTable has one row per node and step: level, key columns,
// period, step, base, forecast and the interval bounds lo_L, hi_L (see
// Result.Bounds).
func forecastTable(cfg Config, res *Result) *tableio.Table {
	h := cfg.Horizon
	st := res.Structure
	n := len(st.Nodes)
	cols := keyColumns(res, h)
	period := tableio.Column{Name: "period", Type: tableio.String, Strings: make([]string, 0, n*h)}
	step := tableio.Column{Name: "step", Type: tableio.Int64, Ints: make([]int64, 0, n*h)}
	base := tableio.Column{Name: "base", Type: tableio.Float64, Floats: make([]float64, 0, n*h)}
	fc := tableio.Column{Name: "forecast", Type: tableio.Float64, Floats: make([]float64, 0, n*h)}
	bounds := make([]tableio.Column, 2*len(cfg.Levels))
	z := make([]float64, len(cfg.Levels))
	for l, lv := range cfg.Levels {
		z[l] = quantile(lv)
		bounds[2*l] = tableio.Column{Name: "lo_" + levelLabel(lv), Type: tableio.Float64, Floats: make([]float64, 0, n*h)}
		bounds[2*l+1] = tableio.Column{Name: "hi_" + levelLabel(lv), Type: tableio.Float64, Floats: make([]float64, 0, n*h)}
	}
	labels := make([]string, h)
	for k := range labels {
		labels[k] = res.ForecastPeriod(k).String()
	}
	for i := 0; i < n; i++ {
		for k := 0; k < h; k++ {
			period.Strings = append(period.Strings, labels[k])
			step.Ints = append(step.Ints, int64(k+1))
			base.Floats = append(base.Floats, res.Fits[i].Mean[k])
			fc.Floats = append(fc.Floats, res.Solution.Forecast[i][k])
			for l := range z {
				lo, hi := res.bounds(i, k, z[l])
				bounds[2*l].Floats = append(bounds[2*l].Floats, lo)
				bounds[2*l+1].Floats = append(bounds[2*l+1].Floats, hi)
			}
		}
	}
	cols = append(cols, period, step, base, fc)
	cols = append(cols, bounds...)
	return &tableio.Table{Columns: cols}
}

// residualTable has one row per node and history period: level, key
// columns, period and the in-sample one-step residual y_t − ŷ_t|t−1 of the
// node's model (null where there is none: before the node existed, or
// where the model has no one-step forecast). It is what the reconciliation
// estimated its covariance from, and what trueup reconcile --residuals
// reads.
func residualTable(res *Result) *tableio.Table {
	T := res.Panel.T
	n := len(res.Fits)
	cols := keyColumns(res, T)
	period := tableio.Column{Name: "period", Type: tableio.String, Strings: make([]string, 0, n*T)}
	resid := tableio.Column{Name: "residual", Type: tableio.Float64, Floats: make([]float64, 0, n*T)}
	labels := make([]string, T)
	for t := range labels {
		labels[t] = res.Panel.Period(t).String()
	}
	row := make([]float64, T)
	for _, f := range res.Fits {
		f.residualsOnCalendar(row)
		period.Strings = append(period.Strings, labels...)
		resid.Floats = append(resid.Floats, row...)
	}
	return &tableio.Table{Columns: append(cols, period, resid)}
}

// modelTable has one row per node: the chosen family, its spec, its
// parameters as JSON text, AICc, σ², the number of observations and any
// warning.
func modelTable(res *Result) *tableio.Table {
	n := len(res.Fits)
	cols := keyColumns(res, 1)
	family := tableio.Column{Name: "family", Type: tableio.String, Strings: make([]string, n)}
	spec := tableio.Column{Name: "spec", Type: tableio.String, Strings: make([]string, n)}
	params := tableio.Column{Name: "params", Type: tableio.String, Strings: make([]string, n)}
	aicc := tableio.Column{Name: "aicc", Type: tableio.Float64, Floats: make([]float64, n)}
	sigma2 := tableio.Column{Name: "sigma2", Type: tableio.Float64, Floats: make([]float64, n)}
	nobs := tableio.Column{Name: "n_obs", Type: tableio.Int64, Ints: make([]int64, n)}
	warn := tableio.Column{Name: "warning", Type: tableio.String, Strings: make([]string, n), Null: make([]bool, n)}
	for i, f := range res.Fits {
		warn.Strings[i] = f.Warning
		warn.Null[i] = f.Warning == ""
		if f.Model == nil {
			family.Strings[i], spec.Strings[i], params.Strings[i] = "closed", "no observations", "{}"
			aicc.Floats[i], sigma2.Floats[i] = math.NaN(), math.NaN()
			continue
		}
		m := f.Model
		family.Strings[i] = m.Family()
		spec.Strings[i] = m.Spec()
		if f.Closed {
			family.Strings[i] = "closed"
			spec.Strings[i] = "zero after closing; history fitted by " + m.Spec()
		}
		params.Strings[i] = paramsJSON(m.Params())
		aicc.Floats[i] = finiteOrNaN(m.Criteria().AICc)
		sigma2.Floats[i] = m.Sigma2()
		nobs.Ints[i] = int64(m.NObs())
	}
	cols = append(cols, family, spec, params, aicc, sigma2, nobs, warn)
	return &tableio.Table{Columns: cols}
}

// Bounds returns the central prediction interval of node i at step k
// (0-based) for a level in percent, as written to the forecasts table: the
// Gaussian forecast ± z·sd with sd from the coherent variance. Under
// non-negative reconciliation a lower bound below zero is raised to zero
// (values below zero cannot occur, so coverage is unchanged).
func (r *Result) Bounds(i, k int, level float64) (lo, hi float64) {
	return r.bounds(i, k, quantile(level))
}

func (r *Result) bounds(i, k int, z float64) (lo, hi float64) {
	f := r.Solution.Forecast[i][k]
	sd := math.Sqrt(math.Max(r.Solution.Variance[i][k], 0))
	lo, hi = f-z*sd, f+z*sd
	if r.Nonnegative {
		lo = math.Max(lo, 0)
	}
	return lo, hi
}

// ForecastPeriod is the calendar period of forecast step k (0-based).
func (r *Result) ForecastPeriod(k int) tableio.Period { return r.Panel.Period(r.Panel.T + k) }

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
