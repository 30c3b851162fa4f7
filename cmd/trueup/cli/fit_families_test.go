package cli

import (
	"strings"
	"testing"

	"trueup/inputerr"
)

// TestFitETSJSON: a fixed ETS form through the command reports its
// smoothing parameters and starting states; its log-likelihood reaches the
// one statsmodels 0.13.5 reaches for ETS(M,A,M) on AirPassengers (−522.49,
// fixtures/reference/ets/statsmodels_ets.json).
func TestFitETSJSON(t *testing.T) {
	path := writeAirCSV(t, false)
	recs := fitRecords(t, "fit", "--input", path, "--time", "month", "--value", "sales",
		"--key", "store", "--model", "ETS(M,A,M)", "--horizon", "12", "--json")
	if len(recs) != 2 {
		t.Fatalf("%d records", len(recs))
	}
	r := recs[0]
	if r["family"] != "ets" || r["model"] != "ETS(M,A,M)" {
		t.Errorf("family %v, model %v", r["family"], r["model"])
	}
	est := estimates(t, r)
	for _, k := range []string{"α", "β", "γ"} {
		if _, ok := est[k]; !ok {
			t.Errorf("missing estimate %s in %v", k, est)
		}
	}
	if _, damped := est["φ"]; damped || len(est) != 3 {
		t.Errorf("estimates %v", est)
	}
	if ll := r["fit_quality"].(map[string]any)["log_likelihood"].(float64); ll < -522.49-0.05 {
		t.Errorf("log-likelihood %v", ll)
	}
	init := r["params"].(map[string]any)["starting_states"].(map[string]any)
	if len(init["season"].([]any)) != 12 {
		t.Errorf("starting seasonal states %v", init["season"])
	}
	// The smoothed level is "underlying": "level" means a level of the
	// structure only.
	if _, ok := init["underlying"].(float64); !ok || init["level"] != nil {
		t.Errorf("starting states %v: want underlying, not level", init)
	}
	// The season's length is season_length, as in run.json's options:
	// "period" is a period of the calendar.
	if p := r["params"].(map[string]any); p["season_length"] != 12.0 || p["period"] != nil {
		t.Errorf("params %v: want season_length 12, not period", p)
	}
	// Theta's smoothed level is "underlying" too.
	recs = fitRecords(t, "fit", "--input", path, "--time", "month", "--value", "sales",
		"--key", "store", "--family", "theta", "--horizon", "12", "--json")
	if p := recs[0]["params"].(map[string]any); p["level"] != nil || p["period"] != nil || p["season_length"] != 12.0 {
		t.Errorf("Theta params %v: want underlying and season_length, not level and period", p)
	} else if _, ok := p["underlying"].(float64); !ok {
		t.Errorf("Theta params %v: no underlying value", p)
	}
}

// TestFitAutoJSON: the default family is the automatic choice, which
// records every candidate's validation score and why the winner won; a
// Box–Cox transform of ETS reports its λ.
func TestFitAutoJSON(t *testing.T) {
	path := writeAirCSV(t, false)
	recs := fitRecords(t, "fit", "--input", path, "--time", "month", "--value", "sales",
		"--key", "store", "--horizon", "12", "--json")
	choice := recs[0]["params"].(map[string]any)["choice"].(map[string]any)
	cands, ok := choice["candidates"].([]any)
	if !ok || len(cands) != 6 {
		t.Fatalf("candidates %v", choice["candidates"])
	}
	names := map[string]bool{}
	for _, c := range cands {
		m := c.(map[string]any)
		names[m["family"].(string)] = true
		if m["model"] == nil || m["form"] != nil {
			t.Errorf("candidate %v", m)
		}
	}
	if !names["seasonal-naive"] || !names["theta+ets+arima"] {
		t.Errorf("candidate families %v", names)
	}
	if !strings.Contains(choice["reason"].(string), "validation MASE") {
		t.Errorf("reason %v", choice["reason"])
	}
	recs = fitRecords(t, "fit", "--input", path, "--time", "month", "--value", "sales",
		"--key", "store", "--family", "ets", "--transform", "boxcox", "--horizon", "12", "--json")
	tr := recs[0]["params"].(map[string]any)["transform"].(map[string]any)
	if l, ok := tr["lambda"].(float64); !ok || l >= 1 || tr["kind"] != "boxcox" {
		t.Errorf("Box-Cox transform %v", tr)
	}
}

// TestFitFamilyErrors: model options the library refuses are input errors
// about the option that the command line maps to the flag at fault.
func TestFitFamilyErrors(t *testing.T) {
	path := writeAirCSV(t, false)
	base := []string{"fit", "--input", path, "--time", "month", "--value", "sales", "--key", "store"}
	for _, c := range []struct {
		extra []string
		flag  string
	}{
		{[]string{"--model", "ETS(A,N,M)"}, "--model"}, // excluded form
		{[]string{"--model", "ETS(A,N,N)", "--family", "arima"}, "--family"},
		{[]string{"--family", "crystalball"}, "--family"},
		{[]string{"--family", "auto", "--transform", "log"}, "--transform"},
		{[]string{"--family", "ets", "--model", "ETS(A,N,N)", "--constant"}, "--constant"},
	} {
		args := append(append([]string{}, base...), c.extra...)
		_, err := runCapture(args...)
		if flag := optionFlags[inputerr.OptionOf(err)]; flag != c.flag {
			t.Errorf("%v: error %v is about %q, want %s", c.extra, err, flag, c.flag)
		}
		if code := run(args); code != exitInput {
			t.Errorf("%v: exit %d, want %d", c.extra, code, exitInput)
		}
	}
}
