package cli

import (
	"bufio"
	"bytes"
	"encoding/json"
	"fmt"
	"math"
	"path/filepath"
	"reflect"
	"strings"
	"testing"
	"time"

	"trueup/engine"
	"trueup/fixtures/reference"
	"trueup/models/families"
)

// writeAirCSV writes R's datasets::AirPassengers (Series G, committed under
// fixtures/reference/arima) as a monthly table, plus a second store with
// the first 60 months halved and, when gap is set, one month removed.
func writeAirCSV(t *testing.T, gap bool) string {
	t.Helper()
	air := airPassengers(t)
	var b strings.Builder
	b.WriteString("month,store,sales\n")
	for i, v := range air {
		fmt.Fprintf(&b, "%04d-%02d,north,%g\n", 1949+i/12, i%12+1, v)
	}
	for i, v := range air[:60] {
		if gap && i == 30 {
			continue
		}
		fmt.Fprintf(&b, "%04d-%02d,south,%g\n", 1949+i/12, i%12+1, v/2)
	}
	return writeFile(t, t.TempDir(), "air.csv", b.String())
}

func airPassengers(t *testing.T) []float64 {
	t.Helper()
	air, err := reference.Series("arima/airpass.csv")
	if err != nil {
		t.Fatal(err)
	}
	return air
}

func runCapture(args ...string) (string, error) {
	root := newRootCmd()
	var out bytes.Buffer
	root.SetOut(&out)
	root.SetArgs(args)
	err := root.Execute()
	return out.String(), err
}

func fitRecords(t *testing.T, args ...string) []map[string]any {
	t.Helper()
	out, err := runCapture(args...)
	if err != nil {
		t.Fatal(err)
	}
	sc := bufio.NewScanner(strings.NewReader(out))
	sc.Buffer(nil, 1<<22)
	var recs []map[string]any
	for sc.Scan() {
		var r map[string]any
		if err := json.Unmarshal(sc.Bytes(), &r); err != nil {
			t.Fatalf("bad JSON line: %v", err)
		}
		recs = append(recs, r)
	}
	return recs
}

// estimates reads a record's estimates into a map by name.
func estimates(t *testing.T, rec map[string]any) map[string]float64 {
	t.Helper()
	out := map[string]float64{}
	for _, e := range rec["params"].(map[string]any)["estimates"].([]any) {
		m := e.(map[string]any)
		out[m["name"].(string)] = m["value"].(float64)
	}
	return out
}

// TestFitJSONAirline: the fixed airline model on log Series G through the
// command gives the published estimates (Box, Jenkins & Reinsel, Time
// Series Analysis: Forecasting and Control, airline model chapter: θ1 =
// −0.4018, Θ1 = −0.5569, log-likelihood 244.70; R 4.2.2 stats::arima
// reproduces them) and well-formed records.
func TestFitJSONAirline(t *testing.T) {
	path := writeAirCSV(t, false)
	recs := fitRecords(t, "fit", "--input", path, "--time", "month", "--value", "sales",
		"--key", "store", "--model", "ARIMA(0,1,1)(0,1,1)", "--transform", "log", "--horizon", "12", "--json")
	if len(recs) != 2 || recs[0]["series"] != "store=north" || recs[1]["series"] != "store=south" {
		t.Fatalf("records: %v", recs)
	}
	r := recs[0]
	if r["model"] != "log ARIMA(0,1,1)(0,1,1) m=12" || r["family"] != "arima" || r["form"] != nil {
		t.Errorf("family %v, model %v", r["family"], r["model"])
	}
	orders := r["params"].(map[string]any)["orders"].(map[string]any)
	want := map[string]any{
		"nonseasonal": map[string]any{"ar": 0.0, "differences": 1.0, "ma": 1.0},
		"seasonal":    map[string]any{"ar": 0.0, "differences": 1.0, "ma": 1.0, "season_length": 12.0},
	}
	if !reflect.DeepEqual(orders, want) {
		t.Errorf("orders %v", orders)
	}
	est := estimates(t, r)
	q := r["fit_quality"].(map[string]any)
	if math.Abs(est["θ1"]+0.4018) > 0.001 || math.Abs(est["Θ1"]+0.5569) > 0.001 || len(est) != 2 ||
		math.Abs(q["log_likelihood"].(float64)-244.70) > 0.05 {
		t.Errorf("estimates %v, log-likelihood %v", est, q["log_likelihood"])
	}
	if q["observations"].(float64) != 144 {
		t.Errorf("observations %v", q["observations"])
	}
	fc := r["forecasts"].(map[string]any)
	mean := fc["forecast"].([]any)
	lo, hi := fc["pi95_lower"].([]any), fc["pi95_upper"].([]any)
	lo80, hi80 := fc["pi80_lower"].([]any), fc["pi80_upper"].([]any)
	periods := fc["period"].([]any)
	res := r["residuals"].(map[string]any)
	if len(mean) != 12 || len(res["residual"].([]any)) != 144 || periods[0] != "1961-01" || res["first_period"] != "1949-01" {
		t.Fatalf("forecast %d, residuals %v", len(mean), res["first_period"])
	}
	for k := range mean {
		f := mean[k].(float64)
		if !(lo[k].(float64) < lo80[k].(float64) && lo80[k].(float64) < f && f < hi80[k].(float64) && hi80[k].(float64) < hi[k].(float64)) || f < 300 || f > 800 {
			t.Errorf("h=%d: %v in [%v, %v] on the passenger scale", k+1, f, lo[k], hi[k])
		}
	}
	// The south store ends in 1953-12, before the table's last period:
	// as in forecast, it is closed and forecast as zero.
	s := recs[1]
	if !strings.Contains(s["warning"].(string), "closed") || s["forecasts"].(map[string]any)["forecast"].([]any)[0].(float64) != 0 {
		t.Errorf("south: warning %q", s["warning"])
	}
}

