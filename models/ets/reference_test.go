package ets

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"
	"trueup/fixtures/reference"
)

// refDir holds outside reference values: R datasets (R 4.2.2, Debian
// r-base-core) exported to CSV and statsmodels 0.13.5 (Debian
// python3-statsmodels 0.13.5+dfsg-7) ETSModel fits; see
// fixtures/reference/ets/VERSIONS.txt and the scripts beside it.
var refDir = filepath.Join("..", "..", "fixtures", "reference", "ets")

type refPair struct {
	Series string  `json:"series"`
	Period int     `json:"period"`
	Spec   string  `json:"spec"`
	N      int     `json:"n"`
	LogLik float64 `json:"loglik"`
	Params struct {
		Alpha float64  `json:"alpha"`
		Beta  *float64 `json:"beta"`
		Gamma *float64 `json:"gamma"`
		Phi   *float64 `json:"phi"`
		Level float64  `json:"level"`
		Trend *float64 `json:"trend"`
	} `json:"params"`
	Season []float64 `json:"initial_season"`
	Fitted []float64 `json:"fitted"`
}

func loadRefs(t testing.TB) []refPair {
	t.Helper()
	b, err := os.ReadFile(filepath.Join(refDir, "statsmodels_ets.json"))
	if err != nil {
		t.Fatal(err)
	}
	var doc struct {
		Pairs []refPair `json:"pairs"`
	}
	if err := json.Unmarshal(b, &doc); err != nil {
		t.Fatal(err)
	}
	return doc.Pairs
}

// loadSeries reads one exported R dataset (comment line, header, values).
func loadSeries(t testing.TB, name string) []float64 {
	t.Helper()
	y, err := reference.Series("ets/data/" + name + ".csv")
	if err != nil {
		t.Fatal(err)
	}
	return y
}

func opt(p *float64, def float64) float64 {
	if p == nil {
		return def
	}
	return *p
}

// TestLogLikAtReferenceParams evaluates our likelihood at statsmodels'
// estimates: the recursions and the full Gaussian log-likelihood
// (including the Σ ln ŷ term of multiplicative errors) must reproduce
// statsmodels' maximised log-likelihood and fitted values. The
// multiplicative-seasonal pairs are left out here because statsmodels'
// seasonal update for them differs from s' = s(1 + γε) of HKOS Table 2.3 in
// the sixth digit (the regeneration script records the size); they are
// covered by TestFitSpecMatchesReference.
func TestLogLikAtReferenceParams(t *testing.T) {
	checked := 0
	for _, r := range loadRefs(t) {
		sp, err := ParseSpec(r.Spec)
		if err != nil {
			t.Fatal(err)
		}
		if sp.Season == Mul {
			continue
		}
		y := loadSeries(t, r.Series)
		m := r.Period
		if !sp.Seasonal() {
			m = 1
		}
		p := Params{Alpha: r.Params.Alpha, Beta: opt(r.Params.Beta, 0), Gamma: opt(r.Params.Gamma, 0),
			Phi: opt(r.Params.Phi, 1), Level: r.Params.Level, Trend: opt(r.Params.Trend, 0), Season: r.Season}
		out := filterOut{yhat: make([]float64, len(y))}
		sse, sumLog, ok := filter(sp, &p, y, make([]float64, m), &out)
		if !ok {
			t.Fatalf("%s %s: filter failed", r.Series, r.Spec)
		}
		ll := logLik(sse, sumLog, len(y), 0)
		if math.Abs(ll-r.LogLik) > 1e-6*math.Abs(r.LogLik) {
			t.Errorf("%s %s: loglik at reference params %.6f, statsmodels %.6f", r.Series, r.Spec, ll, r.LogLik)
		}
		for i := range y {
			if math.Abs(out.yhat[i]-r.Fitted[i]) > 1e-7*(1+math.Abs(r.Fitted[i])) {
				t.Errorf("%s %s: fitted[%d] = %g, statsmodels %g", r.Series, r.Spec, i, out.yhat[i], r.Fitted[i])
				break
			}
		}
		checked++
	}
	if checked < 8 {
		t.Fatalf("only %d reference pairs checked", checked)
	}
}

// TestFitSpecMatchesReference: our maximised log-likelihood is within 0.05
// of statsmodels' ETSModel maximum, or higher, for every committed pair
// (issue criterion; statsmodels 0.13.5, same usual bounds, same likelihood).
func TestFitSpecMatchesReference(t *testing.T) {
	refs := loadRefs(t)
	for _, r := range refs {
		sp, err := ParseSpec(r.Spec)
		if err != nil {
			t.Fatal(err)
		}
		y := loadSeries(t, r.Series)
		f, err := FitSpec(y, sp, r.Period)
		if err != nil {
			t.Fatalf("%s %s: %v", r.Series, r.Spec, err)
		}
		ll := f.Criteria().LogLik
		t.Logf("%-15s %-12s ours %10.4f statsmodels %10.4f diff %+.4f", r.Series, r.Spec, ll, r.LogLik, ll-r.LogLik)
		if ll < r.LogLik-0.05 {
			t.Errorf("%s %s: loglik %.4f below statsmodels %.4f by more than 0.05", r.Series, r.Spec, ll, r.LogLik)
		}
	}
}
