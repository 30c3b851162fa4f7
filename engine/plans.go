package engine

import (
	"fmt"
	"math"
	"slices"
	"strings"

	"trueup/inputerr"
	"trueup/tableio"
)

// Plans are the totals of every node over the plan periods (quarters,
// years) that the forecast reaches, as finance plans by them: for a plan
// period that began before the forecast origin, the actuals of its periods
// already past plus the reconciled forecasts of the rest. Totals are sums
// of the same numbers the forecasts table holds, so they are coherent
// exactly as the forecasts are: every node's total is the sum of its
// periods and of its children's totals.
type Plans struct {
	// Periods are the plan periods, grain by grain (finest first), each
	// in calendar order.
	Periods []PlanPeriod
	// Actual, Forecast and Variance hold, per node and plan period, the
	// sum of the actuals of the periods before the origin, the sum of the
	// reconciled forecasts of the others, and the variance of the
	// forecast part's error (see sumVariance; nil without variances).
	Actual, Forecast, Variance [][]float64
	// LeftOut says which plan periods the forecast reaches but does not
	// cover whole, and why; they have no totals.
	LeftOut []string
}

// PlanPeriod is one plan period and the calendar columns it holds.
type PlanPeriod struct {
	// Period is the plan period at its own grain (2027-Q1, 2027).
	Period tableio.Period
	// First and End bound the calendar columns it holds, [First, End);
	// those before Calendar.T are history, the others forecasts.
	First, End int
}

// ActualPeriods and ForecastPeriods count the data's periods of p that
// are history and forecast in a calendar of T history periods.
func (p PlanPeriod) ActualPeriods(T int) int   { return max(min(p.End, T)-p.First, 0) }
func (p PlanPeriod) ForecastPeriods(T int) int { return p.End - max(p.First, T) }

// checkPlanGrains refuses plan grains that are not calendar grains coarser
// than the data's, and a grain named twice.
func checkPlanGrains(grains []tableio.Grain, data tableio.Grain) error {
	for i, g := range grains {
		if slices.Contains(grains[:i], g) {
			return inputerr.ForOption("PlanGrains", "plan grain %s is given twice", g)
		}
		if data == tableio.Index {
			return inputerr.ForOption("PlanGrains", "the data is a step index with no calendar: it has no %s totals", g)
		}
		if g <= data || g == tableio.Index {
			return inputerr.ForOption("PlanGrains", "the data is by %s: plan totals need a coarser calendar grain than that, such as %s",
				data, coarserGrains(data))
		}
	}
	return nil
}

func coarserGrains(g tableio.Grain) string {
	var names []string
	for c := g + 1; c < tableio.Index; c++ {
		names = append(names, c.String())
	}
	if len(names) == 0 {
		return "none (years are the coarsest)"
	}
	return strings.Join(names, " or ")
}

// planPeriods lists the plan periods of the grains that hold at least one
// of the h forecast columns of the calendar, with the columns they hold. A
// plan period that runs on past the horizon, or began before the history,
// is left out and named in leftOut: a total missing some of its periods
// would read as a whole quarter or year.
func planPeriods(cal Calendar, h int, grains []tableio.Grain) (periods []PlanPeriod, leftOut []string) {
	grains = slices.Clone(grains)
	slices.Sort(grains)
	for _, g := range grains {
		at := func(t int) tableio.Period {
			p, _ := cal.Period(t).BelongsTo(g) // checked by checkPlanGrains
			return p
		}
		for t := cal.T; t < cal.T+h; {
			q := at(t)
			first, end := t, t
			for first > 0 && at(first-1) == q {
				first--
			}
			for end < cal.T+h && at(end) == q {
				end++
			}
			switch {
			case first == 0 && at(-1) == q:
				leftOut = append(leftOut, fmt.Sprintf("%s: the history begins inside it, at %s", q, cal.Period(0)))
			case end == cal.T+h && at(end) == q:
				last := end
				for at(last) == q {
					last++
				}
				leftOut = append(leftOut, fmt.Sprintf("%s: it runs to %s, past the last forecast period %s (a horizon of %d more periods covers it)",
					q, cal.Period(last-1), cal.Period(cal.T+h-1), last-end))
			default:
				periods = append(periods, PlanPeriod{Period: q, First: first, End: end})
			}
			t = end
		}
	}
	return periods, leftOut
}

