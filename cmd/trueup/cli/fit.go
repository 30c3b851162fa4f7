package cli

import (
	"bytes"
	"context"
	"encoding/json"
	"errors"
	"fmt"
	"io"
	"maps"
	"math"
	"runtime"
	"slices"
	"sort"
	"strconv"
	"strings"

	"github.com/spf13/cobra"

	"trueup/engine"
	"trueup/hierarchy"
	"trueup/models/families"
)

// fitFlags are the options of trueup fit. The input flags are forecast's,
// except that --key names the one column whose values are the series.
type fitFlags struct {
	src             sourceFlags
	key             string
	model, family   string
	transform       string
	constant        bool
	period, horizon int
	levels          string
	workers         int
	json            bool
}

func newFitCmd() *cobra.Command {
	var fl fitFlags
	cmd := &cobra.Command{
		Use:   "fit --input FILE --time COL --value COL [--key COL] [--family F | --model FORM]",
		Short: "Fit a model to one series, or to each key's series, and show it in full",
		Long: `Fits a model to the series in a table and prints, per series, the model,
its estimates, how well it fits, forecasts with prediction intervals, and the
in-sample one-step residuals. With --key COL every value of that column is a
separate series; without it the table holds one series. The table is read
as forecast reads it: dates, timestamps or period labels; a period missing
inside a series' span counts as zero sales; a repeated key and period is an
error unless --sum-duplicates adds such rows. A series that stopped before
the table's last period is forecast as zero (closed).

Each series is fitted exactly as forecast fits a node: --family auto (the
default) scores seasonal naive, drift, Theta, ETS, ARIMA and the median of
Theta, ETS and ARIMA at up to six past forecast origins by MASE at
--horizon, keeps the median unless a single method scores 10% lower, and
refits the form it scored on the whole series; arima and ets choose their
form by AICc; seasonal-naive, drift and last are the benchmarks. When a family cannot fit a series, the
simpler benchmarks are tried in turn and the warning says so.

--model fixes the form and implies its family:
  ARIMA(p,d,q)(P,D,Q) m=12            seasonal ARIMA; "m=" (default: --season-length
                                      or the data's grain) is optional
  ARIMA(0,0,1)(0,1,1) m=12 + drift    "+ mean" (d+D = 0) or "+ drift"
                                      (d+D = 1) adds a constant
  ARIMA(1,1,0) + 2 Fourier m=12       seasonality carried by K sine-cosine
                                      pairs (the form chosen for long seasons)
  ETS(M,Ad,M)                         exponential smoothing, written
                                      error, trend, seasonality
A fixed form is never swapped for a benchmark: it fits, or fit exits with
status 2 naming the series and why.
Signs: AR polynomial 1 − φ1B − …, MA polynomial 1 + θ1B + ….
--transform log or boxcox (λ by Guerrero's method) fits on that scale;
forecasts and bounds are always on the scale of the data.

Intervals are the forecast ± z·standard error for each --intervals value.
Forecasts are estimates: review them before they go into a plan.

With --json each series gives one JSON object per line: series (named as
nodes are, store=N01), family, model, params (as the models table writes
them), fit_quality, forecasts, residuals and warning.`,
		Example: `  trueup fit --input sales.csv --time month --value sales
  trueup fit --input sales.parquet --time month --value sales --key store --json
  trueup fit --input sales.parquet --time month --value sales --key store \
      --model "ARIMA(0,1,1)(0,1,1)" --transform log --horizon 12 --intervals 80,95`,
		Args: noArgs,
		RunE: func(cmd *cobra.Command, _ []string) error {
			return runFit(cmd.Context(), cmd.OutOrStdout(), cmd.ErrOrStderr(), &fl)
		},
	}
	fl.src.registerInput(cmd)
	f := cmd.Flags()
	f.StringVar(&fl.key, "key", "", "column whose values name separate series (default: the table is one series)")
	groupFlags(cmd, "Input", "key")
	f.StringVar(&fl.family, "family", "", "model family: "+familyNames())
	f.StringVar(&fl.model, "model", "", `fixed model, e.g. "ARIMA(0,1,1)(0,1,1)" or "ETS(M,Ad,M)", or any form the models table prints; it implies the family`)
	f.StringVar(&fl.transform, "transform", "none", "transform before fitting: none, log or boxcox (not with --family auto, which chooses its own)")
	f.BoolVar(&fl.constant, "constant", false, "with an ARIMA --model: include a mean (d+D=0) or drift (d+D=1)")
	f.IntVar(&fl.period, "season-length", 0, "periods in one season (default: 12 for months, 4 for quarters, 52 for weeks, 7 for days)")
	f.IntVar(&fl.horizon, "horizon", 0, "periods to forecast (default: one seasonal cycle, or 8 without seasonality)")
	f.StringVar(&fl.levels, "intervals", "80,95", "prediction intervals to write, in percent, comma-separated")
	f.IntVar(&fl.workers, "workers", runtime.NumCPU(), "series fitted in parallel (the output does not depend on it)")
	f.BoolVar(&fl.json, "json", false, "print one JSON object per series and line")
	keepOldNames(cmd)
	return cmd
}

