package arima

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"sync"

	"gonum.org/v1/gonum/optimize"

	"trueup/internal/numeric"
)

// Options tunes a fixed-order fit. The zero value fits by exact maximum
// likelihood with conditional-sum-of-squares starting values.
type Options struct {
	// XReg holds external regressors, one slice of len(y) values per
	// column, estimated jointly with the ARIMA errors (regression with
	// ARIMA errors; the columns are differenced like y). Nil for none.
	XReg [][]float64
	// XRegFuture holds each regressor's values for the periods after the
	// sample, used by Forecast; steps beyond them hold each regressor at
	// its last supplied value (at its last sample value when none are
	// supplied). ForecastWith takes them per call instead.
	XRegFuture [][]float64

	// Approximate stops after the conditional-sum-of-squares fit, with any
	// regression coefficients held at their least-squares values, and
	// reports its approximate likelihood. The automatic search uses it to
	// rank candidates cheaply on long series; the chosen model is always
	// refitted exactly.
	Approximate bool

	// Start, when not nil, is a fit of the same form on similar data (the
	// same series a few periods shorter, say): its coefficients start the
	// likelihood optimisation and the conditional-sum-of-squares start is
	// skipped. The optimum sought is the same; only the path to it is
	// shorter. A Start of another form is ignored.
	Start *Fitted
}

// maxRaw bounds the unconstrained parameters so that tanh stays below one
// in floating point (tanh(10) = 1 − 4·10⁻⁹): the fit can come arbitrarily
// close to a unit root without reaching it.
const maxRaw = 10

// problem holds one fixed-order estimation: the differenced series, the
// differenced regressors and reusable buffers for the objective.
type problem struct {
	spec             Spec
	m                int // seasonal period used (1 when non-seasonal)
	y                []float64
	z                []float64   // transformed series (log y or y)
	w                []float64   // differenced z
	x                [][]float64 // regressors on the original time axis, one slice per column
	xd               [][]float64 // differenced regressors
	beta0, betaScale []float64
	delta            []float64 // differencing polynomial: Δ(B) = 1 − Σ δ_j B^j

	// Buffers.
	phi, theta []float64 // expanded AR and MA coefficients
	ar, ma     []float64 // non-seasonal coefficients
	sar, sma   []float64
	work       []float64
	u, e       []float64
	beta       []float64
	uBeta      []float64 // the β that u was computed for
	uValid     bool
	kal        *numeric.ARMAKalman // from kalmanPool; FitOrder returns it
	// fixBeta holds the regression coefficients at their least-squares
	// values (the approximate fit used to rank candidates).
	fixBeta bool
}

// kalmanPool keeps Kalman filter workspaces between fits: the automatic
// search and the validation fit dozens of models per series, and a fresh
// workspace per fit was a large share of the allocations of a run.
var kalmanPool = sync.Pool{New: func() any { return new(numeric.ARMAKalman) }}

// newProblem differences the series and sets up regressors: the constant,
// then the Fourier pairs, then the external columns xreg.
func newProblem(y []float64, spec Spec, xreg [][]float64) (*problem, error) {
	pr := &problem{spec: spec, y: y, m: max(spec.Period, 1), kal: kalmanPool.Get().(*numeric.ARMAKalman)}
	if !spec.seasonal() {
		spec.SP, spec.SD, spec.SQ, spec.Fourier = 0, 0, 0, 0
		pr.spec = spec
	}
	n := len(y)
	pr.z = make([]float64, n)
	for i, v := range y {
		if spec.Log {
			if !(v > 0) {
				return nil, errors.New("log transform needs a strictly positive series")
			}
			pr.z[i] = math.Log(v)
		} else {
			pr.z[i] = v
		}
	}
	pr.delta = diffPoly(spec.D, spec.SD, pr.m)
	nd := len(pr.delta)
	if n-nd < 1 {
		return nil, fmt.Errorf("%d observations leave nothing after differencing of order %d", n, nd)
	}
	pr.w = difference(pr.z, pr.delta)
	// Regressors on t = 1..n.
	if spec.Constant {
		switch spec.nDiff() {
		case 0:
			pr.x = append(pr.x, regColumn(n, 0, func(t float64) float64 { return 1 }))
		case 1:
			pr.x = append(pr.x, regColumn(n, 0, func(t float64) float64 { return t }))
		default:
			return nil, errors.New("a constant needs d+D ≤ 1")
		}
	}
	for k := 1; k <= spec.Fourier; k++ {
		fk := float64(k)
		m := float64(pr.m)
		pr.x = append(pr.x, regColumn(n, 0, func(t float64) float64 { return math.Sin(2 * math.Pi * fk * t / m) }))
		if 2*k != pr.m {
			pr.x = append(pr.x, regColumn(n, 0, func(t float64) float64 { return math.Cos(2 * math.Pi * fk * t / m) }))
		}
	}
	pr.x = append(pr.x, xreg...)
	for i, col := range pr.x {
		d := difference(col, pr.delta)
		if i >= len(pr.x)-len(xreg) && negligible(d, col) {
			return nil, fmt.Errorf("regressor %d is constant after differencing (it duplicates the differencing or the constant)", i-(len(pr.x)-len(xreg))+1)
		}
		pr.xd = append(pr.xd, d)
	}
	pr.ar = make([]float64, spec.P)
	pr.ma = make([]float64, spec.Q)
	pr.sar = make([]float64, spec.SP)
	pr.sma = make([]float64, spec.SQ)
	pr.phi = make([]float64, spec.P+spec.SP*pr.m)
	pr.theta = make([]float64, spec.Q+spec.SQ*pr.m)
	pr.work = make([]float64, max(spec.P, spec.Q, spec.SP, spec.SQ, 1)+len(pr.phi)+len(pr.theta)+2)
	pr.u = make([]float64, len(pr.w))
	pr.e = make([]float64, len(pr.w))
	pr.beta = make([]float64, len(pr.x))
	pr.olsStart()
	return pr, nil
}

