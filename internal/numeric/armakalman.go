package numeric

import (
	"errors"
	"math"
)

// ARMAKalman computes the exact Gaussian likelihood of a zero-mean
// stationary ARMA(p, q) series by the Kalman filter on the state-space form
// of Gardner, Harvey & Phillips (1980, Applied Statistics 29(3), algorithm
// AS 154) and Harvey (1989, Forecasting, Structural Time Series Models and
// the Kalman Filter, §3.4):
//
//	α_{t+1} = T α_t + R ε_{t+1},  w_t = α_{1,t},
//
// with state dimension r = max(p, q+1), T holding φ_1..φ_r in its first
// column and ones on its superdiagonal, and R = (1, θ_1, …, θ_{r−1})ᵀ. The
// innovation variance is scaled out (σ² = 1), so the filter returns the sum
// of squared standardised innovations and the sum of log innovation
// variances, from which σ² is concentrated out of the likelihood.
//
// The initial state covariance is the stationary solution of
// P = T P Tᵀ + R Rᵀ (closed form for pure moving averages, from the
// autocovariances otherwise, Lyapunov doubling as a last resort). The
// companion structure of T makes each filter step
// O(r²); once the predicted covariance stops changing (to 1e-11) the filter
// switches to the steady-state gain, making the remaining steps O(r).
//
// The zero value is ready to use; a workspace is reused across calls, so an
// ARMAKalman is not safe for concurrent use.
type ARMAKalman struct {
	r               int
	phi, rv         []float64
	a, anew, pp, pn []float64
	u0, c, cov      []float64
	chan3           []float64
	tm, rr, lyWork  []float64
}

// ErrBadVariance reports a non-positive or non-finite innovation variance
// inside the filter, which happens only for invalid parameters.
var ErrBadVariance = errors.New("numeric: Kalman filter innovation variance is not positive")

// StateDim returns max(p, q+1), the state dimension for ARMA(p, q).
func StateDim(p, q int) int { return max(p, q+1) }

func (k *ARMAKalman) setup(phi, theta []float64) error { return k.setupInit(phi, theta, false) }

// setupInit sizes the workspace and writes the stationary covariance into
// k.pp; with rowOnly, only its first row and column are guaranteed.
func (k *ARMAKalman) setupInit(phi, theta []float64, rowOnly bool) error {
	r := StateDim(len(phi), len(theta))
	k.r = r
	grow := func(s []float64, n int) []float64 {
		if cap(s) < n {
			return make([]float64, n)
		}
		s = s[:n]
		for i := range s {
			s[i] = 0
		}
		return s
	}
	k.phi = grow(k.phi, r)
	k.rv = grow(k.rv, r)
	k.a = grow(k.a, r)
	k.anew = grow(k.anew, r)
	k.pp = grow(k.pp, r*r)
	copy(k.phi, phi)
	k.rv[0] = 1
	copy(k.rv[1:], theta)
	allZero := true
	for _, v := range phi {
		if v != 0 {
			allZero = false
			break
		}
	}
	if allZero {
		// Pure moving average: α_{i,t} = Σ_k R_{i+k} ε_{t−k}, so
		// P0[i][j] = Σ_k R_{i+k} R_{j+k}.
		for i := 0; i < r; i++ {
			if rowOnly && i > 0 {
				break
			}
			for j := i; j < r; j++ {
				var s float64
				for m := 0; i+m < r && j+m < r; m++ {
					s += k.rv[i+m] * k.rv[j+m]
				}
				k.pp[i*r+j], k.pp[j*r+i] = s, s
			}
		}
		return nil
	}
	if k.stationaryCov(len(phi), len(theta), rowOnly) {
		return nil
	}
	// The autocovariance system was singular to working precision: solve
	// the Lyapunov equation directly.
	k.tm = grow(k.tm, r*r)
	k.rr = grow(k.rr, r*r)
	k.lyWork = grow(k.lyWork, 3*r*r)
	for i := 0; i < r; i++ {
		k.tm[i*r] = k.phi[i]
		if i+1 < r {
			k.tm[i*r+i+1] = 1
		}
		for j := 0; j < r; j++ {
			k.rr[i*r+j] = k.rv[i] * k.rv[j]
		}
	}
	return Lyapunov(k.pp, k.tm, k.rr, r, k.lyWork)
}