// fitRun is what the rendering needs besides the fits.
type fitRun struct {
	data   *engine.Data
	keys   []string // per series, its key value ("" without --key)
	column string   // the --key column, "" without
	levels []float64
}

// label is series i's name, as a node with that key is named everywhere
// (hierarchy.KeyLabel: store=N01), or "" without --key.
func (r *fitRun) label(i int) string {
	if r.column == "" {
		return ""
	}
	return hierarchy.KeyLabel([]string{r.column}, []string{r.keys[i]})
}

func runFit(ctx context.Context, w, errw io.Writer, fl *fitFlags) error {
	switch {
	case fl.horizon < 0:
		return &usageError{fmt.Errorf("--horizon must be at least 1, got %d", fl.horizon)}
	case fl.period < 0:
		return &usageError{fmt.Errorf("--season-length must be at least 1, got %d", fl.period)}
	case fl.workers < 1:
		return &usageError{fmt.Errorf("--workers must be at least 1, got %d", fl.workers)}
	}
	levels, err := parseLevels(fl.levels)
	if err != nil {
		return err
	}
	spec := families.Spec{Family: fl.family, Form: fl.model, Transform: fl.transform, Constant: fl.constant}
	if _, err := spec.Resolve(); err != nil {
		return err
	}
	if fl.key != "" {
		fl.src.nest = []string{fl.key}
	}
	src, err := fl.src.source(false)
	if err != nil {
		return err
	}
	data, err := engine.Load(src)
	if err != nil {
		return err
	}
	printInputNotes(errw, data)
	if err := (engine.Options{Period: fl.period, Horizon: fl.horizon}).Supported(data.Panel.T, data.Panel.Grain.SeasonalPeriod()); err != nil {
		return err
	}
	run := fitRun{data: data, column: fl.key, levels: levels}
	order := seriesOrder(data.Panel, fl.key != "")
	period := fl.period
	if period == 0 {
		period = data.Panel.Grain.SeasonalPeriod()
	}
	horizon := fl.horizon
	if horizon == 0 {
		horizon = engine.DefaultHorizon(period)
	}
	jobs := make([]engine.FitJob, len(order))
	for i, s := range order {
		jobs[i] = engine.FitJob{Node: i, Series: data.Panel.Values[s], Model: spec, Period: period, Horizon: horizon}
		if fl.key != "" {
			run.keys = append(run.keys, data.Panel.Keys[s][0])
		} else {
			run.keys = append(run.keys, "")
		}
	}
	fits, err := engine.Local{Workers: fl.workers}.Fit(ctx, jobs, nil)
	var fe *engine.FormError
	if errors.As(err, &fe) {
		name := "the series"
		if fl.key != "" {
			name = "series " + shownKey(run.label(fe.Node))
		}
		return fe.Named(name)
	}
	if err != nil {
		return err
	}
	var b bytes.Buffer
	for i := range fits {
		if fl.json {
			err = run.writeJSON(&b, i, &fits[i])
		} else {
			err = run.writeText(&b, i, &fits[i])
		}
		if err != nil {
			return err
		}
	}
	_, err = w.Write(b.Bytes())
	return err
}

// seriesOrder lists the panel's series in key order (one series without
// keys).
func seriesOrder(p *engine.Panel, keyed bool) []int {
	order := make([]int, len(p.Values))
	for i := range order {
		order[i] = i
	}
	if keyed {
		sort.Slice(order, func(a, b int) bool { return p.Keys[order[a]][0] < p.Keys[order[b]][0] })
	}
	return order
}