// TestFitMatchesEngine: fit and the engine's per-node fit (the path
// forecast takes) give the same model for the same series: same form,
// same parameters, same forecasts.
func TestFitMatchesEngine(t *testing.T) {
	air := airPassengers(t)
	var b strings.Builder
	b.WriteString("month,sales\n")
	for i, v := range air {
		fmt.Fprintf(&b, "%04d-%02d,%g\n", 1949+i/12, i%12+1, v)
	}
	path := writeFile(t, t.TempDir(), "air.csv", b.String())
	for _, spec := range []families.Spec{{}, {Family: "ets"}, {Form: "ARIMA(1,1,0)(0,1,1)", Transform: "boxcox"}} {
		args := []string{"fit", "--input", path, "--time", "month", "--value", "sales", "--json", "--horizon", "12"}
		if spec.Family != "" {
			args = append(args, "--family", spec.Family)
		}
		if spec.Form != "" {
			args = append(args, "--model", spec.Form, "--transform", spec.Transform)
		}
		recs := fitRecords(t, args...)
		nf, err := engine.FitOne(engine.FitJob{Series: air, Model: spec, Period: 12, Horizon: 12})
		if err != nil {
			t.Fatal(err)
		}
		if recs[0]["model"] != nf.Spec || recs[0]["family"] != nf.Family {
			t.Errorf("%+v: fit gave %v %v, engine %s %s", spec, recs[0]["family"], recs[0]["model"], nf.Family, nf.Spec)
		}
		// The command's params are the engine's parameters, as the
		// models table writes them.
		got := recs[0]["params"].(map[string]any)
		var want map[string]any
		raw, _ := json.Marshal(nf.Params)
		if err := json.Unmarshal(raw, &want); err != nil {
			t.Fatal(err)
		}
		if !reflect.DeepEqual(got, want) {
			t.Errorf("%+v: parameters differ:\nfit    %v\nengine %v", spec, got, want)
		}
		mean := recs[0]["forecasts"].(map[string]any)["forecast"].([]any)
		for k, m := range mean {
			if m.(float64) != nf.Mean[k] {
				t.Errorf("%+v: forecast %d: %v vs %v", spec, k+1, m, nf.Mean[k])
				break
			}
		}
	}
}

// TestFitWorkersSameBytes: the output does not depend on the number of
// workers (text and JSON), on an input with several series.
func TestFitWorkersSameBytes(t *testing.T) {
	air := airPassengers(t)
	var b strings.Builder
	b.WriteString("month,store,sales\n")
	for s, scale := range []float64{1, 0.5, 2, 0.25} {
		for i, v := range air[:96] {
			fmt.Fprintf(&b, "%04d-%02d,store%d,%g\n", 1949+i/12, i%12+1, s, v*scale+float64(i%(s+2)))
		}
	}
	path := writeFile(t, t.TempDir(), "stores.csv", b.String())
	for _, extra := range [][]string{{"--json"}, {"--family", "ets"}} {
		var outs []string
		for _, w := range []string{"1", "3"} {
			args := append([]string{"fit", "--input", path, "--time", "month", "--value", "sales", "--key", "store", "--workers", w}, extra...)
			out, err := runCapture(args...)
			if err != nil {
				t.Fatal(err)
			}
			outs = append(outs, out)
		}
		if outs[0] != outs[1] {
			t.Errorf("%v: --workers 1 and 3 differ", extra)
		}
		if strings.Count(outs[0], "store") < 4 {
			t.Errorf("%v: expected four series:\n%s", extra, outs[0])
		}
	}
}

