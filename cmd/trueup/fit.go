package main

import (
	"bytes"
	"encoding/json"
	"fmt"
	"io"
	"math"
	"sort"
	"strconv"
	"strings"
	"text/tabwriter"

	"github.com/spf13/cobra"
	"gonum.org/v1/gonum/stat/distuv"

	"trueup/inputerr"
	"trueup/models"
	"trueup/models/arima"
	"trueup/models/naive"
	"trueup/tableio"
)

// fitFlags are the options of trueup fit.
type fitFlags struct {
	input, format     string
	timeCol, valueCol string
	key               string
	model             string
	family            string
	period            int
	transform         string
	constant          bool
	horizon           int
	levels            string
	json              bool
}

// fitFamily is the family-specific part of trueup fit: how to fit one
// series from the flags, and which JSON fields describe the fitted form.
// Adding a family means adding one entry to fitFamilies.
type fitFamily struct {
	fit    func(y []float64, period int, fl *fitFlags) (models.Model, error)
	fields func(m models.Model) []jsonField
}

var fitFamilies = map[string]fitFamily{
	arima.Name: {fit: fitARIMA, fields: arimaFields},
	"ets":      {fit: fitETS, fields: modelFields},
	"snaive":   {fit: fitNaive(naive.SeasonalNaive{}), fields: modelFields},
	"drift":    {fit: fitNaive(naive.Drift{}), fields: modelFields},
	"auto":     {fit: fitAuto, fields: modelFields},
}

func newFitCmd() *cobra.Command {
	var fl fitFlags
	cmd := &cobra.Command{
		Use:   "fit --input FILE --time COL --value COL [--key COL] [--model SPEC]",
		Short: "Fit a forecasting model to one series, or to each key's series",
		Long: `Fits a model (seasonal ARIMA unless --family says otherwise) to the series
in a table by maximum likelihood, and prints the estimates, information
criteria, forecasts with prediction intervals, and in-sample one-step
residuals. With --key COL every value of that column is a separate series;
without it the table must hold one series. Each series must have one row
per period, with no gaps.

Without --model the order is chosen automatically: differencing by the
seasonal strength and KPSS tests, then a stepwise search by AICc. A model
is written as ARIMA(p,d,q)(P,D,Q), optionally followed by "m=12" (the
seasonal period; otherwise --period or the period implied by the data's
grain) and "+ mean" or "+ drift". Signs: AR polynomial 1 − φ1B − …, MA
polynomial 1 + θ1B + ….

--family chooses the kind of model: arima (the default), ets (exponential
smoothing; a fixed form is written as --model "ETS(M,Ad,M)", otherwise
the form is chosen by AICc), snaive, drift, or auto, which validates
ARIMA, ETS, seasonal naive, drift and the ARIMA+ETS average at the last
three forecast origins by MASE at --horizon and refits the winner; its
JSON lists every candidate's score and the reason. --transform boxcox
(λ by Guerrero's method) works with every family but arima.

With --json each series gives one JSON object per line. Forecasts and
bounds are on the original scale; loglik, aic, aicc and bic refer to the
modelled (transformed, differenced) series.`,
		Example: `  trueup fit --input sales.csv --time month --value sales --json
  trueup fit --input sales.parquet --time month --value sales --key store \
      --model "ARIMA(0,1,1)(0,1,1)" --transform log --horizon 12 --levels 80,95`,
		Args: noArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			return runFit(cmd.OutOrStdout(), &fl)
		},
	}
	f := cmd.Flags()
	f.StringVar(&fl.input, "input", "", "input table (Parquet, CSV or Arrow IPC)")
	f.StringVar(&fl.format, "input-format", "", "input format when the extension does not tell: parquet, csv or arrow")
	f.StringVar(&fl.timeCol, "time", "", "period column")
	f.StringVar(&fl.valueCol, "value", "", "value column")
	f.StringVar(&fl.key, "key", "", "column whose values name separate series")
	f.StringVar(&fl.model, "model", "", `fixed model, e.g. "ARIMA(0,1,1)(0,1,1)" or "ETS(M,Ad,M)"; automatic choice when empty`)
	f.StringVar(&fl.family, "family", "", "model family: auto, arima, ets, snaive or drift (default: that of --model, else arima)")
	f.IntVar(&fl.period, "period", 0, "seasonal period (default: 12 for months, 4 for quarters, 52 for weeks, 7 for days)")
	f.StringVar(&fl.transform, "transform", "none", "transform before fitting: none, log or boxcox (log needs positive values)")
	f.BoolVar(&fl.constant, "constant", false, "with --model: include a mean (d+D=0) or drift (d+D=1)")
	f.IntVar(&fl.horizon, "horizon", 0, "periods to forecast (default: one seasonal cycle, or 8 without seasonality)")
	f.StringVar(&fl.levels, "levels", "80,95", "prediction interval levels in percent, comma-separated")
	f.BoolVar(&fl.json, "json", false, "print one JSON object per series and line")
	return cmd
}