// fitView is one fitted series prepared for output: the model's parameters
// as a whole and split into the estimates and the other details, the
// interval bounds and the period labels.
type fitView struct {
	series    any // the series' label, or nil without --key
	params    json.RawMessage
	estimates []estimate
	details   map[string]json.RawMessage
	periods   []string
	stdErr    []float64
	lower     [][]float64 // per level
	upper     [][]float64
	firstObs  string
	lastObs   string
}

// estimate is one entry of a model's "estimates" parameter.
type estimate struct {
	Name  string   `json:"name"`
	Value *float64 `json:"value"`
}

// view prepares fit i for output. Params go through JSON so that a fit
// computed in another process renders the same as a local one.
func (r *fitRun) view(i int, nf *engine.NodeFit) (*fitView, error) {
	v := &fitView{}
	if r.column != "" {
		v.series = r.label(i)
	}
	raw, err := json.Marshal(nf.Params)
	if err != nil {
		return nil, fmt.Errorf("series %d: parameters of %s: %w", i+1, nf.Spec, err)
	}
	v.params = raw
	if err := json.Unmarshal(raw, &v.details); err != nil {
		return nil, err
	}
	if e, ok := v.details["estimates"]; ok {
		if err := json.Unmarshal(e, &v.estimates); err != nil {
			return nil, fmt.Errorf("%s: estimates: %w", nf.Spec, err)
		}
		delete(v.details, "estimates")
	}
	p := r.data.Panel
	if nf.First >= 0 {
		v.firstObs, v.lastObs = p.First.Next(nf.First).String(), p.First.Next(nf.Last).String()
	}
	h := len(nf.Mean)
	v.periods = make([]string, h)
	v.stdErr = make([]float64, h)
	for k := range v.periods {
		v.periods[k] = p.First.Next(p.T + k).String()
		v.stdErr[k] = nf.StdError(k)
	}
	for _, l := range r.levels {
		lo, hi := make([]float64, h), make([]float64, h)
		for k := range nf.Mean {
			lo[k], hi[k] = nf.Bounds(k, l)
		}
		v.lower, v.upper = append(v.lower, lo), append(v.upper, hi)
	}
	return v, nil
}

// object is a JSON object whose keys keep the order they were added in.
type object []member

type member struct {
	key   string
	value any
}

// MarshalJSON writes the members in order, non-finite numbers as null.
func (o object) MarshalJSON() ([]byte, error) {
	var b bytes.Buffer
	b.WriteByte('{')
	for i, m := range o {
		if i > 0 {
			b.WriteByte(',')
		}
		k, _ := json.Marshal(m.key)
		v, err := json.Marshal(finite(m.value))
		if err != nil {
			return nil, fmt.Errorf("%s: %w", m.key, err)
		}
		b.Write(k)
		b.WriteByte(':')
		b.Write(v)
	}
	b.WriteByte('}')
	return b.Bytes(), nil
}

// finite replaces non-finite numbers, which JSON cannot carry, by null.
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
	}
	return v
}

// writeJSON writes fit i as one JSON object on one line.
func (r *fitRun) writeJSON(w io.Writer, i int, nf *engine.NodeFit) error {
	v, err := r.view(i, nf)
	if err != nil {
		return err
	}
	c := nf.Criteria
	// The forecasts and residuals are named as the forecasts and
	// residuals tables name their columns.
	forecasts := object{{"period", v.periods}, {"forecast", nf.Mean}, {"std_error", v.stdErr}}
	for j, l := range r.levels {
		label := "pi" + engine.LevelLabel(l)
		forecasts = append(forecasts, member{label + "_lower", v.lower[j]}, member{label + "_upper", v.upper[j]})
	}
	var first, last any
	if v.firstObs != "" {
		first, last = v.firstObs, v.lastObs
	}
	rec := object{
		{"series", v.series},
		{"family", nf.Family},
		{"model", nf.Spec},
		{"params", v.params},
		{"fit_quality", object{
			{"observations", nf.NObs},
			{"innovation_variance", nf.Sigma2},
			{"parameters", c.K},
			{"likelihood_observations", c.N},
			{"aicc", c.AICc},
			{"aic", c.AIC},
			{"bic", c.BIC},
			{"log_likelihood", c.LogLik},
		}},
		{"forecasts", forecasts},
		{"residuals", object{{"first_period", first}, {"last_period", last}, {"residual", nf.Residuals}}},
		{"warning", nf.Warning},
	}
	line, err := json.Marshal(rec)
	if err != nil {
		return fmt.Errorf("encode the fit of %s: %w", nf.Spec, err)
	}
	_, err = w.Write(append(line, '\n'))
	return err
}

