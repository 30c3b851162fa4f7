package models

import "math"

// Recent error spread. A model's forecast variance rests on its innovation
// variance, estimated from all of its one-step errors. When the spread of
// the errors changes over the history (a recession, a market crash or a
// pandemic in the middle of it, calm since), that estimate describes no
// period in particular: intervals are too wide after a turbulent spell and
// too narrow after a calm one. The common practice of estimating the scale
// from a recent window of errors (an equal-weight version of the
// exponentially weighted variance of RiskMetrics, J.P. Morgan/Reuters 1996,
// "RiskMetrics — Technical Document", 4th ed., §5.2) answers that: the
// forecast variances are multiplied by the ratio of the errors' mean
// square over the latest window to their mean square over the whole fit.
// The ratio is taken on the scale on which the model's variance is
// constant (ConstantScaleResiduals), so that a log model of a growing
// series is not widened for growing alone.

// ConstantScaleResiduals is implemented by models whose errors have a
// constant variance on a scale other than the data's: the transformed
// scale of a Box–Cox model, the relative errors of multiplicative
// exponential smoothing.
type ConstantScaleResiduals interface {
	// ConstantScaleResiduals returns the one-step errors on that scale,
	// aligned as Residuals, NaN where there is none.
	ConstantScaleResiduals() []float64
}

// Composite is implemented by models made of members (a combination):
// their error spread is the mean of their members' ratios.
type Composite interface {
	Components() []Model
}

// The bounds of SpreadFactor: intervals at most twice and at least half
// as wide as the whole fit's errors make them, so that a quiet spell (a
// series that sold the same every period of the window) cannot leave a
// forecast without uncertainty, nor one shock dominate. Common practice;
// the bounds are ours.
const (
	MinSpreadFactor = 0.25
	MaxSpreadFactor = 4
)

// SpreadFactor is the factor by which m's forecast variances are
// multiplied so that its intervals follow the spread of its latest errors:
// RecentSpreadRatio over ErrorWindow(period) errors, within
// MinSpreadFactor..MaxSpreadFactor; 1 when the model has too few errors.
func SpreadFactor(m Model, period int) float64 {
	r, ok := RecentSpreadRatio(m, ErrorWindow(period))
	if !ok {
		return 1
	}
	return min(max(r, MinSpreadFactor), MaxSpreadFactor)
}

// ErrorWindow is the default window of RecentSpreadRatio for seasonal
// period m: three seasonal cycles, and at least 24 periods.
func ErrorWindow(m int) int { return max(3*m, 24) }

// RecentSpreadRatio returns the mean square of m's one-step errors over
// the latest k of them divided by their mean square over all of them, and
// true; or 1 and false when the model has fewer than 2k errors (the window
// would be most of the fit) or none of any size.
func RecentSpreadRatio(m Model, k int) (float64, bool) {
	if c, ok := m.(Composite); ok {
		parts := c.Components()
		sum := 0.0
		for _, p := range parts {
			r, ok := RecentSpreadRatio(p, k)
			if !ok {
				return 1, false
			}
			sum += r
		}
		return sum / float64(len(parts)), len(parts) > 0
	}
	var e []float64
	if cs, ok := m.(ConstantScaleResiduals); ok {
		e = cs.ConstantScaleResiduals()
	} else {
		e = m.Residuals()
	}
	var all, recent float64
	var n, nr int
	for t := len(e) - 1; t >= 0; t-- {
		if math.IsNaN(e[t]) || math.IsInf(e[t], 0) {
			continue
		}
		all += e[t] * e[t]
		n++
		if nr < k {
			recent += e[t] * e[t]
			nr++
		}
	}
	if n < 2*k || !(all > 0) {
		return 1, false
	}
	return (recent / float64(k)) / (all / float64(n)), true
}
