package main

import (
	"bufio"
	"encoding/json"
	"strings"
	"testing"
)

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

// TestFitETSJSON: a fixed ETS form through the command reports its
// smoothing parameters, initial states and a null lambda; its
// log-likelihood is the one statsmodels 0.13.5 reaches for ETS(M,A,M) on
// AirPassengers (−522.49, fixtures/reference/ets/statsmodels_ets.json).
func TestFitETSJSON(t *testing.T) {
	path := writeAirCSV(t, false)
	recs := fitRecords(t, "fit", "--input", path, "--time", "month", "--value", "sales",
		"--key", "store", "--model", "ETS(M,A,M)", "--horizon", "12", "--json")
	if len(recs) != 2 {
		t.Fatalf("%d records", len(recs))
	}
	r := recs[0]
	for _, k := range []string{"alpha", "beta", "gamma", "phi", "initial", "lambda", "period"} {
		if _, ok := r[k]; !ok {
			t.Errorf("missing %q", k)
		}
	}
	if r["family"] != "ets" || r["spec"] != "ETS(M,A,M)" || r["lambda"] != nil || r["phi"] != nil {
		t.Errorf("family %v spec %v lambda %v phi %v", r["family"], r["spec"], r["lambda"], r["phi"])
	}
	if ll := r["loglik"].(float64); ll < -522.49-0.05 {
		t.Errorf("loglik %v", ll)
	}
	init := r["initial"].(map[string]any)
	if len(init["season"].([]any)) != 12 {
		t.Errorf("initial season %v", init["season"])
	}
}

func TestFitAutoJSON(t *testing.T) {
	path := writeAirCSV(t, false)
	recs := fitRecords(t, "fit", "--input", path, "--time", "month", "--value", "sales",
		"--key", "store", "--family", "auto", "--horizon", "12", "--json")
	r := recs[0]
	cands, ok := r["candidates"].([]any)
	if !ok || len(cands) != 5 {
		t.Fatalf("candidates %v", r["candidates"])
	}
	for _, c := range cands {
		m := c.(map[string]any)
		if m["family"] == nil || m["spec"] == nil {
			t.Errorf("candidate %v", m)
		}
	}
	if !strings.Contains(r["reason"].(string), "lowest validation MASE") {
		t.Errorf("reason %v", r["reason"])
	}
	recs = fitRecords(t, "fit", "--input", path, "--time", "month", "--value", "sales",
		"--key", "store", "--family", "ets", "--transform", "boxcox", "--horizon", "12", "--json")
	if l, ok := recs[0]["lambda"].(float64); !ok || l >= 1 {
		t.Errorf("Box-Cox lambda %v", recs[0]["lambda"])
	}
}

func TestFitFamilyErrors(t *testing.T) {
	path := writeAirCSV(t, false)
	base := []string{"fit", "--input", path, "--time", "month", "--value", "sales", "--key", "store"}
	for _, extra := range [][]string{
		{"--model", "ETS(A,N,M)"},                      // excluded form
		{"--model", "ETS(A,N,N)", "--family", "arima"}, // family and model disagree
		{"--family", "crystalball"},                    // unknown family
		{"--family", "arima", "--transform", "boxcox"},
		{"--family", "auto", "--transform", "log"},
		{"--family", "ets", "--model", "ETS(A,N,N)", "--constant"},
	} {
		args := append(append([]string{}, base...), extra...)
		if code := run(args); code != exitInput {
			t.Errorf("%v: exit %d, want %d", extra, code, exitInput)
		}
	}
}