// stationaryCov writes the stationary state covariance P0 into k.pp in
// O(p³ + r²): the autocovariances γ(0..r) of the ARMA process come from
// the (p+1)-equation linear system of Brockwell & Davis (1991, Time Series:
// Theory and Methods, §3.3, method 2), the cross-covariances E[w_t ε_{t−j}]
// are the ψ-weights; they give the first row of P0, and the Lyapunov
// equation P0 = T P0 Tᵀ + R Rᵀ, read entry by entry with the companion T,
// gives every other entry along the diagonals:
// P_{i+1,j+1} = P_ij − φ_iφ_j P_00 − φ_i P_{0,j+1} − φ_j P_{0,i+1} − R_iR_j.
// It returns false when the system is numerically singular.
func (k *ARMAKalman) stationaryCov(p, q int, rowOnly bool) bool {
	r := k.r
	ph, rv := k.phi, k.rv
	need := (r + 1) + r + (p+1)*(p+2)
	if cap(k.cov) < need {
		k.cov = make([]float64, need)
	}
	buf := k.cov[:need]
	gamma, psi, sys := buf[:r+1], buf[r+1:2*r+1], buf[2*r+1:]
	// ψ_0 = 1, ψ_j = θ_j + Σ_{i=1}^{min(j,p)} φ_i ψ_{j−i}.
	for j := 0; j < r; j++ {
		v := 0.0
		if j == 0 {
			v = 1
		} else if j <= q {
			v = rv[j]
		}
		for i := 1; i <= min(j, p); i++ {
			v += ph[i-1] * psi[j-i]
		}
		psi[j] = v
	}
	// rhs(k) = Σ_{j=k}^{q} θ_j ψ_{j−k}, θ_0 = 1.
	rhs := func(kk int) float64 {
		var s float64
		for j := kk; j <= q; j++ {
			s += rv[j] * psi[j-kk]
		}
		return s
	}
	// γ(k) − Σ_i φ_i γ(|k−i|) = rhs(k), k = 0..p, as an augmented matrix.
	w := p + 2
	for i := range sys {
		sys[i] = 0
	}
	for kk := 0; kk <= p; kk++ {
		row := sys[kk*w : kk*w+w]
		row[kk] += 1
		for i := 1; i <= p; i++ {
			if ph[i-1] == 0 {
				continue // most of a seasonal model's φ_i are zero
			}
			d := kk - i
			if d < 0 {
				d = -d
			}
			row[d] -= ph[i-1]
		}
		row[p+1] = rhs(kk)
	}
	if !solveAugmented(sys, p+1) {
		return false
	}
	for kk := 0; kk <= p; kk++ {
		gamma[kk] = sys[kk*w+p+1]
	}
	for kk := p + 1; kk <= r; kk++ {
		v := rhs(kk)
		for i := 1; i <= p; i++ {
			v += ph[i-1] * gamma[kk-i]
		}
		gamma[kk] = v
	}
	if !(gamma[0] >= 1) || math.IsInf(gamma[0], 0) {
		return false
	}
	pp := k.pp
	for j := 0; j < r; j++ {
		var s float64
		for kk := j; kk < r; kk++ {
			s += ph[kk]*gamma[kk-j+1] + rv[kk]*psi[kk-j]
		}
		pp[j] = s
		pp[j*r] = s
	}
	pp[0] = gamma[0]
	if rowOnly {
		return true
	}
	p00 := gamma[0]
	for i := 0; i+1 < r; i++ {
		for j := i; j+1 < r; j++ {
			v := pp[i*r+j] - ph[i]*ph[j]*p00 - ph[i]*pp[j+1] - ph[j]*pp[i+1] - rv[i]*rv[j]
			pp[(i+1)*r+j+1] = v
			pp[(j+1)*r+i+1] = v
		}
	}
	return true
}

// solveAugmented solves the n×n system held with its right-hand side as an
// n×(n+1) row-major augmented matrix by Gaussian elimination with partial
// pivoting, leaving the solution in the last column. False when singular.
func solveAugmented(a []float64, n int) bool {
	w := n + 1
	for c := 0; c < n; c++ {
		piv, big := c, math.Abs(a[c*w+c])
		for r := c + 1; r < n; r++ {
			if v := math.Abs(a[r*w+c]); v > big {
				piv, big = r, v
			}
		}
		if big < 1e-13 {
			return false
		}
		pivRow := a[c*w : c*w+w]
		if piv != c {
			other := a[piv*w : piv*w+w]
			for j := c; j < w; j++ {
				pivRow[j], other[j] = other[j], pivRow[j]
			}
		}
		inv := 1 / pivRow[c]
		for r := c + 1; r < n; r++ {
			row := a[r*w : r*w+w]
			f := row[c] * inv
			if f == 0 {
				continue
			}
			for j := c; j < w; j++ {
				row[j] -= f * pivRow[j]
			}
		}
	}
	for c := n - 1; c >= 0; c-- {
		s := a[c*w+n]
		for j := c + 1; j < n; j++ {
			s -= a[c*w+j] * a[j*w+n]
		}
		a[c*w+n] = s / a[c*w+c]
	}
	return true
}

