package arima

import (
	"errors"
	"fmt"
	"math"
	"strings"

	"gonum.org/v1/gonum/stat/distuv"

	"trueup/inputerr"
	"trueup/models"
)

var _ models.Model = (*Fitted)(nil)

// Fitted is a seasonal ARIMA model estimated on one series.
type Fitted struct {
	spec Spec
	// Coefficients in the textbook signs of Spec.
	ar, ma, sar, sma []float64
	// beta holds the regression coefficients: the constant first (mean
	// or drift slope) when Spec.Constant, then sin/cos pairs, then the
	// external regressors.
	beta   []float64
	nFour  int         // number of Fourier columns
	xreg   [][]float64 // external regressors over the sample
	future [][]float64 // their values after the sample (Options.XRegFuture)
	sigma2 float64
	crit   models.Criteria
	nObs   int
	resid  []float64 // response scale
	lnRes  []float64 // with the log transform: the residuals on the log scale
	warn   []string

	// Forecast state on the transformed scale.
	m      int
	delta  []float64
	phi    []float64 // expanded AR, padded to the state dimension
	rv     []float64 // (1, θ_1..θ_{r−1})
	a, p   []float64 // predicted ARMA state and covariance (σ² = 1)
	r      int
	zLags  []float64 // z_T, z_{T−1}, …, z_{T−nd+1} minus regression
	approx bool
}

// FitOrder estimates the model spec on y by exact Gaussian maximum
// likelihood: y is (log-)transformed and differenced, the regression
// coefficients and ARMA parameters are started from conditional sum of
// squares and then optimised by BFGS on the exact likelihood computed by
// the Kalman filter (Gardner, Harvey & Phillips 1980), with σ²
// concentrated out. Stationarity and invertibility hold throughout by the
// partial-autocorrelation parameterisation of Jones (1980).
//
// Errors: input errors for series that cannot carry the spec (too short,
// non-finite values, log of a non-positive series); other errors when the
// estimation breaks down.
func FitOrder(y []float64, spec Spec, opt Options) (*Fitted, error) {
	for i, v := range y {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, inputerr.New("observation %d is not a finite number", i+1)
		}
	}
	if spec.P < 0 || spec.D < 0 || spec.Q < 0 || spec.SP < 0 || spec.SD < 0 || spec.SQ < 0 || spec.Fourier < 0 {
		return nil, inputerr.New("model %s has a negative order", spec)
	}
	if !spec.seasonal() {
		if spec.SP > 0 || spec.SD > 0 || spec.SQ > 0 || spec.Fourier > 0 {
			return nil, inputerr.New("model %s has seasonal terms but no season length (give m=, or a season length above 1)", spec)
		}
		spec.Period = 0
	}
	if spec.Log {
		for _, v := range y {
			if !(v > 0) {
				return nil, inputerr.New("model %s: the log transform needs a strictly positive series", spec)
			}
		}
	}
	if spec.Constant && spec.nDiff() > 1 {
		return nil, inputerr.New("model %s: a constant needs d+D ≤ 1", spec)
	}
	for j, col := range opt.XReg {
		if len(col) != len(y) {
			return nil, inputerr.New("regressor %d has %d values for %d observations", j+1, len(col), len(y))
		}
		for i, v := range col {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, inputerr.New("regressor %d: value %d is not a finite number", j+1, i+1)
			}
		}
	}
	if len(opt.XRegFuture) != 0 && len(opt.XRegFuture) != len(opt.XReg) {
		return nil, inputerr.New("%d future regressor columns for %d regressors", len(opt.XRegFuture), len(opt.XReg))
	}
	for j, col := range opt.XRegFuture {
		for i, v := range col {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, inputerr.New("future regressor %d: value %d is not a finite number", j+1, i+1)
			}
		}
	}
	pr, err := newProblem(y, spec, opt.XReg)
	if err != nil {
		return nil, inputerr.New("model %s: %v", spec, err)
	}
	if k := pr.nParams(); len(pr.w) <= k+1 {
		return nil, inputerr.New("model %s needs more than %d observations after differencing, the series has %d", spec, k+1, len(pr.w))
	}
	defer kalmanPool.Put(pr.kal)
	pr.fixBeta = opt.Approximate
	k := pr.nFree()
	f := &Fitted{spec: pr.spec, nObs: len(y), m: pr.m, delta: pr.delta, approx: opt.Approximate,
		xreg: opt.XReg, future: opt.XRegFuture}
	f.nFour = len(pr.x) - len(opt.XReg)
	if pr.spec.Constant {
		f.nFour--
	}
	x := make([]float64, k)
	if warmStart(pr, opt.Start, x) {
		// x holds the previous fit's coefficients.
	} else if xc, err := minimize(pr.cssObjective, x); err == nil {
		x = xc
	} else {
		f.warn = append(f.warn, "conditional-sum-of-squares start failed, started from zero")
	}
	if !opt.Approximate {
		start := x
		if pr.mlObjective(start) >= 1e10 {
			start = make([]float64, k)
		}
		xm, err := minimize(pr.mlObjective, start)
		if err != nil {
			f.warn = append(f.warn, "likelihood optimiser did not converge")
		}
		x = xm
	}
	if err := f.finish(pr, x); err != nil {
		return nil, fmt.Errorf("model %s: %w", pr.spec, err)
	}
	if nearBoundary(f) {
		f.warn = append(f.warn, "an AR or MA root lies within about 1% of the unit circle (over-differencing or cancelling roots?)")
	}
	return f, nil
}