// writeText writes fit i as a block: the model, its details and
// estimates, the fit quality, then the forecasts with their intervals.
func (r *fitRun) writeText(w io.Writer, i int, nf *engine.NodeFit) error {
	v, err := r.view(i, nf)
	if err != nil {
		return err
	}
	name := "series"
	if v.series != nil {
		name += " " + shownKey(r.label(i))
	}
	fmt.Fprintf(w, "%s: %s\n", name, nf.Spec)
	fmt.Fprintf(w, "  family   %s\n", nf.Family)
	if v.firstObs != "" {
		fmt.Fprintf(w, "  history  %d observations, %s to %s\n", nf.NObs, v.firstObs, v.lastObs)
	}
	weights, others := smoothingWeights(nf.Family, v.estimates)
	if len(weights) > 0 {
		fmt.Fprintln(w)
		fmt.Fprintln(w, "  smoothing weights (0: the state keeps its starting value; 1: it follows each new period)")
		indentedTable(w, "    ", []string{"state", "weight", "in words"}, weights)
	}
	details := r.writeSeasonal(w, nf, v)
	keys := make([]string, 0, len(details))
	for k := range details {
		keys = append(keys, k)
	}
	sort.Strings(keys)
	if len(keys) > 0 {
		fmt.Fprintln(w)
	}
	for _, k := range keys {
		var x any
		if err := json.Unmarshal(details[k], &x); err != nil {
			return err
		}
		writeDetail(w, "  ", k, x)
	}

	if len(others) > 0 {
		fmt.Fprintln(w)
		var rows [][]string
		for _, e := range others {
			rows = append(rows, []string{e.Name, number(e.Value)})
		}
		indentedTable(w, "  ", []string{"estimate", "value"}, rows)
	}

	c := nf.Criteria
	fmt.Fprintln(w)
	fmt.Fprintf(w, "  fit quality (%d parameters, %d observations in the likelihood)\n", c.K, c.N)
	fmt.Fprintf(w, "    innovation variance  %.6g\n", nf.Sigma2)
	crit := func(x float64) string { // criteria are compared to 0.01
		if math.IsInf(x, 0) || math.IsNaN(x) {
			return "undefined" // AICc with no more observations than parameters
		}
		return groupedDecimals(x, 2)
	}
	indentedTable(w, "    ", []string{"criterion", "value"}, [][]string{
		{"AICc", crit(c.AICc)}, {"AIC", crit(c.AIC)}, {"BIC", crit(c.BIC)}, {"log-likelihood", crit(c.LogLik)}})
	if nf.Warning != "" {
		fmt.Fprintf(w, "  warning: %s\n", nf.Warning)
	}

	fmt.Fprintln(w)
	head := []string{"period", "forecast", "std_error"}
	groups := [][]float64{nf.Mean}
	for j, l := range r.levels {
		label := "pi" + engine.LevelLabel(l)
		head = append(head, label+"_lower", label+"_upper")
		groups = append(groups, v.lower[j], v.upper[j])
	}
	amount, spread := amountFormat(groups...), amountFormat(v.stdErr)
	var rows [][]string
	for k, p := range v.periods {
		row := []string{p, amount(nf.Mean[k]), spread(v.stdErr[k])}
		for j := range r.levels {
			row = append(row, amount(v.lower[j][k]), amount(v.upper[j][k]))
		}
		rows = append(rows, row)
	}
	indentedTable(w, "  ", head, rows)
	fmt.Fprintln(w)
	return nil
}

// number formats an optional estimate.
func number(x *float64) string {
	if x == nil {
		return "none"
	}
	return strconv.FormatFloat(*x, 'f', 6, 64)
}