// regColumn evaluates f at t = off+1 .. off+n.
func regColumn(n, off int, f func(t float64) float64) []float64 {
	c := make([]float64, n)
	for i := range c {
		c[i] = f(float64(off + i + 1))
	}
	return c
}

// diffPoly returns δ_1..δ_nd of (1−B)^d(1−B^m)^D = 1 − Σ δ_j B^j.
func diffPoly(d, sd, m int) []float64 {
	poly := []float64{1}
	mul := func(q []float64) {
		dst := make([]float64, len(poly)+len(q)-1)
		poly = numeric.PolyMul(dst, poly, q)
	}
	for i := 0; i < d; i++ {
		mul([]float64{1, -1})
	}
	for i := 0; i < sd; i++ {
		q := make([]float64, m+1)
		q[0], q[m] = 1, -1
		mul(q)
	}
	delta := make([]float64, len(poly)-1)
	for j := range delta {
		delta[j] = -poly[j+1]
	}
	return delta
}

// difference applies Δ(B) to z, returning len(z)−len(delta) values.
func difference(z, delta []float64) []float64 {
	nd := len(delta)
	out := make([]float64, len(z)-nd)
	for t := nd; t < len(z); t++ {
		v := z[t]
		for j, dj := range delta {
			v -= dj * z[t-j-1]
		}
		out[t-nd] = v
	}
	return out
}

// olsStart sets the regression starting values and scales from ordinary
// least squares of w on the differenced regressors.
func (pr *problem) olsStart() {
	k := len(pr.xd)
	pr.beta0 = make([]float64, k)
	pr.betaScale = make([]float64, k)
	if k == 0 {
		return
	}
	n := len(pr.w)
	// Normal equations, solved by Cholesky (k is small).
	a := make([]float64, k*k)
	b := make([]float64, k)
	for i := 0; i < k; i++ {
		for j := 0; j < k; j++ {
			var s float64
			for t := 0; t < n; t++ {
				s += pr.xd[i][t] * pr.xd[j][t]
			}
			a[i*k+j] = s
		}
		var s float64
		for t := 0; t < n; t++ {
			s += pr.xd[i][t] * pr.w[t]
		}
		b[i] = s
	}
	inv, ok := invertSPD(a, k)
	if !ok {
		for i := range pr.betaScale {
			pr.betaScale[i] = 1
		}
		return
	}
	for i := 0; i < k; i++ {
		var s float64
		for j := 0; j < k; j++ {
			s += inv[i*k+j] * b[j]
		}
		pr.beta0[i] = s
	}
	var sse float64
	for t := 0; t < n; t++ {
		r := pr.w[t]
		for i := 0; i < k; i++ {
			r -= pr.xd[i][t] * pr.beta0[i]
		}
		sse += r * r
	}
	s2 := sse / float64(max(n-k, 1))
	for i := 0; i < k; i++ {
		se := math.Sqrt(s2 * inv[i*k+i])
		if !(se > 0) || math.IsInf(se, 0) {
			se = 1
		}
		pr.betaScale[i] = se
	}
}