// Filter runs the filter over w for the ARMA model with AR coefficients
// phi and MA coefficients theta (signs: w_t = Σφ_i w_{t−i} + ε_t + Σθ_j
// ε_{t−j}). It returns ssq = Σ v_t²/F_t and sumLog = Σ ln F_t, where v_t is
// the one-step prediction error and F_t its variance relative to σ². The
// concentrated log-likelihood is −n/2·(ln(2π·ssq/n) + 1) − sumLog/2.
// When resid is non-nil (length len(w)) it receives the raw errors v_t.
// After the call, State returns the prediction of the next state.
// An error means the parameters give no stationary solution.
func (k *ARMAKalman) Filter(w, phi, theta, resid []float64) (ssq, sumLog float64, err error) {
	if err := k.setup(phi, theta); err != nil {
		return 0, 0, err
	}
	r := k.r
	if cap(k.pn) < r*r {
		k.pn = make([]float64, r*r)
	}
	a, anew, pp, pn, ph := k.a, k.anew, k.pp, k.pn[:r*r], k.phi
	steady := false
	for t, wt := range w {
		f := pp[0]
		if !(f > 0) || math.IsInf(f, 0) {
			return 0, 0, ErrBadVariance
		}
		v := wt - a[0]
		if resid != nil {
			resid[t] = v
		}
		ssq += v * v / f
		sumLog += math.Log(f)
		// Updated state a + P[:,0]·v/F, then predicted T·(updated).
		g := v / f
		a0 := a[0] + pp[0]*g
		for i := 0; i < r; i++ {
			next := 0.0
			if i+1 < r {
				next = a[i+1] + pp[i+1]*g
			}
			anew[i] = ph[i]*a0 + next
		}
		a, anew = anew, a
		if steady {
			continue
		}
		// Predicted covariance T·U·Tᵀ + R Rᵀ with the updated covariance
		// U = P − c cᵀ/F, c = P[:,0], on the upper triangle, using the
		// companion form of T: (TUTᵀ)_ij = φ_iφ_j U_00 + φ_i U_{0,j+1}
		// + φ_j U_{i+1,0} + U_{i+1,j+1}.
		invF := 1 / f
		diff := k.predictCov(pn, pp, invF)
		pp, pn = pn, pp
		if diff < 1e-11 {
			steady = true
		}
	}
	k.a, k.anew, k.pp, k.pn = a, anew, pp, pn
	return ssq, sumLog, nil
}

// predictCov writes the predicted covariance T·U·Tᵀ + R Rᵀ into pn, where
// U = P − c cᵀ/F is the updated covariance, c = P[:,0] and invF = 1/F,
// using the companion form of T:
// (TUTᵀ)_ij = φ_iφ_j U_00 + φ_i U_{0,j+1} + φ_j U_{i+1,0} + U_{i+1,j+1}.
// Only the upper triangles of pp and pn are read and written. It returns
// the largest change from pp, entry by entry.
func (k *ARMAKalman) predictCov(pn, pp []float64, invF float64) float64 {
	r := k.r
	ph, rv := k.phi[:r], k.rv[:r]
	if cap(k.u0) < r+1 {
		k.u0 = make([]float64, r+1)
		k.c = make([]float64, r+1)
	}
	u0, cc := k.u0[:r+1], k.c[:r+1]
	p00 := pp[0]
	for j := 0; j < r; j++ {
		cc[j] = pp[j]
		u0[j] = pp[j] - p00*pp[j]*invF
	}
	u0[r], cc[r] = 0, 0
	u00 := u0[0]
	arFree := true
	for _, v := range ph {
		if v != 0 {
			arFree = false
			break
		}
	}
	var diff float64
	for i := 0; i < r; i++ {
		ci1 := cc[i+1]
		ui0 := u0[i+1] // U[i+1][0] = U[0][i+1] by symmetry
		rvi, phi := rv[i], ph[i]
		row := pn[i*r : i*r+r]
		old := pp[i*r : i*r+r]
		var next []float64
		if i+1 < r {
			next = pp[(i+1)*r : (i+1)*r+r]
		}
		if arFree {
			for j := i; j < r-1; j++ {
				s := rvi*rv[j] + next[j+1] - ci1*cc[j+1]*invF
				row[j] = s
				if d := math.Abs(s - old[j]); d > diff {
					diff = d
				}
			}
		} else {
			for j := i; j < r-1; j++ {
				s := phi*(ph[j]*u00+u0[j+1]) + rvi*rv[j] + ph[j]*ui0
				if next != nil {
					s += next[j+1] - ci1*cc[j+1]*invF
				}
				row[j] = s
				if d := math.Abs(s - old[j]); d > diff {
					diff = d
				}
			}
		}
		j := r - 1
		if j >= i {
			s := phi*ph[j]*u00 + rvi*rv[j] + ph[j]*ui0
			row[j] = s
			if d := math.Abs(s - old[j]); d > diff {
				diff = d
			}
		}
	}
	return diff
}

