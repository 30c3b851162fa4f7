package beamfit

import (
	"bytes"
	"context"
	"encoding/gob"
	"fmt"
	"math"
	"os"
	"strings"
	"testing"

	"trueup/engine"
	"trueup/models"
)

// A fit goes through a row and a gob stream (the exchange files) and
// comes back the same: numbers bit for bit (NaN residuals too), nil
// slices nil and empty ones empty, and Params with their Go types, since
// the models table prints them with encoding/json.
func TestFitRowRoundTrip(t *testing.T) {
	cases := []engine.NodeFit{
		{Family: "arima", Spec: "ARIMA(0,1,1)(0,1,1) m=12",
			Params: map[string]any{
				"orders":    map[string]any{"nonseasonal": map[string]int{"ar": 0, "ma": 1}},
				"estimates": []models.Estimate{{Name: "θ1", Value: -0.4123456789012345}},
				"choice":    map[string]any{"candidates": []map[string]any{{"mase": 0.9}}, "winner": "arima"},
				"parts":     []any{map[string]any{"params": map[string]any{"lag": 12}}},
				"season":    []float64{1, 2.5},
				"period":    12, "bias_adjusted": true, "level": math.Inf(1),
			},
			Criteria: models.Criteria{LogLik: -101.25, AIC: 208.5, AICc: 208.9, BIC: 213, K: 3, N: 60},
			Sigma2:   3.25e-7, NObs: 60, First: 12, Last: 71,
			Mean: []float64{1, 2}, Variance: []float64{0.5, math.SmallestNonzeroFloat64},
			Residuals: []float64{math.NaN(), 0.1, -0.2}, Warning: "few observations", Fitted: true},
		{Family: "closed", Spec: "no observations", Params: map[string]any{}, First: -1, Last: -1,
			Mean: []float64{0, 0}, Variance: []float64{0, 0}, Residuals: []float64{}},
		{Family: "naive", Closed: true, Fitted: true},
	}
	// A path form travels too, a log transform (λ = 0) and the members
	// of a median combination included.
	withPath := cases[0]
	withPath.Path = &models.PathForm{Members: []*models.PathForm{
		{Mean: []float64{4.5, 4.6}, Psi: []float64{1, 0.6}, Innovations: []float64{math.NaN(), 0.01}, BoxCox: true},
		{Smoothing: &models.SmoothingForm{MulError: true, Level: 90, Alpha: 0.3, Phi: 1, Season: []float64{0.9, 1.1}},
			Innovations: []float64{0.02, -0.01}}}}
	cases = append(cases, withPath)
	for i, want := range cases {
		row, err := fitRow(int64(i), want)
		if err != nil {
			t.Fatal(err)
		}
		var b bytes.Buffer
		if err := gob.NewEncoder(&b).Encode(row); err != nil {
			t.Fatal(err)
		}
		var back FitRow
		if err := gob.NewDecoder(&b).Decode(&back); err != nil {
			t.Fatal(err)
		}
		got, err := back.fit()
		if err != nil {
			t.Fatal(err)
		}
		// %#v shows types, nil against empty, and floats in full; the
		// path form (a pointer) is compared by its contents.
		if g, w := pathText(got.Path), pathText(want.Path); g != w {
			t.Errorf("case %d: path form\ngot  %s\nwant %s", i, g, w)
		}
		got.Path, want.Path = nil, nil
		if g, w := fmt.Sprintf("%#v", got), fmt.Sprintf("%#v", want); g != w {
			t.Errorf("case %d:\ngot  %s\nwant %s", i, g, w)
		}
		if back.Index != int64(i) {
			t.Errorf("case %d: index %d", i, back.Index)
		}
	}
}

// An engine.FitJob goes through a row unchanged.
func TestJobRowRoundTrip(t *testing.T) {
	want := engine.FitJob{Node: 7, Series: []float64{math.NaN(), 1, 2.5}, Period: 12, Horizon: 6}
	want.Model.Family, want.Model.Form, want.Model.Transform, want.Model.Constant = "arima", "ARIMA(1,1,0)", "log", true
	got := jobRow(3, want).job()
	if g, w := fmt.Sprintf("%#v", got), fmt.Sprintf("%#v", want); g != w {
		t.Errorf("got  %s\nwant %s", g, w)
	}
}

// Exchange names keep a URL's double slash (path.Join would make
// gs://bucket/x into gs:/bucket/x, which no file system serves).
func TestJoinKeepsURLs(t *testing.T) {
	if got := join("gs://bucket/exchange", "fits", "a.gob"); got != "gs://bucket/exchange/fits/a.gob" {
		t.Errorf("join: %s", got)
	}
}

// A fit file cut short, left by a failed attempt at a bundle, gives the
// rows it holds whole; a job with no fit in any file is an error.
func TestReadFitsSkipsAFileCutShort(t *testing.T) {
	ctx := context.Background()
	dir := t.TempDir()
	fit := engine.NodeFit{Family: "naive", Params: map[string]any{"lag": 12}, Mean: []float64{1}, Variance: []float64{2}}
	var rows []FitRow
	for i := range 3 {
		r, err := fitRow(int64(i), fit)
		if err != nil {
			t.Fatal(err)
		}
		rows = append(rows, r)
	}
	if err := writeRows(ctx, join(dir, "whole.gob"), rows); err != nil {
		t.Fatal(err)
	}
	b, err := os.ReadFile(join(dir, "whole.gob"))
	if err != nil {
		t.Fatal(err)
	}
	if err := os.WriteFile(join(dir, "cut.gob"), b[:len(b)-5], 0o644); err != nil {
		t.Fatal(err)
	}
	fits, err := readFits(ctx, dir, 3)
	if err != nil {
		t.Fatal(err)
	}
	if len(fits) != 3 || fits[2].Params["lag"] != 12 {
		t.Errorf("fits %#v", fits)
	}
	if err := os.Remove(join(dir, "whole.gob")); err != nil {
		t.Fatal(err)
	}
	if _, err := readFits(ctx, dir, 3); err == nil || !strings.Contains(err.Error(), "no fit came back for job 2") {
		t.Errorf("a job with no whole fit: %v", err)
	}
}

// pathText writes a path form's contents, nested forms included.
func pathText(p *models.PathForm) string {
	if p == nil {
		return "nil"
	}
	q := *p
	var members []string
	for _, m := range q.Members {
		members = append(members, pathText(m))
	}
	q.Members = nil
	sm := "nil"
	if q.Smoothing != nil {
		sm = fmt.Sprintf("%#v", *q.Smoothing)
	}
	q.Smoothing = nil
	return fmt.Sprintf("%#v smoothing %s members %v", q, sm, members)
}