// fitSeries is one series of the input, in period order.
type fitSeries struct {
	key     string
	periods []tableio.Period
	values  []float64
}

func runFit(w io.Writer, fl *fitFlags) error {
	switch {
	case fl.input == "":
		return &usageError{errMissing("--input")}
	case fl.timeCol == "":
		return &usageError{errMissing("--time")}
	case fl.valueCol == "":
		return &usageError{errMissing("--value")}
	}
	if fl.constant && fl.model == "" {
		return &usageError{fmt.Errorf("--constant needs --model (the automatic choice decides the constant itself)")}
	}
	if fl.period < 0 || fl.horizon < 0 {
		return &usageError{fmt.Errorf("--period and --horizon must not be negative")}
	}
	levels, err := parseLevels(fl.levels)
	if err != nil {
		return err
	}
	famName, err := resolveFitFamily(fl)
	if err != nil {
		return &usageError{err}
	}
	opt := tableio.ReadOptions{Format: tableio.Format(fl.format), Time: fl.timeCol, Value: fl.valueCol}
	if fl.key != "" {
		opt.Keys = []string{fl.key}
	}
	rows, err := tableio.Read(fl.input, opt)
	if err != nil {
		return err
	}
	series, err := splitSeries(rows, fl.key)
	if err != nil {
		return err
	}
	period := fl.period
	if period == 0 {
		period = series[0].periods[0].Grain.SeasonalPeriod()
	}
	horizon := fl.horizon
	if horizon == 0 {
		horizon = 8
		if period > 1 {
			horizon = period
		}
	}
	fl.horizon = horizon
	fam := fitFamilies[famName]
	for _, s := range series {
		m, err := fam.fit(s.values, period, fl)
		if err != nil {
			if s.key != "" {
				return fmt.Errorf("key %q: %w", s.key, err)
			}
			return err
		}
		if fl.json {
			if err := writeFitJSON(w, s, m, fam, horizon, levels); err != nil {
				return err
			}
		} else {
			writeFitText(w, s, m, horizon, levels)
		}
	}
	return nil
}

// splitSeries groups rows by key and orders each group by period. A
// repeated period or a gap is an input error naming the key and period.
func splitSeries(rows *tableio.Rows, key string) ([]fitSeries, error) {
	groups := map[int32][]int{}
	for i := 0; i < rows.N; i++ {
		var code int32
		if key != "" {
			code = rows.KeyCodes[0][i]
		}
		groups[code] = append(groups[code], i)
	}
	codes := make([]int32, 0, len(groups))
	for c := range groups {
		codes = append(codes, c)
	}
	name := func(c int32) string {
		if key == "" {
			return ""
		}
		return rows.KeyDict[0][c]
	}
	sort.Slice(codes, func(i, j int) bool { return name(codes[i]) < name(codes[j]) })
	out := make([]fitSeries, 0, len(codes))
	for _, c := range codes {
		idx := groups[c]
		sort.SliceStable(idx, func(i, j int) bool { return rows.Periods[idx[i]].Index < rows.Periods[idx[j]].Index })
		s := fitSeries{key: name(c)}
		where := ""
		if key != "" {
			where = fmt.Sprintf("%s %q: ", key, s.key)
		}
		for k, i := range idx {
			p := rows.Periods[i]
			if k > 0 {
				prev := rows.Periods[idx[k-1]]
				if p.Index == prev.Index {
					hint := ""
					if key == "" {
						hint = " (several series in one table? name their column with --key)"
					}
					return nil, inputerr.New("%s: %speriod %s appears more than once%s", rows.Path, where, p, hint)
				}
				if p.Index != prev.Index+1 {
					return nil, inputerr.New("%s: %speriods %s to %s are missing; fit needs one row per period without gaps", rows.Path, where, prev.Next(1), p.Next(-1))
				}
			}
			s.periods = append(s.periods, p)
			s.values = append(s.values, rows.Values[i])
		}
		out = append(out, s)
	}
	return out, nil
}