// invertSPD inverts a small symmetric positive-definite matrix by
// Gauss–Jordan elimination; false when it is singular.
func invertSPD(a []float64, k int) ([]float64, bool) {
	m := make([]float64, k*2*k)
	for i := 0; i < k; i++ {
		copy(m[i*2*k:], a[i*k:i*k+k])
		m[i*2*k+k+i] = 1
	}
	for c := 0; c < k; c++ {
		piv := c
		for r := c + 1; r < k; r++ {
			if math.Abs(m[r*2*k+c]) > math.Abs(m[piv*2*k+c]) {
				piv = r
			}
		}
		if math.Abs(m[piv*2*k+c]) < 1e-12*math.Max(1, math.Abs(a[c*k+c])) {
			return nil, false
		}
		if piv != c {
			for j := 0; j < 2*k; j++ {
				m[c*2*k+j], m[piv*2*k+j] = m[piv*2*k+j], m[c*2*k+j]
			}
		}
		d := m[c*2*k+c]
		for j := 0; j < 2*k; j++ {
			m[c*2*k+j] /= d
		}
		for r := 0; r < k; r++ {
			if r == c {
				continue
			}
			f := m[r*2*k+c]
			if f == 0 {
				continue
			}
			for j := 0; j < 2*k; j++ {
				m[r*2*k+j] -= f * m[c*2*k+j]
			}
		}
	}
	inv := make([]float64, k*k)
	for i := 0; i < k; i++ {
		copy(inv[i*k:i*k+k], m[i*2*k+k:i*2*k+2*k])
	}
	return inv, true
}

// nParams is the number of estimated coefficients (ARMA and regression).
func (pr *problem) nParams() int {
	s := pr.spec
	return s.P + s.Q + s.SP + s.SQ + len(pr.x)
}

// nFree is the length of the optimiser's vector: nParams, less the
// regression coefficients when they are held at their least-squares values.
func (pr *problem) nFree() int {
	if pr.fixBeta {
		return pr.nParams() - len(pr.x)
	}
	return pr.nParams()
}

// unpack maps the unconstrained vector x to coefficients: each ARMA block
// goes through tanh and the partial-autocorrelation map (Jones 1980), so
// every x gives a stationary AR and an invertible MA; regression
// coefficients are β0 + scale·x.
func (pr *problem) unpack(x []float64) {
	off := 0
	block := func(dst []float64, sign float64) {
		k := len(dst)
		for i := 0; i < k; i++ {
			dst[i] = math.Tanh(math.Max(-maxRaw, math.Min(maxRaw, x[off+i])))
		}
		numeric.PACFToAR(dst, dst, pr.work[:k])
		if sign < 0 {
			for i := range dst {
				dst[i] = -dst[i]
			}
		}
		off += k
	}
	block(pr.ar, 1)
	block(pr.ma, -1)
	block(pr.sar, 1)
	block(pr.sma, -1)
	for i := range pr.beta {
		if pr.fixBeta {
			pr.beta[i] = pr.beta0[i]
		} else {
			pr.beta[i] = pr.beta0[i] + pr.betaScale[i]*x[off+i]
		}
	}
	pr.expand()
}

// pack is the inverse of unpack for coefficients already in pr.ar etc.;
// false when they are not stationary and invertible.
func (pr *problem) pack(x []float64) bool {
	off := 0
	block := func(src []float64, sign float64) bool {
		k := len(src)
		tmp := make([]float64, k)
		for i := range src {
			tmp[i] = sign * src[i]
		}
		pacf, ok := numeric.ARToPACF(tmp, tmp, make([]float64, k))
		if !ok {
			return false
		}
		for i, r := range pacf {
			x[off+i] = math.Max(-maxRaw, math.Min(maxRaw, math.Atanh(r)))
		}
		off += k
		return true
	}
	if !block(pr.ar, 1) || !block(pr.ma, -1) || !block(pr.sar, 1) || !block(pr.sma, -1) {
		return false
	}
	if !pr.fixBeta {
		for i := range pr.beta {
			x[off+i] = (pr.beta[i] - pr.beta0[i]) / pr.betaScale[i]
		}
	}
	return true
}

// expand multiplies out φ(B)Φ(B^m) and θ(B)Θ(B^m) into pr.phi, pr.theta
// (signs as in the difference equation: w_t = Σ phi_k w_{t−k} + ε_t +
// Σ theta_k ε_{t−k}).
func (pr *problem) expand() {
	m := pr.m
	for i := range pr.phi {
		pr.phi[i] = 0
	}
	for i := range pr.theta {
		pr.theta[i] = 0
	}
	// (1 − Σφ_i B^i)(1 − ΣΦ_j B^{jm}) = 1 − Σφ_i B^i − ΣΦ_j B^{jm} + Σφ_iΦ_j B^{i+jm}.
	copy(pr.phi, pr.ar)
	for j, sj := range pr.sar {
		pr.phi[(j+1)*m-1] += sj
		for i, ai := range pr.ar {
			pr.phi[(j+1)*m+i] -= ai * sj
		}
	}
	// (1 + Σθ_i B^i)(1 + ΣΘ_j B^{jm}).
	copy(pr.theta, pr.ma)
	for j, sj := range pr.sma {
		pr.theta[(j+1)*m-1] += sj
		for i, ai := range pr.ma {
			pr.theta[(j+1)*m+i] += ai * sj
		}
	}
}

