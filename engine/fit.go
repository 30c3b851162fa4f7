package engine

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"trueup/inputerr"
	"trueup/internal/numeric"
	"trueup/models"
	"trueup/models/families"
)

// FitOne fits one job. Fitting rule for openings and closures: the node is
// fitted on its own span, from its first to its last existing period (see
// Panel). A node whose span ends before the last period has closed: it is
// still fitted, for its in-sample residuals, but forecast as zero with zero
// variance and a warning. When the family cannot fit the node (too short a
// history, say), the fallbacks are tried in order and the reason is kept in
// the warning. A form the user fixed (job.Model.Form) is never replaced:
// when it cannot be fitted the error is a *FormError. Otherwise the error
// is non-nil only when the job's model spec is invalid.
func FitOne(job FitJob) (NodeFit, error) {
	family, err := job.Model.Resolve()
	if err != nil {
		return NodeFit{}, err
	}
	opt := models.FitOptions{Period: job.Period, Horizon: job.Horizon}
	y := job.Series
	first, last := span(y)
	nf := NodeFit{First: first, Last: last}
	h := opt.Horizon
	if first < 0 {
		nf.Closed = true
		nf.Family, nf.Spec, nf.Params = "closed", "no observations", map[string]any{}
		nf.Sigma2 = math.NaN()
		nf.Criteria = models.Criteria{LogLik: math.NaN(), AIC: math.NaN(), AICc: math.NaN(), BIC: math.NaN()}
		nf.Mean, nf.Variance = make([]float64, h), make([]float64, h)
		nf.Warning = "no observations"
		return nf, nil
	}
	span := make([]float64, last-first+1)
	for t := range span {
		v := y[first+t]
		if math.IsNaN(v) {
			v = 0 // an aggregate whose members all paused: nothing sold
		}
		span[t] = v
	}
	var reasons []string
	var model models.Model
	tryFit := func(f models.Family) bool {
		m, err := safeFit(f, span, opt)
		if err != nil {
			reasons = append(reasons, fmt.Sprintf("%s: %v", f.Name(), err))
			return false
		}
		mean, variance := m.Forecast(h)
		if err := usable(span, m.Residuals(), mean, variance); err != nil {
			reasons = append(reasons, fmt.Sprintf("%s: %v", f.Name(), err))
			return false
		}
		model, nf.Mean, nf.Variance = m, mean, variance
		return true
	}
	if !tryFit(family) {
		if job.Model.Form != "" {
			return NodeFit{}, &FormError{Node: job.Node, Form: job.Model.Form, Reason: strings.Join(reasons, "; ")}
		}
		for _, fb := range families.Fallbacks {
			if fb.Name() != family.Name() && tryFit(fb) {
				break
			}
		}
	}
	var warn []string
	if len(reasons) > 0 {
		warn = append(warn, "fell back ("+strings.Join(reasons, "; ")+")")
	}
	if model.Warning() != "" {
		warn = append(warn, model.Warning())
	}
	nf.Fitted = true
	nf.Family, nf.Spec, nf.Params = model.Family(), model.Spec(), model.Params()
	nf.Criteria, nf.Sigma2, nf.NObs = model.Criteria(), model.Sigma2(), model.NObs()
	nf.Residuals = model.Residuals()
	if sm, ok := model.(models.Simulator); ok {
		nf.Path = sm.PathForm(h)
	}
	if last < len(y)-1 {
		// Closed: the fit still supplies in-sample residuals for
		// reconciliation, but the forecast is zero with no uncertainty.
		nf.Closed = true
		nf.Mean, nf.Variance, nf.Path = make([]float64, h), make([]float64, h), nil
		warn = append([]string{"closed: no sales in the latest periods, forecast as zero"}, warn...)
	}
	nf.Warning = strings.Join(warn, "; ")
	return nf, nil
}

// FormError says that a form the user fixed could not be fitted to a
// node's series. It is an input error (the form does not suit the data);
// the caller names the node with Named.
type FormError struct {
	Node   int    // the job's node index
	Form   string // the form as the user wrote it
	Reason string // the family's own reason
}

func (e *FormError) Error() string {
	return fmt.Sprintf("model %q cannot be fitted to series %d (%s); a fixed form is not replaced by a simpler one: "+
		"choose a form the series supports or let the family choose its form", e.Form, e.Node+1, e.Reason)
}