// fitARIMA fits the fixed --model, or chooses one automatically.
func fitARIMA(y []float64, period int, fl *fitFlags) (models.Model, error) {
	logT := fl.transform == "log"
	if fl.model == "" {
		return arima.Auto(y, arima.AutoOptions{Period: period, Log: logT})
	}
	spec, err := arima.ParseSpec(fl.model)
	if err != nil {
		return nil, err
	}
	if spec.Period == 0 {
		spec.Period = period
	}
	spec.Log = spec.Log || logT
	spec.Constant = spec.Constant || fl.constant
	return arima.FitOrder(y, spec, arima.Options{})
}

// jsonField is one key and value of an output object, kept in order.
type jsonField struct {
	key   string
	value any
}

// arimaFields are the ARIMA-specific fields of a fit record.
func arimaFields(m models.Model) []jsonField {
	f := m.(*arima.Fitted)
	s := f.Form()
	var intercept any
	if c, ok := f.Intercept(); ok {
		intercept = c
	}
	fields := []jsonField{
		{"order", []int{s.P, s.D, s.Q}},
		{"seasonal_order", []int{s.SP, s.SD, s.SQ}},
		{"period", max(s.Period, 1)},
		{"constant", s.Constant},
		{"transform", map[bool]string{false: "none", true: "log"}[s.Log]},
		{"ar", f.AR()},
		{"ma", f.MA()},
		{"sar", f.SAR()},
		{"sma", f.SMA()},
		{"intercept", intercept},
	}
	if s.Fourier > 0 {
		fields = append(fields, jsonField{"fourier", f.Fourier()})
	}
	return fields
}

// intervaler is a model that computes its own prediction intervals (for
// example on a transformed scale, where they are asymmetric).
type intervaler interface {
	Interval(h int, level float64) (lo, hi []float64)
}

// intervals returns lower and upper bounds for each level in percent.
func intervals(m models.Model, h int, levels []float64) (lo, hi [][]float64) {
	mean, variance := m.Forecast(h)
	for _, l := range levels {
		if iv, ok := m.(intervaler); ok {
			a, b := iv.Interval(h, l/100)
			lo, hi = append(lo, a), append(hi, b)
			continue
		}
		z := distuv.UnitNormal.Quantile(0.5 + l/200)
		a, b := make([]float64, h), make([]float64, h)
		for k := range mean {
			sd := math.Sqrt(variance[k])
			a[k], b[k] = mean[k]-z*sd, mean[k]+z*sd
		}
		lo, hi = append(lo, a), append(hi, b)
	}
	return lo, hi
}

func levelKey(l float64) string { return strconv.FormatFloat(l, 'f', -1, 64) }