// errorsSeries writes u = w − x_dβ, unless u already holds it for the
// current β (held fixed, or unchanged between evaluations): with Fourier
// terms for weekly data it would otherwise cost as much as the likelihood.
func (pr *problem) errorsSeries() {
	if pr.uValid && slices.Equal(pr.uBeta, pr.beta) {
		return
	}
	pr.uBeta = append(pr.uBeta[:0], pr.beta...)
	pr.uValid = true
	copy(pr.u, pr.w)
	for i, col := range pr.xd {
		b := pr.beta[i]
		for t := range pr.u {
			pr.u[t] -= b * col[t]
		}
	}
}

// mlObjective is ½ln(σ̂²) + ½·Σ ln F_t / n, the negative concentrated
// log-likelihood per observation up to a constant (the criterion that R's
// stats::arima minimises too).
func (pr *problem) mlObjective(x []float64) float64 {
	pr.unpack(x)
	pr.errorsSeries()
	ssq, sumLog, err := pr.kal.LogLik(pr.u, pr.phi, pr.theta)
	n := float64(len(pr.u))
	if err != nil || !(ssq > 0) || math.IsInf(ssq, 0) || math.IsNaN(sumLog) {
		return 1e10
	}
	return 0.5*math.Log(ssq/n) + 0.5*sumLog/n
}

// cssObjective is ½ ln of the mean conditional sum of squares, conditioning
// on the first p + P·m values of the differenced errors.
func (pr *problem) cssObjective(x []float64) float64 {
	pr.unpack(x)
	pr.errorsSeries()
	ssq, k := pr.css()
	if k == 0 || !(ssq > 0) || math.IsInf(ssq, 0) {
		return 1e10
	}
	return 0.5 * math.Log(ssq/float64(k))
}

// css returns the conditional sum of squares and the number of terms.
func (pr *problem) css() (float64, int) {
	u, e, phi, theta := pr.u, pr.e, pr.phi, pr.theta
	nc := len(phi)
	var ssq float64
	for t := range u {
		if t < nc {
			e[t] = 0
			continue
		}
		v := u[t]
		for i, f := range phi {
			v -= f * u[t-i-1]
		}
		for j, th := range theta {
			if t-j-1 < 0 {
				break
			}
			v -= th * e[t-j-1]
		}
		e[t] = v
		ssq += v * v
	}
	return ssq, max(len(u)-nc, 0)
}

// minimize runs BFGS (minimizeBFGS) with forward-difference gradients from
// x, falling back to Nelder–Mead when BFGS fails. It returns the best point
// found.
func minimize(f func([]float64) float64, x0 []float64) ([]float64, error) {
	n := len(x0)
	if n == 0 {
		return x0, nil
	}
	// The optimiser asks for the value and the gradient at the same point
	// one after the other: remember the last value so that the forward
	// differences do not evaluate the likelihood there a second time.
	var lastX []float64
	var lastF float64
	value := func(x []float64) float64 {
		lastF = f(x)
		lastX = append(lastX[:0], x...)
		return lastF
	}
	xx := make([]float64, n)
	grad := func(g, x []float64) {
		fx := lastF
		if !slices.Equal(x, lastX) {
			fx = value(x)
		}
		copy(xx, x)
		for i := range xx {
			h := 1e-6 * math.Max(1, math.Abs(xx[i]))
			xx[i] += h
			g[i] = (f(xx) - fx) / h
			xx[i] = x[i]
		}
	}
	settings := bfgsSettings{
		GradientThreshold: 1e-5,
		Converger:         &optimize.FunctionConverge{Absolute: 1e-9, Iterations: 8},
		MajorIterations:   200,
	}
	xb, fb, err := minimizeBFGS(value, grad, x0, settings)
	if (err == nil || fb < f(x0)) && !math.IsNaN(fb) {
		return xb, nil
	}
	res, err2 := optimize.Minimize(optimize.Problem{Func: f}, x0, &optimize.Settings{MajorIterations: 2000}, &optimize.NelderMead{})
	if res != nil && res.F <= f(x0) {
		return res.X, nil
	}
	if err2 != nil {
		return x0, fmt.Errorf("optimiser failed: %v; %v", err, err2)
	}
	return x0, fmt.Errorf("optimiser failed: %v", err)
}

// negligible reports whether every value of d is zero relative to the
// scale of x (a regressor that differencing removed).
func negligible(d, x []float64) bool {
	var scale, big float64
	for _, v := range x {
		scale = math.Max(scale, math.Abs(v))
	}
	for _, v := range d {
		big = math.Max(big, math.Abs(v))
	}
	return big <= 1e-12*scale
}