// TestFitMonthEndDates: dates on the last day of each month are months,
// as in forecast; the output equals that of month labels.
func TestFitMonthEndDates(t *testing.T) {
	air := airPassengers(t)[:48]
	var dates, labels strings.Builder
	dates.WriteString("day,sales\n")
	labels.WriteString("day,sales\n")
	for i, v := range air {
		first := time.Date(1949+i/12, time.Month(i%12+1), 1, 0, 0, 0, 0, time.UTC)
		fmt.Fprintf(&dates, "%s,%g\n", first.AddDate(0, 1, -1).Format("2006-01-02"), v)
		fmt.Fprintf(&labels, "%s,%g\n", first.Format("2006-01"), v)
	}
	var outs []string
	datesPath := writeFile(t, t.TempDir(), "dates.csv", dates.String())
	for _, path := range []string{datesPath, writeFile(t, t.TempDir(), "labels.csv", labels.String())} {
		out, err := runCapture("fit", "--input", path, "--time", "day", "--value", "sales", "--family", "seasonal-naive")
		if err != nil {
			t.Fatal(err)
		}
		outs = append(outs, out)
	}
	if outs[0] != outs[1] {
		t.Errorf("month-end dates and month labels differ:\n%s\n%s", outs[0], outs[1])
	}
	// The seasonal naive forecast of 1953-01 is the value of 1952-01
	// (the method's definition).
	r := fitRecords(t, "fit", "--input", datesPath, "--time", "day", "--value", "sales", "--family", "seasonal-naive", "--json")[0]
	fc := r["forecasts"].(map[string]any)
	if fc["period"].([]any)[0] != "1953-01" || fc["forecast"].([]any)[0].(float64) != air[36] {
		t.Errorf("forecast %v", fc)
	}
}

func TestFitErrors(t *testing.T) {
	path := writeAirCSV(t, false)
	base := []string{"fit", "--input", path, "--time", "month", "--value", "sales"}
	for _, extra := range [][]string{
		{}, // two series without --key: repeated periods
		{"--key", "store", "--model", "ARIMA(0,1)"}, // bad model
		{"--transform", "sqrt"},                     // bad transform
		{"--constant"},                              // constant without model
		{"--key", "store", "--intervals", "80,120"}, // bad level
		{"--key", "store", "--workers", "0"},
		{"--key", "store", "--horizon", "1000"},      // beyond what 144 months support
		{"--key", "store", "--season-length", "100"}, // fewer than two cycles of history
		{"--key", "region"},                          // no such column
	} {
		args := append(append([]string{}, base...), extra...)
		if code := run(args); code != exitInput {
			t.Errorf("%v: exit %d, want %d", extra, code, exitInput)
		}
	}
	for _, args := range [][]string{
		{"fit", "--input", filepath.Join(t.TempDir(), "none.csv"), "--time", "month", "--value", "sales"},
		{"fit", "--time", "month", "--value", "sales"},
	} {
		if code := run(args); code != exitInput {
			t.Errorf("%v: exit %d, want %d", args[1:], code, exitInput)
		}
	}
}

// TestFixedFormFitsOrExits2 checks that a form the user fixed is never
// swapped for seasonal naive: a constant on a twice-differenced form
// (which no series can take: the constant would be a quadratic trend,
// common practice) and a form too long for the series exit 2 saying
// why, and the help's own "m=12 + drift" template, written with d+D = 1,
// fits as written.
func TestFixedFormFitsOrExits2(t *testing.T) {
	path := writeAirCSV(t, false)
	base := []string{"fit", "--input", path, "--time", "month", "--value", "sales", "--key", "store", "--horizon", "3"}
	for _, c := range []struct {
		extra []string
		want  string
	}{
		{[]string{"--model", "ARIMA(2,1,1)(1,1,1)", "--constant"}, "--constant: model \"ARIMA(2,1,1)(1,1,1)\" differences d+D = 2 times"},
		{[]string{"--model", "ARIMA(0,1,1)(0,1,1) m=12 + drift"}, "--model: model \"ARIMA(0,1,1)(0,1,1) m=12 + drift\" differences d+D = 2 times"},
		{[]string{"--model", "ARIMA(0,1,1)(0,1,1) m=60"}, `cannot be fitted to series store=south`},
	} {
		args := append(append([]string{}, base...), c.extra...)
		stderr := captureStderr(t, func() {
			if code := run(args); code != exitInput {
				t.Errorf("%v: exit %d, want %d", c.extra, code, exitInput)
			}
		})
		if !strings.Contains(stderr, c.want) {
			t.Errorf("%v: message %q does not say %q", c.extra, stderr, c.want)
		}
	}
	recs := fitRecords(t, append(append([]string{}, base...), "--model", "ARIMA(0,0,1)(0,1,1) m=12 + drift", "--json")...)
	for _, r := range recs {
		if w, _ := r["warning"].(string); r["family"] != "arima" || strings.Contains(w, "fell back") {
			t.Errorf("series %v: fitted %v %v with warning %q, want the fixed ARIMA form", r["series"], r["family"], r["model"], r["warning"])
		}
	}
}