func writeFitJSON(w io.Writer, s fitSeries, m models.Model, fam fitFamily, h int, levels []float64) error {
	mean, _ := m.Forecast(h)
	lo, hi := intervals(m, h, levels)
	lower, upper := map[string][]float64{}, map[string][]float64{}
	for i, l := range levels {
		lower[levelKey(l)], upper[levelKey(l)] = lo[i], hi[i]
	}
	last := s.periods[len(s.periods)-1]
	labels := make([]string, h)
	for k := range labels {
		labels[k] = last.Next(k + 1).String()
	}
	var key any
	if s.key != "" {
		key = s.key
	}
	c := m.Criteria()
	fields := []jsonField{{"key", key}, {"family", m.Family()}, {"spec", m.Spec()}}
	fields = append(fields, fam.fields(m)...)
	fields = append(fields,
		jsonField{"sigma2", m.Sigma2()},
		jsonField{"loglik", c.LogLik},
		jsonField{"aic", c.AIC},
		jsonField{"aicc", c.AICc},
		jsonField{"bic", c.BIC},
		jsonField{"n_obs", m.NObs()},
		jsonField{"forecast_periods", labels},
		jsonField{"forecast", mean},
		jsonField{"lower", lower},
		jsonField{"upper", upper},
		jsonField{"residuals", m.Residuals()},
		jsonField{"warning", m.Warning()},
	)
	var b bytes.Buffer
	b.WriteByte('{')
	for i, f := range fields {
		if i > 0 {
			b.WriteByte(',')
		}
		k, _ := json.Marshal(f.key)
		v, err := json.Marshal(finite(f.value))
		if err != nil {
			return fmt.Errorf("encode %s: %w", f.key, err)
		}
		b.Write(k)
		b.WriteByte(':')
		b.Write(v)
	}
	b.WriteString("}\n")
	_, err := w.Write(b.Bytes())
	return err
}

// finite replaces non-finite numbers (which JSON cannot carry) by null.
func finite(v any) any {
	num := func(x float64) any {
		if math.IsNaN(x) || math.IsInf(x, 0) {
			return nil
		}
		return x
	}
	switch x := v.(type) {
	case float64:
		return num(x)
	case []float64:
		out := make([]any, len(x))
		for i, e := range x {
			out[i] = num(e)
		}
		return out
	case map[string][]float64:
		out := map[string]any{}
		for k, e := range x {
			out[k] = finite(e)
		}
		return out
	}
	return v
}

func writeFitText(w io.Writer, s fitSeries, m models.Model, h int, levels []float64) {
	c := m.Criteria()
	if s.key != "" {
		fmt.Fprintf(w, "%s: ", s.key)
	}
	fmt.Fprintf(w, "%s on %d observations\n", m.Spec(), m.NObs())
	if f, ok := m.(*arima.Fitted); ok {
		for _, part := range []struct {
			name string
			v    []float64
		}{{"ar", f.AR()}, {"ma", f.MA()}, {"sar", f.SAR()}, {"sma", f.SMA()}} {
			if len(part.v) > 0 {
				fmt.Fprintf(w, "  %-4s %s\n", part.name, formatFloats(part.v))
			}
		}
		if v, ok := f.Intercept(); ok {
			fmt.Fprintf(w, "  %-4s %.6g\n", map[bool]string{true: "mean", false: "drift"}[f.Form().D+f.Form().SD == 0], v)
		}
	}
	writeModelText(w, m)
	fmt.Fprintf(w, "  sigma2 %.6g  loglik %.3f  aic %.3f  aicc %.3f  bic %.3f\n", m.Sigma2(), c.LogLik, c.AIC, c.AICc, c.BIC)
	if warn := m.Warning(); warn != "" {
		fmt.Fprintf(w, "  warning: %s\n", warn)
	}
	mean, _ := m.Forecast(h)
	lo, hi := intervals(m, h, levels)
	tw := tabwriter.NewWriter(w, 0, 0, 2, ' ', tabwriter.AlignRight)
	head := []string{"period", "forecast"}
	for _, l := range levels {
		head = append(head, "lo "+levelKey(l), "hi "+levelKey(l))
	}
	fmt.Fprintln(tw, strings.Join(head, "\t")+"\t")
	last := s.periods[len(s.periods)-1]
	for k := range mean {
		row := []string{last.Next(k + 1).String(), fmt.Sprintf("%.6g", mean[k])}
		for i := range levels {
			row = append(row, fmt.Sprintf("%.6g", lo[i][k]), fmt.Sprintf("%.6g", hi[i][k]))
		}
		fmt.Fprintln(tw, strings.Join(row, "\t")+"\t")
	}
	tw.Flush()
	fmt.Fprintln(w)
}

func formatFloats(v []float64) string {
	parts := make([]string, len(v))
	for i, x := range v {
		parts[i] = fmt.Sprintf("%.4f", x)
	}
	return strings.Join(parts, " ")
}