// writeDetail prints one model detail decoded from JSON: a scalar or a
// list of scalars on the key's line, an object of scalars as "name value"
// pairs on it, a list of estimates (as models.Estimate writes them) as
// "name value" lines, anything deeper as an indented block.
func writeDetail(w io.Writer, indent, key string, x any) {
	if est, ok := estimateList(x); ok {
		fmt.Fprintf(w, "%s%s\n", indent, key)
		for _, e := range est {
			fmt.Fprintf(w, "%s  %-8s %s\n", indent, e.Name, number(e.Value))
		}
		return
	}
	if s, ok := flat(x); ok {
		fmt.Fprintf(w, "%s%-8s %s\n", indent, key, s)
		return
	}
	fmt.Fprintf(w, "%s%s\n", indent, key)
	switch y := x.(type) {
	case map[string]any:
		keys := slices.Sorted(maps.Keys(y))
		for _, k := range keys {
			writeDetail(w, indent+"  ", k, y[k])
		}
	case []any:
		for j, e := range y {
			writeDetail(w, indent+"  ", fmt.Sprintf("%d.", j+1), e)
		}
	}
}

// estimateList reads x as a list of estimates: objects with exactly a
// "name" and a "value".
func estimateList(x any) ([]estimate, bool) {
	list, ok := x.([]any)
	if !ok || len(list) == 0 {
		return nil, false
	}
	out := make([]estimate, len(list))
	for i, e := range list {
		m, ok := e.(map[string]any)
		name, named := m["name"].(string)
		if !ok || !named || len(m) != 2 {
			return nil, false
		}
		if v, ok := m["value"].(float64); ok {
			out[i].Value = &v
		} else if _, has := m["value"]; !has {
			return nil, false
		}
		out[i].Name = name
	}
	return out, true
}

// maxInline is the longest object of scalars written on its key's line;
// a longer one (a sentence among its values, say) gets a line per field.
const maxInline = 80

// flat writes x on one line when it is a scalar, a list of scalars or an
// object of scalars short enough (maxInline).
func flat(x any) (string, bool) {
	switch y := x.(type) {
	case map[string]any:
		keys := slices.Sorted(maps.Keys(y))
		parts := make([]string, len(keys))
		for j, k := range keys {
			s, ok := scalar(y[k])
			if !ok {
				return "", false
			}
			parts[j] = k + " " + s
		}
		line := strings.Join(parts, ", ")
		return line, len(line) <= maxInline
	case []any:
		parts := make([]string, len(y))
		for j, e := range y {
			s, ok := scalar(e)
			if !ok {
				return "", false
			}
			parts[j] = s
		}
		return strings.Join(parts, " "), true
	}
	return scalar(x)
}

// scalar formats a JSON scalar; ok is false for objects and lists.
func scalar(x any) (string, bool) {
	switch y := x.(type) {
	case nil:
		return "none", true
	case float64:
		return fmt.Sprintf("%.6g", y), true
	case string:
		return y, true
	case bool:
		return fmt.Sprintf("%t", y), true
	}
	return "", false
}

// writeSeasonal writes the seasonal factors or terms of an exponential
// smoothing or Theta fit labelled by the period each applies to (the
// first season starts at the first observation: ETS's s_{1−m}…s_0 in
// order of first use, Theta's index t mod m from the first observation)
// and returns the details left to write.
func (r *fitRun) writeSeasonal(w io.Writer, nf *engine.NodeFit, v *fitView) map[string]json.RawMessage {
	rest := make(map[string]json.RawMessage, len(v.details))
	for k, x := range v.details {
		rest[k] = x
	}
	if nf.First < 0 {
		return rest
	}
	first := r.data.Panel.First.Next(nf.First)
	switch nf.Family {
	case "ets":
		var init map[string]json.RawMessage
		if json.Unmarshal(rest["starting_states"], &init) != nil {
			return rest
		}
		season, ok := floats(init["season"])
		if !ok || len(season) == 0 {
			return rest
		}
		form := strings.TrimSuffix(strings.SplitN(nf.Spec, " on ", 2)[0], ")")
		fmt.Fprintln(w)
		writeSeason(w, "  ", seasonTitle(strings.HasSuffix(form, "M")), season, seasonLabels(first, len(season)))
		delete(init, "season")
		if b, err := json.Marshal(init); err == nil {
			rest["starting_states"] = b
		}
	case "theta":
		index, ok := floats(rest["seasonal_indices"])
		if !ok || len(index) == 0 {
			return rest
		}
		var adj string
		_ = json.Unmarshal(rest["seasonal_adjustment"], &adj)
		fmt.Fprintln(w)
		writeSeason(w, "  ", seasonTitle(adj != "additive"), index, seasonLabels(first, len(index)))
		delete(rest, "seasonal_indices")
	}
	return rest
}