// warmStart packs the coefficients of start into x when start is an exact
// fit of pr's form; it reports whether it did.
func warmStart(pr *problem, start *Fitted, x []float64) bool {
	if start == nil || start.approx || start.spec != pr.spec || pr.fixBeta || len(start.beta) != len(pr.beta) {
		return false
	}
	copy(pr.ar, start.ar)
	copy(pr.ma, start.ma)
	copy(pr.sar, start.sar)
	copy(pr.sma, start.sma)
	copy(pr.beta, start.beta)
	return pr.pack(x) && pr.mlObjective(x) < 1e10
}

// finish evaluates the fit at x: coefficients, σ², likelihood, residuals
// and the state needed for forecasting.
func (f *Fitted) finish(pr *problem, x []float64) error {
	pr.unpack(x)
	pr.errorsSeries()
	n := len(pr.u)
	v := make([]float64, n)
	var ll, s2 float64
	if f.approx {
		ssq, _ := pr.css()
		nc := max(n-len(pr.phi), 1)
		s2 = ssq / float64(nc)
		ll = -0.5 * float64(n) * (math.Log(2*math.Pi*s2) + 1)
	}
	ssq, sumLog, err := pr.kal.Filter(pr.u, pr.phi, pr.theta, v)
	if err != nil {
		return err
	}
	if !f.approx {
		s2 = ssq / float64(n)
		ll = -0.5 * (float64(n)*math.Log(2*math.Pi*s2) + sumLog + float64(n))
	}
	if !(s2 > 0) || math.IsNaN(ll) || math.IsInf(ll, 0) {
		return errors.New("the fitted innovation variance is zero or not finite")
	}
	f.ar = append([]float64(nil), pr.ar...)
	f.ma = append([]float64(nil), pr.ma...)
	f.sar = append([]float64(nil), pr.sar...)
	f.sma = append([]float64(nil), pr.sma...)
	f.beta = append([]float64(nil), pr.beta...)
	f.sigma2 = s2
	f.crit = models.NewCriteria(ll, pr.nParams()+1, n)

	a, p, r := pr.kal.State()
	f.r = r
	f.a = append([]float64(nil), a...)
	f.p = append([]float64(nil), p...)
	f.phi = make([]float64, r)
	copy(f.phi, pr.phi)
	f.rv = make([]float64, r)
	f.rv[0] = 1
	copy(f.rv[1:], pr.theta)

	T := len(pr.z)
	nd := len(pr.delta)
	f.zLags = make([]float64, nd)
	for j := 0; j < nd; j++ {
		t := T - 1 - j
		f.zLags[j] = pr.z[t] - f.regression(t+1, nil)
	}
	f.resid = make([]float64, T)
	for t := 0; t < nd; t++ {
		f.resid[t] = math.NaN()
	}
	if f.spec.Log {
		f.lnRes = make([]float64, T)
		for t := 0; t < nd; t++ {
			f.lnRes[t] = math.NaN()
		}
	}
	for t := nd; t < T; t++ {
		e := v[t-nd]
		if f.spec.Log {
			f.lnRes[t] = e
			f.resid[t] = pr.y[t] - math.Exp(pr.z[t]-e)
		} else {
			f.resid[t] = e
		}
	}
	return nil
}

