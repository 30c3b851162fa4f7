package engine

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"trueup/hierarchy"
	"trueup/reconcile"
)

// TestResidualShape checks the factors against the closed-form quantiles
// of two error distributions, 20,000 seeded draws each spread over the
// nodes of a level: normal errors give factors of 1 (the interval's own
// shape), Laplace errors scaled to unit variance the quantiles of their
// absolute value, an exponential with mean b = 1/√2, over z_L:
// b·ln 5 / 1.2816 = 0.888 at 80 % and b·ln 20 / 1.9600 = 1.081 at 95 %
// (Laplace distribution, common practice; normal quantiles from gonum's
// distuv). Nodes without errors, or without errors of any size, add no
// scores.
func TestErrorShape(t *testing.T) {
	st, err := hierarchy.Build([]hierarchy.Chain{{"store"}}, [][]string{{"a"}, {"b"}, {"c"}, {"d"}})
	if err != nil {
		t.Fatal(err)
	}
	b := 1 / math.Sqrt2
	for _, c := range []struct {
		name     string
		draw     distuv.Rander
		want80   float64
		want95   float64
		tolerate float64
	}{
		{"normal", distuv.Normal{Mu: 0, Sigma: 5, Src: rand.NewPCG(1, 2)}, 1, 1, 0.03},
		{"Laplace", distuv.Laplace{Mu: 0, Scale: 5, Src: rand.NewPCG(1, 2)}, b * math.Log(5) / Quantile(80), b * math.Log(20) / Quantile(95), 0.03},
	} {
		errs := make([][]float64, len(st.Nodes))
		for i := range errs {
			errs[i] = []float64{math.NaN()}
			for range 5000 {
				errs[i] = append(errs[i], c.draw.Rand())
			}
		}
		errs[1] = nil
		errs[2] = []float64{math.NaN(), 0}
		cal := errorShape(st, errs, 12, []float64{80, 95})
		if len(cal.Levels) != 2 || len(cal.Groups) != 3 {
			t.Fatalf("%s: levels %v, groups %v", c.name, cal.Levels, cal.Groups)
		}
		// The total's 5,000 errors, and the stores' 10,000 (a without
		// errors, b without errors of any size); every horizon group of a
		// level has
		// the same factors.
		for l, level := range cal.Levels {
			want := []int{5000, 10000}[l]
			for g := range cal.Groups {
				f := cal.Factor[l][g]
				if cal.Count[l][g] != want {
					t.Errorf("%s %s: %d errors, want %d", c.name, level, cal.Count[l][g], want)
				}
				if math.Abs(f[0]-c.want80) > c.tolerate || math.Abs(f[1]-c.want95) > c.tolerate {
					t.Errorf("%s %s group %d: factors %.3f, %.3f, want %.3f, %.3f", c.name, level, g, f[0], f[1], c.want80, c.want95)
				}
			}
		}
	}
}

// TestReconciledErrors: for the methods with fixed weights, the errors
// reconciledErrors returns are the in-sample errors of reconciling the
// fitted values themselves, y − S·G·ŷ with y coherent (the identity
// S·G·S = S of projections and bottom-up; Wickramasuriya, Athanasopoulos
// & Hyndman 2019, §2), computed here by reconciling ŷ = y − e column by
// column; a node's error is NaN where its base error is.
func TestReconciledErrors(t *testing.T) {
	st, err := hierarchy.Build([]hierarchy.Chain{{"region", "store"}},
		[][]string{{"n", "a"}, {"n", "b"}, {"s", "c"}, {"s", "d"}, {"s", "e"}})
	if err != nil {
		t.Fatal(err)
	}
	n, T := len(st.Nodes), 40
	rng := rand.New(rand.NewPCG(3, 4))
	bottom := make([][]float64, st.NumBottom())
	for j := range bottom {
		for range T {
			bottom[j] = append(bottom[j], 100+10*rng.NormFloat64())
		}
	}
	y := st.S.Aggregate(bottom)
	prob := reconcile.Problem{Structure: st, Residuals: make([][]float64, n)}
	fitted := reconcile.Problem{Structure: st, Base: make([][]float64, n)}
	for i := range y {
		for t := range T {
			e := 3 * rng.NormFloat64()
			prob.Residuals[i] = append(prob.Residuals[i], e)
			fitted.Base[i] = append(fitted.Base[i], y[i][t]-e)
		}
	}
	prob.Residuals[3][0] = math.NaN() // store b has no error at the first period
	fitted.Base[3][0] = y[3][0]
	fitted.Residuals = prob.Residuals
	toFull := make([]int, n)
	for i := range toFull {
		toFull[i] = i
	}
	for _, c := range [][2]string{{"bottom-up", ""}, {"mint", string(reconcile.CovShrink)}} {
		name := c[0]
		method, err := reconcile.ByName(name, c[1], "")
		if err != nil {
			t.Fatal(err)
		}
		got, err := reconciledErrors(method, prob, &openPart{st: st, toFull: toFull}, st)
		if err != nil {
			t.Fatal(err)
		}
		sol, err := method.Reconcile(fitted)
		if err != nil {
			t.Fatal(err)
		}
		for i := range y {
			for t0 := range T {
				want := y[i][t0] - sol.Forecast[i][t0]
				if i == 3 && t0 == 0 {
					want = math.NaN()
				}
				if g := got[i][t0]; !(math.IsNaN(want) && math.IsNaN(g)) && math.Abs(g-want) > 1e-8 {
					t.Fatalf("%s: %s at %d: %v, want %v", name, st.Label(i), t0, g, want)
				}
			}
		}
	}
}