// LogLik returns the same ssq and sumLog as Filter, without residuals or
// final state, by the Chandrasekhar recursions (Morf, Sidhu & Kailath 1974,
// IEEE Trans. Automatic Control 19(4); for ARMA likelihoods Mélard 1984,
// Applied Statistics 33(1), algorithm AS 197). With the stationary initial
// covariance the change P_{t+1} − P_t has rank one, P_{t+1} − P_t =
// L_t M_t L_tᵀ, so F_t, the gain K_t = T P_t Z and L_t, M_t are updated in
// O(r) per step instead of the O(r²) covariance update:
//
//	F_{t+1} = F_t + M_t (L_t)_1²,  K_{t+1} = K_t + M_t (L_t)_1 · T L_t,
//	L_{t+1} = T L_t − K_t (L_t)_1 / F_t,  M_{t+1} = M_t − M_t² (L_t)_1² / F_{t+1},
//
// started from K_0 = T P_0 Z, L_0 = K_0, M_0 = −1/F_0.
func (k *ARMAKalman) LogLik(w, phi, theta []float64) (ssq, sumLog float64, err error) {
	if err := k.setupInit(phi, theta, true); err != nil {
		return 0, 0, err
	}
	r := k.r
	if cap(k.chan3) < 3*r {
		k.chan3 = make([]float64, 3*r)
	}
	a := k.a[:r]
	kg, l, tl := k.chan3[:r], k.chan3[r:2*r], k.chan3[2*r:3*r]
	ph, pp := k.phi[:r], k.pp
	// K_0 = T·P_0[:,0]; first column equals the first row.
	tmul := func(dst, x []float64) {
		x0 := x[0]
		for i := 0; i < r-1; i++ {
			dst[i] = ph[i]*x0 + x[i+1]
		}
		dst[r-1] = ph[r-1] * x0
	}
	col := k.anew[:r]
	copy(col, pp[:r])
	tmul(kg, col)
	copy(l, kg)
	f := pp[0]
	if !(f > 0) || math.IsInf(f, 0) {
		return 0, 0, ErrBadVariance
	}
	m := -1 / f
	steady := false
	// ln F_t is taken once per change of F_t: in the steady state it is
	// constant and the logarithm would otherwise dominate the loop.
	logF := math.Log(f)
	for _, wt := range w {
		if !(f > 0) || math.IsInf(f, 0) {
			return 0, 0, ErrBadVariance
		}
		v := wt - a[0]
		ssq += v * v / f
		sumLog += logF
		// a ← T a + K v / F.
		g := v / f
		a0 := a[0]
		for i := 0; i < r-1; i++ {
			a[i] = ph[i]*a0 + a[i+1] + kg[i]*g
		}
		a[r-1] = ph[r-1]*a0 + kg[r-1]*g
		if steady {
			continue
		}
		hl := l[0]
		fNext := f + m*hl*hl
		tmul(tl, l)
		mh := m * hl
		c := hl / f
		for i := 0; i < r; i++ {
			ki := kg[i]
			kg[i] = ki + mh*tl[i]
			l[i] = tl[i] - ki*c
		}
		if fNext <= 0 {
			return 0, 0, ErrBadVariance
		}
		m -= m * m * hl * hl / fNext
		if math.Abs(fNext-f) < 1e-14*f && math.Abs(mh*hl) < 1e-14*f {
			var big float64
			for _, x := range l {
				big = math.Max(big, math.Abs(x))
			}
			steady = big*big*math.Abs(m) < 1e-14*f
		}
		f = fNext
		logF = math.Log(f)
	}
	return ssq, sumLog, nil
}

// State returns the predicted state mean and covariance (row-major r×r,
// relative to σ²) for the step after the last one filtered. The slices are
// the workspace's own and are overwritten by the next Filter call.
func (k *ARMAKalman) State() (a, p []float64, r int) {
	// The filter keeps only the upper triangle current.
	for i := 0; i < k.r; i++ {
		for j := i + 1; j < k.r; j++ {
			k.pp[j*k.r+i] = k.pp[i*k.r+j]
		}
	}
	return k.a[:k.r], k.pp[:k.r*k.r], k.r
}
