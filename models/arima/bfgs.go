package arima

import (
	"math"

	"gonum.org/v1/gonum/floats"
	"gonum.org/v1/gonum/optimize"
)

// bfgsSettings are the stopping rules of the likelihood optimisation, with
// the meaning of the optimize.Settings fields of the same names.
type bfgsSettings struct {
	GradientThreshold float64 // stop when max |gradient| at a major iteration is below it
	Converger         *optimize.FunctionConverge
	MajorIterations   int
}

// bfgsStopGradient is the gradient threshold below which gonum's BFGS
// method stops on its own (its GradStopThreshold default).
const bfgsStopGradient = 1e-12

// minimizeBFGS minimises f from x0 by gonum's BFGS method (Nocedal &
// Wright 2006, Numerical Optimization, §6.1) with its default bisection
// line search, exactly as optimize.Minimize(optimize.Problem{Func: f,
// Grad: grad}, x0, settings, &optimize.BFGS{}) does, and returns the same
// point, value and error, bit for bit. Minimize runs the method and the
// evaluations in separate goroutines that hand every evaluation over
// channels; this loop drives gonum's own line-search method and BFGS
// direction in the calling goroutine instead, which spares those hand-offs
// (several per evaluation of a likelihood that takes microseconds).
// bfgs_test.go checks the identity against Minimize.
//
// x is the last major iteration's point (x0's slot holds zeros when the
// start itself is invalid, as with Minimize); err is nil when a stopping
// rule of settings or the method's own gradient rule ended the run.
func minimizeBFGS(f func([]float64) float64, grad func(g, x []float64), x0 []float64, settings bfgsSettings) (x []float64, fx float64, err error) {
	dim := len(x0)
	loc := &optimize.Location{X: append([]float64(nil), x0...)}
	best := &optimize.Location{X: make([]float64, dim), F: math.Inf(1)}
	arg := make([]float64, dim) // f and grad get a copy of loc.X, as in Minimize
	evaluate := func(op optimize.Operation) {
		copy(arg, loc.X)
		if op&optimize.FuncEvaluation != 0 {
			loc.F = f(arg)
		}
		if op&optimize.GradEvaluation != 0 {
			if len(loc.Gradient) == 0 {
				loc.Gradient = make([]float64, dim)
			}
			grad(loc.Gradient, arg)
		}
	}
	conv := settings.Converger
	conv.Init(dim)
	majors := 0
	// major records loc as the best point and reports whether a stopping
	// rule of settings holds there (Minimize's performMajorIteration).
	major := func() bool {
		best.F = loc.F
		copy(best.X, loc.X)
		if best.Gradient == nil {
			best.Gradient = make([]float64, dim)
		}
		copy(best.Gradient, loc.Gradient)
		majors++
		if math.IsInf(best.F, -1) {
			return true
		}
		if settings.GradientThreshold > 0 && floats.Norm(best.Gradient, math.Inf(1)) < settings.GradientThreshold {
			return true
		}
		if conv.Converged(best) != optimize.NotTerminated {
			return true
		}
		return settings.MajorIterations > 0 && majors >= settings.MajorIterations
	}

	evaluate(optimize.FuncEvaluation | optimize.GradEvaluation)
	if math.IsInf(loc.F, 1) || math.IsNaN(loc.F) {
		return best.X, best.F, optimize.ErrFunc(loc.F)
	}
	for i, v := range loc.Gradient {
		if math.IsInf(v, 0) || math.IsNaN(v) {
			return best.X, best.F, optimize.ErrGrad{Grad: v, Index: i}
		}
	}
	if major() {
		return best.X, best.F, nil
	}
	ls := &optimize.LinesearchMethod{NextDirectioner: &optimize.BFGS{}, Linesearcher: &optimize.Bisection{}}
	op, err := ls.Init(loc)
	for err == nil {
		if op == optimize.MajorIteration {
			if major() || floats.Norm(loc.Gradient, math.Inf(1)) < bfgsStopGradient {
				return best.X, best.F, nil
			}
		} else {
			evaluate(op)
		}
		op, err = ls.Iterate(loc)
	}
	return best.X, best.F, err
}
