package main

import (
	"bytes"
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"
	"trueup/fixtures/reference"
)

// writeAirCSV writes R's datasets::AirPassengers (Series G, committed under
// fixtures/reference/arima) as a monthly table, plus a second store with the
// first 60 months halved and, when gap is set, one month removed.
func writeAirCSV(t *testing.T, gap bool) string {
	t.Helper()
	air, err := reference.Series("arima/airpass.csv")
	if err != nil {
		t.Fatal(err)
	}
	var b strings.Builder
	b.WriteString("month,store,sales\n")
	for i, v := range air {
		fmt.Fprintf(&b, "%04d-%02d,north,%g\n", 1949+i/12, i%12+1, v)
	}
	for i, v := range air[:60] {
		if gap && i == 30 {
			continue
		}
		fmt.Fprintf(&b, "%04d-%02d,south,%g\n", 1949+i/12, i%12+1, v)
	}
	path := filepath.Join(t.TempDir(), "air.csv")
	if err := os.WriteFile(path, []byte(b.String()), 0o644); err != nil {
		t.Fatal(err)
	}
	return path
}

func runCapture(args ...string) (string, error) {
	root := newRootCmd()
	var out bytes.Buffer
	root.SetOut(&out)
	root.SetArgs(args)
	err := root.Execute()
	return out.String(), err
}

// TestFitJSONAirline: the fixed airline model on log Series G through the
// command gives the published estimates (Box, Jenkins & Reinsel: θ1 =
// −0.4018, Θ1 = −0.5569, log-likelihood 244.70) and well-formed records.
func TestFitJSONAirline(t *testing.T) {
	path := writeAirCSV(t, false)
	recs := fitRecords(t, "fit", "--input", path, "--time", "month", "--value", "sales",
		"--key", "store", "--model", "ARIMA(0,1,1)(0,1,1)", "--transform", "log", "--horizon", "12", "--json")
	if len(recs) != 2 || recs[0]["key"] != "north" || recs[1]["key"] != "south" {
		t.Fatalf("records: %d", len(recs))
	}
	for _, k := range []string{"key", "family", "spec", "order", "seasonal_order", "period", "constant", "ar", "ma", "sar", "sma", "intercept", "sigma2", "loglik", "aic", "aicc", "bic", "n_obs", "forecast", "lower", "upper", "residuals"} {
		if _, ok := recs[0][k]; !ok {
			t.Errorf("missing key %q", k)
		}
	}
	r := recs[0]
	ma := r["ma"].([]any)[0].(float64)
	sma := r["sma"].([]any)[0].(float64)
	if math.Abs(ma+0.4018) > 0.001 || math.Abs(sma+0.5569) > 0.001 || math.Abs(r["loglik"].(float64)-244.70) > 0.05 {
		t.Errorf("ma %v sma %v loglik %v", ma, sma, r["loglik"])
	}
	if r["spec"] != "log ARIMA(0,1,1)(0,1,1) m=12" || r["family"] != "arima" || r["n_obs"].(float64) != 144 {
		t.Errorf("spec %v family %v n_obs %v", r["spec"], r["family"], r["n_obs"])
	}
	fc := r["forecast"].([]any)
	lo := r["lower"].(map[string]any)["95"].([]any)
	hi := r["upper"].(map[string]any)["95"].([]any)
	if len(fc) != 12 || len(r["residuals"].([]any)) != 144 {
		t.Fatalf("forecast %d residuals %d", len(fc), len(r["residuals"].([]any)))
	}
	for k := range fc {
		f, l, h := fc[k].(float64), lo[k].(float64), hi[k].(float64)
		if !(l < f && f < h) || f < 300 || f > 800 {
			t.Errorf("h=%d: %v [%v, %v] on the passenger scale", k+1, f, l, h)
		}
	}
}

func TestFitErrors(t *testing.T) {
	path := writeAirCSV(t, true)
	cases := [][]string{
		{"fit", "--input", path, "--time", "month", "--value", "sales", "--key", "store"},                                 // gap
		{"fit", "--input", path, "--time", "month", "--value", "sales"},                                                   // two series without --key
		{"fit", "--input", path, "--time", "month", "--value", "sales", "--key", "store", "--model", "ARIMA(0,1)"},        // bad model
		{"fit", "--input", path, "--time", "month", "--value", "sales", "--transform", "sqrt"},                            // bad transform
		{"fit", "--input", path, "--time", "month", "--value", "sales", "--constant"},                                     // constant without model
		{"fit", "--input", filepath.Join(t.TempDir(), "none.csv"), "--time", "month", "--value", "sales"},                 // missing file
		{"fit", "--time", "month", "--value", "sales"},                                                                    // no input
		{"fit", "--input", path, "--time", "month", "--value", "sales", "--key", "store", "--levels", "80,120", "--json"}, // bad level
	}
	for _, args := range cases {
		if code := run(args); code != exitInput {
			t.Errorf("%v: exit %d, want %d", args[1:], code, exitInput)
		}
	}
}
