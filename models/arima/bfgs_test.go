package arima

import (
	"math"
	"slices"
	"testing"

	"gonum.org/v1/gonum/optimize"
	"gonum.org/v1/gonum/optimize/functions"
)

// TestMinimizeBFGSMatchesGonum checks that the synchronous driver gives
// exactly what gonum v0.17.0's optimize.Minimize gives with the BFGS method
// and the same settings — point, value and whether it failed — on gonum's
// own test functions (optimize/functions, from their documented starting
// points, and from points where they are not finite) and on the ARIMA
// likelihoods of log Series G (R datasets::AirPassengers).
func TestMinimizeBFGSMatchesGonum(t *testing.T) {
	type problem struct {
		name string
		f    func([]float64) float64
		g    func(g, x []float64)
		x0   []float64
	}
	probs := []problem{
		{"Rosenbrock", functions.ExtendedRosenbrock{}.Func, functions.ExtendedRosenbrock{}.Grad, []float64{-1.2, 1}},
		{"Rosenbrock4", functions.ExtendedRosenbrock{}.Func, functions.ExtendedRosenbrock{}.Grad, []float64{-1.2, 1, -1.2, 1}},
		{"Beale", functions.Beale{}.Func, functions.Beale{}.Grad, []float64{1, 1}},
		{"HelicalValley", functions.HelicalValley{}.Func, functions.HelicalValley{}.Grad, []float64{-1, 0, 0}},
		{"PowellBadlyScaled", functions.PowellBadlyScaled{}.Func, functions.PowellBadlyScaled{}.Grad, []float64{0, 1}},
		{"BrownBadlyScaled", functions.BrownBadlyScaled{}.Func, functions.BrownBadlyScaled{}.Grad, []float64{1, 1}},
		{"Sphere at its minimum", functions.Sphere{}.Func, functions.Sphere{}.Grad, []float64{0, 0}},
		{"infinite start", func(x []float64) float64 { return math.Inf(1) }, func(g, x []float64) { clear(g) }, []float64{1}},
		{"NaN gradient", functions.Sphere{}.Func, func(g, x []float64) { g[0] = math.NaN() }, []float64{1, 2}},
	}
	y := loadSeries(t, "airpass")
	for _, s := range []string{"log ARIMA(0,1,1)(0,1,1) m=12", "log ARIMA(2,1,1)(1,1,0) m=12", "ARIMA(1,1,2)(0,1,1) m=12"} {
		spec, err := ParseSpec(s)
		if err != nil {
			t.Fatal(err)
		}
		pr, err := newProblem(y, spec, nil)
		if err != nil {
			t.Fatal(err)
		}
		grad := func(g, x []float64) {
			xx := slices.Clone(x)
			fx := pr.mlObjective(x)
			for i := range xx {
				h := 1e-6 * math.Max(1, math.Abs(xx[i]))
				xx[i] += h
				g[i] = (pr.mlObjective(xx) - fx) / h
				xx[i] = x[i]
			}
		}
		probs = append(probs, problem{s, pr.mlObjective, grad, make([]float64, pr.nFree())})
	}
	for _, p := range probs {
		settings := bfgsSettings{GradientThreshold: 1e-5, Converger: &optimize.FunctionConverge{Absolute: 1e-9, Iterations: 8}, MajorIterations: 200}
		x, fx, err := minimizeBFGS(p.f, p.g, p.x0, settings)
		ref, refErr := optimize.Minimize(optimize.Problem{Func: p.f, Grad: p.g}, p.x0, &optimize.Settings{
			GradientThreshold: 1e-5,
			Converger:         &optimize.FunctionConverge{Absolute: 1e-9, Iterations: 8},
			MajorIterations:   200,
		}, &optimize.BFGS{})
		if (err == nil) != (refErr == nil) {
			t.Errorf("%s: error %v, gonum's %v", p.name, err, refErr)
			continue
		}
		if !slices.Equal(x, ref.X) || !(fx == ref.F || math.IsNaN(fx) && math.IsNaN(ref.F)) {
			t.Errorf("%s: minimum %v at %v, gonum's %v at %v", p.name, fx, x, ref.F, ref.X)
		}
	}
}