// plans makes the plan totals of a result (see Plans).
func (r *Result) plans(grains []tableio.Grain) *Plans {
	cal, h, st := r.Calendar, r.Horizon, r.Structure
	periods, leftOut := planPeriods(cal, h, grains)
	n := len(st.Nodes)
	p := &Plans{Periods: periods, LeftOut: leftOut,
		Actual: make([][]float64, n), Forecast: make([][]float64, n)}
	// Actuals of the periods past: the coherent history (the sum of the
	// bottom series that existed, closed ones included), as in the
	// history table, over the columns any plan period needs.
	first := cal.T
	for _, pp := range periods {
		first = min(first, pp.First)
	}
	bottom := r.History[st.BottomOffset():]
	past := make([][]float64, len(bottom))
	for j, y := range bottom {
		past[j] = y[first:cal.T]
	}
	actual := st.S.Aggregate(past)
	if r.Solution.Variance != nil {
		p.Variance = make([][]float64, n)
	}
	var shape stepShape
	for i := range n {
		p.Actual[i] = make([]float64, len(periods))
		p.Forecast[i] = make([]float64, len(periods))
		if p.Variance != nil {
			p.Variance[i] = make([]float64, len(periods))
			shape.set(r.Solution.Variance[i])
		}
		for k, pp := range periods {
			for t := pp.First; t < min(pp.End, cal.T); t++ {
				if v := actual[i][t-first]; !math.IsNaN(v) {
					p.Actual[i][k] += v
				}
			}
			a, b := max(pp.First, cal.T)-cal.T, pp.End-cal.T
			for _, v := range r.Solution.Forecast[i][a:b] {
				p.Forecast[i][k] += v
			}
			if p.Variance != nil {
				p.Variance[i][k] = shape.sumVariance(a, b)
			}
		}
	}
	return p
}

// PlanBounds returns the central prediction interval of node i's total
// over plan period k for a level in percent: actual + forecast part ±
// z·sd, sd from the forecast part's variance. Under non-negative
// reconciliation the lower bound is at least the actual part, since no
// forecast is below zero. Without variances both bounds are NaN. The
// interval is not calibrated: r.Calibration's factors are estimated from
// errors of single periods per horizon group, and none is estimated for
// totals over several periods (README, Plans by quarter and year).
func (r *Result) PlanBounds(i, k int, level float64) (lo, hi float64) {
	p := r.Plans
	if p == nil || p.Variance == nil {
		return math.NaN(), math.NaN()
	}
	total := p.Actual[i][k] + p.Forecast[i][k]
	sd := math.Sqrt(math.Max(p.Variance[i][k], 0))
	z := Quantile(level)
	lo, hi = total-z*sd, total+z*sd
	if r.Nonnegative {
		lo = math.Max(lo, p.Actual[i][k])
	}
	return lo, hi
}

// stepShape holds one node's errors across forecast steps as a linear
// process, from which the variance of their sum over several steps
// follows (sumVariance).
//
// A linear forecast error h steps ahead is e_h = Σ_{j<h} ψ_j ε_{h−j} with
// innovations ε of variance σ², so Var(e_h) = σ² Σ_{j<h} ψ_j² and
// Cov(e_i, e_j) = σ² Σ_{k<min(i,j)} ψ_k ψ_{k+|i−j|} (Box, Jenkins,
// Reinsel & Ljung, Time Series Analysis, 5th ed. 2015, §5.1, the variance
// and correlation of forecast errors at different lead times). The
// per-step variances V_h, which is all a node's reconciled forecast
// keeps, give ψ_j²σ² = V_{j+1} − V_j: the weights up to their sign.
// stepShape takes every weight non-negative, c_j = √(V_{j+1} − V_j), on
// the running maximum V* of the variances, and scales each step back to
// its own variance: e_h ≈ √(V_h / V*_h) · Σ_{j<h} c_j u_{h−j}, u of unit
// variance. So every step keeps its variance exactly, and
//
//   - for a single linear model whose ψ-weights are all non-negative
//     (random walk, simple exponential smoothing, ARIMA(0,1,1) with
//     θ > −1, the airline model at usual estimates) the covariances are
//     exactly the formula above (TestPlanVarianceIsThePsiWeightFormula);
//   - with weights of either sign it overstates them (Σ|ψ_k||ψ_{k+d}| ≥
//     Σ ψ_k ψ_{k+d}), so a total's interval is wider than the model's;
//   - for a reconciled forecast, a combination of several nodes' errors
//     with their own dynamics, for variances that fall from one step to
//     the next (multiplicative seasonality) and for log models, it is an
//     approximation, whose coverage TestPlanIntervalsCoverInSimulation
//     measures against simulated chains.
type stepShape struct {
	c, w []float64 // shock weights c_j and per-step scales √(V_h/V*_h)
}

func (s *stepShape) set(v []float64) {
	s.c, s.w = s.c[:0], s.w[:0]
	envelope := 0.0
	for _, vh := range v {
		vh = math.Max(vh, 0)
		if math.IsNaN(vh) {
			vh = 0
		}
		next := math.Max(envelope, vh)
		s.c = append(s.c, math.Sqrt(next-envelope))
		w := 0.0
		if next > 0 {
			w = math.Sqrt(vh / next)
		}
		s.w = append(s.w, w)
		envelope = next
	}
}

// sumVariance is the variance of the sum of the errors at steps a..b−1
// (0-based): Σ_s (Σ_{a≤k<b, k≥s} w_k c_{k−s})², one term per shock.
func (s *stepShape) sumVariance(a, b int) float64 {
	total := 0.0
	for shock := 0; shock < b; shock++ {
		x := 0.0
		for k := max(a, shock); k < b; k++ {
			x += s.w[k] * s.c[k-shock]
		}
		total += x * x
	}
	return total
}
