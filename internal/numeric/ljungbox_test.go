package numeric

import (
	"encoding/json"
	"math"
	"os"
	"path/filepath"
	"testing"
)

// TestLjungBoxAgainstStatsmodels compares ACF, PACF and LjungBox with
// statsmodels' acf, pacf(method="ldb") and acorr_ljungbox (the version is
// recorded in fixtures/reference/arima/ljungbox.json, made by
// regenerate_ljungbox.py beside it) to 1e-6.
func TestLjungBoxAgainstStatsmodels(t *testing.T) {
	b, err := os.ReadFile(filepath.Join(refDir, "ljungbox.json"))
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Tool  string
		Cases []struct {
			Series, Transform string
			Lags, DOF         int
			Statistic         float64
			PValue            float64 `json:"p_value"`
			ACF, PACF         []float64
		}
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.Cases) < 3 {
		t.Fatalf("%d reference cases, want at least 3", len(ref.Cases))
	}
	for _, c := range ref.Cases {
		x := loadSeries(t, c.Series)
		if c.Transform == "logdiff" {
			for i := range x {
				x[i] = math.Log(x[i])
			}
		}
		if c.Transform == "diff" || c.Transform == "logdiff" {
			for i := 0; i+1 < len(x); i++ {
				x[i] = x[i+1] - x[i]
			}
			x = x[:len(x)-1]
		}
		acf := ACF(x, c.Lags)[1:]
		pacf := PACF(make([]float64, c.Lags), acf, make([]float64, 2*c.Lags))
		for k := range acf {
			if math.Abs(acf[k]-c.ACF[k]) > 1e-6 || math.Abs(pacf[k]-c.PACF[k]) > 1e-6 {
				t.Errorf("%s/%s lag %d: acf %v pacf %v, %s %v %v", c.Series, c.Transform, k+1, acf[k], pacf[k], ref.Tool, c.ACF[k], c.PACF[k])
			}
		}
		q, p := LjungBox(acf, len(x), c.DOF)
		if math.Abs(q-c.Statistic) > 1e-6 || math.Abs(p-c.PValue) > 1e-6 {
			t.Errorf("%s/%s lags %d dof %d: Q %v p %v, %s Q %v p %v", c.Series, c.Transform, c.Lags, c.DOF, q, p, ref.Tool, c.Statistic, c.PValue)
		}
	}
}

// TestLjungBoxLags checks the lag rule: 2m for seasonal data, 10
// otherwise, capped at n/5 (common practice, see LjungBoxLags).
func TestLjungBoxLags(t *testing.T) {
	for _, c := range []struct{ n, m, want int }{{72, 12, 14}, {200, 12, 24}, {100, 1, 10}, {20, 1, 4}, {3, 12, 1}} {
		if got := LjungBoxLags(c.n, c.m); got != c.want {
			t.Errorf("LjungBoxLags(%d, %d) = %d, want %d", c.n, c.m, got, c.want)
		}
	}
}