// Named is the input error a command prints: the node named by its label.
func (e *FormError) Named(label string) error {
	return inputerr.ForOption("Model", "model %q cannot be fitted to %s (%s); a fixed form is not replaced by a simpler one: "+
		"choose a form the series supports or let the family choose its form", e.Form, label, e.Reason)
}

// nameFormError turns a *FormError in err into an input error naming the
// node by label(node); other errors are returned as they are.
func nameFormError(err error, label func(node int) string) error {
	var fe *FormError
	if errors.As(err, &fe) {
		return fe.Named(label(fe.Node))
	}
	return err
}

// ResidualsOnCalendar fills dst (one entry per panel period) with the
// node's in-sample one-step residuals, NaN where it has none.
func (nf *NodeFit) ResidualsOnCalendar(dst []float64) {
	for t := range dst {
		dst[t] = math.NaN()
	}
	if nf.First >= 0 {
		copy(dst[nf.First:], nf.Residuals)
	}
}

// safeFit turns a panic inside a family into an error, so that one bad
// node cannot stop a run of thousands; the fallback then takes over.
func safeFit(f models.Family, y []float64, opt models.FitOptions) (m models.Model, err error) {
	defer func() {
		if r := recover(); r != nil {
			m, err = nil, fmt.Errorf("internal error: %v", r)
		}
	}()
	return f.Fit(y, opt)
}

// explosionFactor bounds a usable fit: no forecast, forecast standard
// deviation or residual may exceed this many times the largest absolute
// value in the node's history. Sales that grow a thousandfold within a
// plan's horizon are a numerical failure, not a forecast (a sanity bound of
// common practice; the value is our choice).
const explosionFactor = 1e3

// usable rejects a fit whose forecasts, variances or residuals are not
// finite or explode relative to the history, so that the node falls back
// to a simpler family instead of poisoning the reconciliation.
func usable(y, resid, mean, variance []float64) error {
	scale := 0.0
	for _, v := range y {
		scale = math.Max(scale, math.Abs(v))
	}
	if scale == 0 {
		scale = 1
	}
	bound := explosionFactor * scale
	for k := range mean {
		if math.IsNaN(mean[k]) || math.Abs(mean[k]) > bound {
			return fmt.Errorf("forecast %g at step %d is not plausible", mean[k], k+1)
		}
		if math.IsNaN(variance[k]) || variance[k] < 0 || math.Sqrt(variance[k]) > bound {
			return fmt.Errorf("forecast variance %g at step %d is not plausible", variance[k], k+1)
		}
	}
	for t, r := range resid {
		if math.Abs(r) > bound { // NaN (no one-step forecast) is allowed
			return fmt.Errorf("in-sample residual %g at observation %d is not plausible", r, t+1)
		}
	}
	return nil
}

// ResidualCheck is the Ljung–Box test of a node's one-step residuals
// (Ljung & Box 1978): whether autocorrelation is left that the model did
// not capture.
type ResidualCheck struct {
	// Lags is the number of autocorrelations tested (numeric.LjungBoxLags);
	// 0 when the node has too few residuals to test.
	Lags int
	// Statistic is Q; PValue its upper χ² tail with Lags degrees of
	// freedom (no parameters discounted, since the families differ in
	// what they estimate). Both NaN when Lags is 0.
	Statistic, PValue float64
}

// minCheckResiduals is the fewest residuals the Ljung–Box check is run
// on: with fewer, its χ² approximation says little (common practice).
const minCheckResiduals = 10

// ResidualCheck runs the Ljung–Box test on the node's finite one-step
// residuals (leading and interior gaps skipped) with seasonal period m.
func (nf *NodeFit) ResidualCheck(m int) ResidualCheck {
	x := make([]float64, 0, len(nf.Residuals))
	for _, r := range nf.Residuals {
		if !math.IsNaN(r) && !math.IsInf(r, 0) {
			x = append(x, r)
		}
	}
	if len(x) < minCheckResiduals {
		return ResidualCheck{Statistic: math.NaN(), PValue: math.NaN()}
	}
	h := numeric.LjungBoxLags(len(x), m)
	q, p := numeric.LjungBox(numeric.ACF(x, h)[1:], len(x), 0)
	return ResidualCheck{Lags: h, Statistic: q, PValue: p}
}