// regression is x_tᵀβ at time t (1-based) on the transformed scale, with
// future external regressor values taken from future (see
// Options.XRegFuture).
func (f *Fitted) regression(t int, future [][]float64) float64 {
	var s float64
	i := 0
	tf := float64(t)
	if f.spec.Constant {
		if f.spec.nDiff() == 0 {
			s += f.beta[0]
		} else {
			s += f.beta[0] * tf
		}
		i++
	}
	m := float64(f.m)
	for k := 1; k <= f.spec.Fourier; k++ {
		fk := float64(k)
		s += f.beta[i] * math.Sin(2*math.Pi*fk*tf/m)
		i++
		if 2*k != f.m {
			s += f.beta[i] * math.Cos(2*math.Pi*fk*tf/m)
			i++
		}
	}
	for j, col := range f.xreg {
		var v float64
		switch h := t - f.nObs; {
		case h <= 0:
			v = col[t-1]
		case j < len(future) && len(future[j]) > 0:
			v = future[j][min(h, len(future[j]))-1]
		default:
			v = col[len(col)-1]
		}
		s += f.beta[i] * v
		i++
	}
	return s
}

// forecastTransformed returns the h-step means and variances on the
// transformed (log or identity) scale, from the exact predictive
// distribution of the state space form extended by the nd lags of the
// undifferenced errors, so that estimation-sample state uncertainty is
// carried into the variances. With pointOnly the variances are left at 0.
func (f *Fitted) forecastTransformed(h int, future [][]float64, pointOnly bool) (mean, variance []float64) {
	mean = make([]float64, h)
	variance = make([]float64, h)
	if h <= 0 {
		return mean, variance
	}
	r, nd := f.r, len(f.delta)
	n := r + nd
	s := make([]float64, n)
	copy(s, f.a)
	copy(s[r:], f.zLags)
	// V, the state covariance, is needed for the variances only.
	var V, tmp []float64
	if !pointOnly {
		V = make([]float64, n*n)
		tmp = make([]float64, n*n)
		for i := 0; i < r; i++ {
			for j := 0; j < r; j++ {
				V[i*n+j] = f.p[i*r+j] * f.sigma2
			}
		}
	}
	// Transition F: ARMA companion block; z_t = α_1 + Σ δ_j z_{t−j}; shift.
	// F is sparse (at most 1 + nd entries a row): it is kept as its
	// non-zero entries, row by row in column order, so a step costs
	// O(n²·nnz) instead of O(n³).
	type entry struct {
		col int
		v   float64
	}
	rows := make([][]entry, n)
	entries := make([]entry, 0, 2*n+nd)
	row := func(i int, es ...entry) {
		start := len(entries)
		for _, e := range es {
			if e.v != 0 {
				entries = append(entries, e)
			}
		}
		rows[i] = entries[start:len(entries):len(entries)]
	}
	for i := 0; i < r; i++ {
		if i+1 < r {
			row(i, entry{0, f.phi[i]}, entry{i + 1, 1})
		} else {
			row(i, entry{0, f.phi[i]})
		}
	}
	if nd > 0 {
		es := []entry{{0, 1}}
		for j := 0; j < nd; j++ {
			es = append(es, entry{r + j, f.delta[j]})
		}
		row(r, es...)
		for j := 1; j < nd; j++ {
			row(r+j, entry{r + j - 1, 1})
		}
	}
	c := make([]float64, n)
	c[0] = 1
	copy(c[r:], f.delta)
	T := f.nObs
	s2 := make([]float64, n)
	for k := 0; k < h; k++ {
		var mu, vv float64
		for i := 0; i < n; i++ {
			mu += c[i] * s[i]
			if !pointOnly {
				var row float64
				for j := 0; j < n; j++ {
					row += V[i*n+j] * c[j]
				}
				vv += c[i] * row
			}
		}
		mean[k] = mu + f.regression(T+k+1, future)
		variance[k] = math.Max(vv, 0)
		// s ← F s; V ← F V Fᵀ + σ² R Rᵀ.
		for i, row := range rows {
			var acc float64
			for _, e := range row {
				acc += e.v * s[e.col]
			}
			s2[i] = acc
		}
		copy(s, s2)
		if pointOnly {
			continue
		}
		for i, row := range rows {
			t := tmp[i*n : (i+1)*n]
			clear(t)
			for _, e := range row {
				vl := V[e.col*n : (e.col+1)*n]
				for j := range t {
					t[j] += e.v * vl[j]
				}
			}
		}
		for i := 0; i < n; i++ {
			for j, row := range rows {
				var acc float64
				for _, e := range row {
					acc += tmp[i*n+e.col] * e.v
				}
				V[i*n+j] = acc
			}
		}
		for i := 0; i < r; i++ {
			for j := 0; j < r; j++ {
				V[i*n+j] += f.sigma2 * f.rv[i] * f.rv[j]
			}
		}
	}
	return mean, variance
}

