package ets

import (
	"encoding/json"
	"math"
	"os"
	"testing"

	"trueup/fixtures/reference"
)

// TestPathFormAgainstR checks the ψ-weights of the linear forms against
// those of their ARIMA equivalents from base R 4.2.2's stats::ARMAtoMA
// (fixtures/reference/paths/psi.R; equivalences from Hyndman, Koehler, Ord
// & Snyder 2008, Table 11.1), and that a form with multiplicative errors
// has no path form.
func TestPathFormAgainstR(t *testing.T) {
	b, err := os.ReadFile("../../fixtures/reference/paths/psi.json")
	if err != nil {
		t.Fatal(err)
	}
	var cases []struct {
		Name             string
		Alpha, Beta, Phi float64
		Psi              []float64
	}
	if err := json.Unmarshal(b, &cases); err != nil {
		t.Fatal(err)
	}
	y, err := reference.Series("ets/data/Nile.csv")
	if err != nil {
		t.Fatal(err)
	}
	specs := map[string]Spec{"ANN": {Add, None, None}, "AAN": {Add, Add, None}, "AAdN": {Add, Dampd, None}}
	for _, c := range cases {
		f, err := newFitted(y, specs[c.Name], 1, Params{Alpha: c.Alpha, Beta: c.Beta, Phi: c.Phi, Level: y[0]})
		if err != nil {
			t.Fatal(err)
		}
		pf := f.PathForm(len(c.Psi))
		for j, want := range c.Psi {
			if math.Abs(pf.Psi[j]-want) > 1e-12 {
				t.Errorf("%s: ψ_%d = %.15g, R %.15g", c.Name, j, pf.Psi[j], want)
			}
		}
		mean, variance := f.Forecast(len(c.Psi))
		var s float64
		for k, p := range pf.Psi {
			s += p * p
			if math.Abs(pf.Mean[k]-mean[k]) > 1e-9*math.Abs(mean[k]) || math.Abs(f.sigma2*s/variance[k]-1) > 1e-12 {
				t.Errorf("%s h=%d: path form mean %g, var %g; forecast %g, %g", c.Name, k+1, pf.Mean[k], f.sigma2*s, mean[k], variance[k])
			}
		}
	}
	f, err := newFitted(y, Spec{Mul, None, None}, 1, Params{Alpha: 0.3, Level: y[0]})
	if err != nil {
		t.Fatal(err)
	}
	if f.PathForm(4) != nil {
		t.Error("ETS(M,N,N) has a linear path form")
	}
}
