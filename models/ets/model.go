package ets

import (
	"fmt"
	"math"

	"gonum.org/v1/gonum/mat"

	"trueup/models"
)

// Fitted is an ETS model fitted to one series. It implements models.Model.
type Fitted struct {
	spec   Spec
	m      int
	par    Params
	n      int
	yhat   []float64
	resid  []float64
	sigma2 float64
	crit   models.Criteria
	// final states after the last observation; season in the order of use.
	level, trend float64
	season       []float64
	admissible   bool
	warn         string
}

func newFitted(y []float64, sp Spec, m int, par Params) (*Fitted, error) {
	f := &Fitted{spec: sp, m: m, par: par, n: len(y)}
	f.yhat = make([]float64, len(y))
	out := filterOut{yhat: f.yhat}
	if sp.Seasonal() {
		out.season = make([]float64, m)
	}
	sse, sumLog, ok := filter(sp, &f.par, y, make([]float64, m), &out)
	if !ok {
		return nil, fmt.Errorf("%s: parameters give no valid fit", sp)
	}
	f.level, f.trend, f.season = out.level, out.trend, out.season
	f.resid = make([]float64, len(y))
	for t := range y {
		f.resid[t] = y[t] - f.yhat[t]
	}
	f.sigma2 = sse / float64(len(y))
	floor := sseFloor(y, sp)
	k := packer{sp: sp, m: m}.size() + 1
	f.crit = models.NewCriteria(logLik(sse, sumLog, len(y), floor), k, len(y))
	f.admissible = admissible(sp, m, &f.par)
	if !f.admissible {
		f.warn = fmt.Sprintf("%s: fitted parameters lie outside the admissible (forecastable) region; long-horizon forecasts may drift", sp)
	}
	if sse <= floor {
		f.warn = joinWarn(f.warn, "exact fit: residual variance is zero")
	}
	return f, nil
}

func joinWarn(a, b string) string {
	if a == "" {
		return b
	}
	return a + "; " + b
}

// admissible checks the forecastability condition of HKOS ch. 10: every
// eigenvalue of the discount matrix D = F − g·w' of the linear form lies
// inside the unit circle, apart from the eigenvalue 1 that the seasonal
// states always carry (the direction that moves the level up and every
// seasonal state down by the same amount, which the normalisation of the
// seasonal states removes). Non-seasonal forms within the usual bounds are
// always admissible (HKOS Table 10.1), so only seasonal forms are checked.
// Multiplicative seasonal forms are checked through their additive
// analogue, as their updates share its structure.
func admissible(sp Spec, m int, p *Params) bool {
	if !sp.Seasonal() {
		return true
	}
	phi := 1.0
	if sp.Damped() {
		phi = p.Phi
	}
	n := m + 2 // level, trend, m seasonal states (trend row unused without trend)
	d := mat.NewDense(n, n, nil)
	w := make([]float64, n)
	g := make([]float64, n)
	// F: ℓ' = ℓ + φb, b' = φb, seasonal states rotate (s_{t−m} comes first).
	d.Set(0, 0, 1)
	if sp.HasTrend() {
		d.Set(0, 1, phi)
		d.Set(1, 1, phi)
		w[1] = phi
		g[1] = p.Beta
	}
	d.Set(2, n-1, 1)
	for i := 3; i < n; i++ {
		d.Set(i, i-1, 1)
	}
	w[0], w[n-1] = 1, 1
	g[0], g[2] = p.Alpha, p.Gamma
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			d.Set(i, j, d.At(i, j)-g[i]*w[j])
		}
	}
	var eig mat.Eigen
	if !eig.Factorize(d, mat.EigenNone) {
		return false
	}
	vals := eig.Values(nil)
	// Drop the structural unit eigenvalue (the one closest to 1) and, without
	// a trend, the zero eigenvalue of the unused trend row.
	unit := 0
	for i, v := range vals {
		if cmplxAbs(v-1) < cmplxAbs(vals[unit]-1) {
			unit = i
		}
	}
	for i, v := range vals {
		if i != unit && cmplxAbs(v) > 1+1e-8 {
			return false
		}
	}
	return true
}

func cmplxAbs(c complex128) float64 { return math.Hypot(real(c), imag(c)) }

// Family implements models.Model.
func (f *Fitted) Family() string { return Name }

// Spec implements models.Model: the published notation, e.g. "ETS(M,Ad,M)".
func (f *Fitted) Spec() string { return f.spec.String() }

// Form returns the fitted ETS form.
func (f *Fitted) Form() Spec { return f.spec }

// Period is the seasonal period used (1 for non-seasonal forms).
func (f *Fitted) Period() int { return f.m }

// Parameters returns a copy of the estimated parameters and initial states.
func (f *Fitted) Parameters() Params {
	p := f.par
	p.Season = append([]float64(nil), f.par.Season...)
	return p
}

// Admissible reports whether the fitted parameters satisfy the
// forecastability condition (see admissible).
func (f *Fitted) Admissible() bool { return f.admissible }

// Params implements models.Model. Keys: "season_length" (the seasonal
// period used, 1 for non-seasonal forms), "estimates" (α, then β, γ and
// the damping φ when the form has them) and "starting_states":
// "underlying" (the textbook's level ℓ0, named so that "level" keeps its
// one meaning, a level of the structure), and "trend" and "season" when
// the form has them — the m initial seasonal states in order of first
// use, s_{1−m}..s_0.
func (f *Fitted) Params() map[string]any {
	est := []models.Estimate{{Name: "α", Value: f.par.Alpha}}
	init := map[string]any{"underlying": f.par.Level}
	if f.spec.HasTrend() {
		est = append(est, models.Estimate{Name: "β", Value: f.par.Beta})
		init["trend"] = f.par.Trend
	}
	if f.spec.Seasonal() {
		est = append(est, models.Estimate{Name: "γ", Value: f.par.Gamma})
		init["season"] = append([]float64(nil), f.par.Season...)
	}
	if f.spec.Damped() {
		est = append(est, models.Estimate{Name: "φ", Value: f.par.Phi})
	}
	return map[string]any{"season_length": f.m, "estimates": est, "starting_states": init}
}

// Residuals implements models.Model: y_t − ŷ_{t|t−1} on the data scale,
// for every observation (the first forecast comes from the initial states).
func (f *Fitted) Residuals() []float64 { return append([]float64(nil), f.resid...) }

// Fitted returns the one-step forecasts ŷ_{t|t−1}.
func (f *Fitted) FittedValues() []float64 { return append([]float64(nil), f.yhat...) }

// Sigma2 implements models.Model: the innovation variance σ² = Σε²/n, where
// ε is the one-step error for additive errors and the relative one-step
// error (y − ŷ)/ŷ for multiplicative errors (HKOS §2.5).
func (f *Fitted) Sigma2() float64 { return f.sigma2 }

// Criteria implements models.Model. K counts smoothing parameters, φ, the
// initial level and trend, m−1 free initial seasonal states and σ².
func (f *Fitted) Criteria() models.Criteria { return f.crit }

// NObs implements models.Model.
func (f *Fitted) NObs() int { return f.n }

// Warning implements models.Model.
func (f *Fitted) Warning() string { return f.warn }