// PointForecast returns the h-step point forecasts without their
// variances, where they do not need them: on the modelled scale (no log)
// the mean of the predictive distribution; with the log transform the
// lognormal mean, which does, so it is Forecast's mean.
func (f *Fitted) PointForecast(h int) []float64 {
	if f.spec.Log {
		mean, _ := f.Forecast(h)
		return mean
	}
	mean, _ := f.forecastTransformed(h, f.future, true)
	return mean
}

// maxExp keeps back-transformed values finite.
const maxExp = 700

// Forecast returns h-step point forecasts and forecast-error variances on
// the response scale. Without a transform they are the Gaussian
// predictive mean and variance. With the log transform, ln y_{T+h} is
// Gaussian with mean μ and variance v, and the response-scale values are
// the lognormal moments exp(μ + v/2) and (e^v − 1)·exp(2μ + v); intervals
// built as mean ± z·sd from them are only approximate, so use Interval,
// which back-transforms the exact quantiles.
func (f *Fitted) Forecast(h int) (mean, variance []float64) {
	return f.ForecastWith(h, f.future)
}

// ForecastWith is Forecast with the external regressors' future values
// given as one slice per column (steps beyond them hold each regressor at
// its last given value).
func (f *Fitted) ForecastWith(h int, future [][]float64) (mean, variance []float64) {
	mean, variance = f.forecastTransformed(h, future, false)
	if !f.spec.Log {
		return mean, variance
	}
	for k := range mean {
		mu, v := mean[k], variance[k]
		mean[k] = math.Exp(math.Min(mu+v/2, maxExp))
		variance[k] = math.Expm1(math.Min(v, maxExp)) * math.Exp(math.Min(2*mu+v, maxExp))
		if math.IsInf(variance[k], 0) {
			variance[k] = math.MaxFloat64
		}
	}
	return mean, variance
}

// Interval returns the central prediction interval at level (0 < level <
// 1, e.g. 0.95) for steps 1..h on the response scale. It is computed on
// the transformed scale, where the predictive distribution is Gaussian, and
// back-transformed, so with the log transform it is asymmetric and exact
// (quantiles are preserved by monotone maps).
func (f *Fitted) Interval(h int, level float64) (lo, hi []float64) {
	mean, variance := f.forecastTransformed(h, f.future, false)
	lo = make([]float64, h)
	hi = make([]float64, h)
	level = math.Max(1e-6, math.Min(level, 1-1e-12))
	z := distuv.UnitNormal.Quantile(0.5 + level/2)
	for k := range mean {
		sd := math.Sqrt(variance[k])
		lo[k], hi[k] = mean[k]-z*sd, mean[k]+z*sd
		if f.spec.Log {
			lo[k] = math.Exp(math.Min(lo[k], maxExp))
			hi[k] = math.Exp(math.Min(hi[k], maxExp))
		}
	}
	return lo, hi
}

// Family returns "arima".
func (f *Fitted) Family() string { return Name }

// Spec returns the fitted form in trueup's spelling (see Spec.String).
func (f *Fitted) Spec() string { return f.spec.String() }

// Form returns the fitted Spec.
func (f *Fitted) Form() Spec { return f.spec }

// AR, MA, SAR, SMA return copies of the coefficient vectors in the signs of
// Spec (φ, θ, Φ, Θ).
func (f *Fitted) AR() []float64  { return append([]float64(nil), f.ar...) }
func (f *Fitted) MA() []float64  { return append([]float64(nil), f.ma...) }
func (f *Fitted) SAR() []float64 { return append([]float64(nil), f.sar...) }
func (f *Fitted) SMA() []float64 { return append([]float64(nil), f.sma...) }

// Intercept returns the mean (d+D = 0) or drift slope per period (d+D = 1)
// on the transformed scale, and false when the model has no constant.
func (f *Fitted) Intercept() (float64, bool) {
	if !f.spec.Constant {
		return 0, false
	}
	return f.beta[0], true
}

