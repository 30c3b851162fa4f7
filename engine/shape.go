package engine

import (
	"math"
	"slices"

	"trueup/hierarchy"
	"trueup/reconcile"
)

// Interval shape from the in-sample errors. Gaussian intervals take the
// forecast's variance and the normal distribution's shape. Sales errors
// are rarely normal: promotions and one-off events give them heavier
// tails, so that with the right variance a Gaussian 80% interval is too
// wide and a 95% one too narrow. errorShape keeps the variance and takes
// the shape from the data: each node's in-sample one-step errors are
// divided by their root mean square, the scores |e|/rms of a node level
// are pooled, and for interval level L the factor is their conformal
// quantile over z_L, as conformal defines it for backtest errors (the
// in-sample form of the empirical intervals of Williams & Goodman 1971,
// "A simple method for the construction of empirical confidence limits
// for economic forecasts", JASA 66:752–754). The factors scale z·sd
// through Result.Calibration, the same at every step; a level with fewer
// than CalibrationMin errors keeps factor 1.
//
// The errors are those of the reconciled forecasts, not of the base ones:
// a reconciled forecast combines many nodes' forecasts, and its errors
// are closer to normal than any one node's (reconciledErrors).
func errorShape(st *hierarchy.Structure, errs [][]float64, h int, intervals []float64) *Calibration {
	levels := st.LevelNames()
	scores := make([][]float64, len(levels))
	for i, row := range errs {
		var ss float64
		var n int
		for _, e := range row {
			if !math.IsNaN(e) {
				ss += e * e
				n++
			}
		}
		if n == 0 || !(ss > 0) {
			continue
		}
		rms := math.Sqrt(ss / float64(n))
		l := st.Nodes[i].Level
		for _, e := range row {
			if !math.IsNaN(e) {
				scores[l] = append(scores[l], math.Abs(e)/rms)
			}
		}
	}
	cal := &Calibration{Levels: levels, Groups: horizonGroups(h), Intervals: intervals}
	for l := range levels {
		slices.Sort(scores[l])
		f, n := conformal(scores[l], intervals), len(scores[l])
		if f == nil {
			f, n = ones(len(intervals)), 0
		}
		fl, cl := make([][]float64, len(cal.Groups)), make([]int, len(cal.Groups))
		for g := range fl {
			fl[g], cl[g] = f, n
		}
		cal.Factor, cal.Count = append(cal.Factor, fl), append(cal.Count, cl)
	}
	return cal
}

// reconciledErrors returns the in-sample one-step errors of the reconciled
// forecasts of the full structure st: the method applied to the base
// errors, period by period. For a linear method with S·G·y = y on
// coherent y (the projections, bottom-up), the reconciled error
// y − S·G·ŷ is S·G·(y − ŷ); for the top-down splits by historical shares
// S·G·(y − ŷ) is the part of it that the base errors make. A node's error is NaN where its own base error
// is (before it opened, say); elsewhere a missing base error counts as
// zero. The nodes of the full structure outside the trading one (closed)
// get nil rows. A method without FixedWeights gets the base errors.
func reconciledErrors(method reconcile.Method, prob reconcile.Problem, trading *openPart, st *hierarchy.Structure) ([][]float64, error) {
	full := make([][]float64, len(st.Nodes))
	if info, _ := reconcile.LookupMethod(method.Name()); !info.FixedWeights {
		for i, f := range trading.toFull {
			full[f] = prob.Residuals[i]
		}
		return full, nil
	}
	q := reconcile.Problem{Structure: prob.Structure, History: prob.History, Residuals: prob.Residuals,
		Base: make([][]float64, len(prob.Residuals)), Statistics: true}
	for i, r := range prob.Residuals {
		q.Base[i] = make([]float64, len(r))
		for t, e := range r {
			if !math.IsNaN(e) {
				q.Base[i][t] = e
			}
		}
	}
	sol, err := method.Reconcile(q)
	if err != nil {
		return nil, err
	}
	for i, f := range trading.toFull {
		row := sol.Forecast[i]
		for t, e := range prob.Residuals[i] {
			if math.IsNaN(e) {
				row[t] = math.NaN()
			}
		}
		full[f] = row
	}
	return full, nil
}