// Fourier returns the Fourier regression coefficients in the order
// sin_1, cos_1, sin_2, … (the cosine of k = m/2 is omitted).
func (f *Fitted) Fourier() []float64 {
	i := 0
	if f.spec.Constant {
		i = 1
	}
	return append([]float64(nil), f.beta[i:i+f.nFour]...)
}

// XRegCoef returns the coefficients of the external regressors
// (Options.XReg), in column order.
func (f *Fitted) XRegCoef() []float64 {
	return append([]float64(nil), f.beta[len(f.beta)-len(f.xreg):]...)
}

// Params implements models.Model. Keys:
//
//   - "orders": {"nonseasonal": {"ar": p, "differences": d, "ma": q}} and,
//     for a seasonal model, "seasonal": {"ar": P, "differences": D, "ma":
//     Q, "season_length": m};
//   - "constant": "none", "mean" (d+D = 0) or "drift" (d+D = 1);
//   - "transform": {"kind": "log"} when the model is fitted to ln y;
//   - "fourier_pairs": K when Fourier regressors stand in for seasonal
//     terms;
//   - "estimates": φ1…φp, θ1…θq, Φ1…ΦP, Θ1…ΘQ in the signs of Spec, then
//     "mean" or "drift" (on the transformed scale), the Fourier
//     coefficients "sin1", "cos1", … and the regressors "x1", "x2", ….
func (f *Fitted) Params() map[string]any {
	s := f.spec
	orders := map[string]any{
		"nonseasonal": map[string]int{"ar": s.P, "differences": s.D, "ma": s.Q},
	}
	if s.seasonal() {
		orders["seasonal"] = map[string]int{"ar": s.SP, "differences": s.SD, "ma": s.SQ, "season_length": s.Period}
	}
	var est []models.Estimate
	add := func(sym string, v []float64) {
		for i, x := range v {
			est = append(est, models.Estimate{Name: fmt.Sprintf("%s%d", sym, i+1), Value: x})
		}
	}
	add("φ", f.ar)
	add("θ", f.ma)
	add("Φ", f.sar)
	add("Θ", f.sma)
	constant := "none"
	if c, ok := f.Intercept(); ok {
		constant = "drift"
		if s.nDiff() == 0 {
			constant = "mean"
		}
		est = append(est, models.Estimate{Name: constant, Value: c})
	}
	four := f.Fourier()
	for k, i := 1, 0; i < len(four); k++ {
		est = append(est, models.Estimate{Name: fmt.Sprintf("sin%d", k), Value: four[i]})
		i++
		if 2*k != f.m && i < len(four) {
			est = append(est, models.Estimate{Name: fmt.Sprintf("cos%d", k), Value: four[i]})
			i++
		}
	}
	if len(f.xreg) > 0 {
		add("x", f.XRegCoef())
	}
	p := map[string]any{"orders": orders, "constant": constant, "estimates": est}
	if s.Log {
		p["transform"] = map[string]any{"kind": "log"}
	}
	if s.Fourier > 0 {
		p["fourier_pairs"] = s.Fourier
	}
	return p
}

// Residuals returns the in-sample one-step errors y_t − ŷ_{t|t−1} on the
// response scale, one per observation. With the log transform ŷ is the
// back-transformed one-step prediction exp(ln-scale prediction). The first
// d + m·D observations have no one-step prediction (their predictive
// variance is unbounded: the differencing has not yet seen enough values),
// so, as the models.Model contract says, their residuals are NaN; all later
// ones are finite.
func (f *Fitted) Residuals() []float64 { return append([]float64(nil), f.resid...) }

// Sigma2 is the maximum-likelihood innovation variance on the transformed
// scale.
func (f *Fitted) Sigma2() float64 { return f.sigma2 }

// Criteria returns the Gaussian log-likelihood of the transformed,
// differenced series and AIC, AICc, BIC with K = number of coefficients + 1
// and N = number of differenced observations.
func (f *Fitted) Criteria() models.Criteria { return f.crit }

// NObs is the length of the series the model was fitted to.
func (f *Fitted) NObs() int { return f.nObs }

// Warning explains any fallback taken during estimation or selection.
func (f *Fitted) Warning() string { return strings.Join(f.warn, "; ") }

// Approximate reports whether the likelihood is the conditional-sum-of-
// squares approximation (Options.Approximate).
func (f *Fitted) Approximate() bool { return f.approx }
