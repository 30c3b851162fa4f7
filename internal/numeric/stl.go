package numeric

import "math"

// STLOptions sets the smoothing spans of STL. A zero SeasonalWindow means
// 13; other zero values take the defaults of Cleveland et al. (1990, §3.4)
// as R's stats::stl applies them: TrendWindow the next odd integer ≥ 1.5·period/(1 − 1.5/SeasonalWindow),
// LowpassWindow the next odd integer ≥ period, jumps ⌈window/10⌉.
type STLOptions struct {
	SeasonalWindow int // span of the cycle-subseries smoother (odd, ≥ 3)
	TrendWindow    int
	LowpassWindow  int
	SeasonalDegree int // 0 or 1; 0 (local constant) by default
	// Inner is the number of inner-loop passes; 0 means 2.
	Inner int
}

// STL decomposes x into seasonal, trend and remainder components with
// period np ≥ 2 by the seasonal-trend decomposition based on loess of
// Cleveland, Cleveland, McRae & Terpenning (1990, J. Official Statistics
// 6(1)), without the robustness iterations. It follows the published
// algorithm step for step (cycle-subseries loess, low-pass filter of two
// moving averages of length np, one of length 3 and a loess, then trend
// loess), including evaluation at every jump-th point with linear
// interpolation between, so its output matches the reference Fortran.
// seasonal, trend and remainder must have length len(x).
func STL(x []float64, np int, opt STLOptions, seasonal, trend, remainder []float64) {
	n := len(x)
	ns := opt.SeasonalWindow
	if ns == 0 {
		ns = 13
	}
	nt := opt.TrendWindow
	if nt == 0 {
		nt = nextOdd(math.Ceil(1.5 * float64(np) / (1 - 1.5/float64(ns))))
	}
	nl := opt.LowpassWindow
	if nl == 0 {
		nl = nextOdd(float64(np))
	}
	ns, nt, nl = oddAtLeast3(ns), oddAtLeast3(nt), oddAtLeast3(nl)
	np = max(np, 2)
	inner := opt.Inner
	if inner == 0 {
		inner = 2
	}
	jump := func(w int) int { return int(math.Ceil(float64(w) / 10)) }
	nsj, ntj, nlj := jump(ns), jump(nt), jump(nl)
	isdeg := opt.SeasonalDegree

	for i := range trend {
		trend[i] = 0
	}
	m := n + 2*np
	work1 := make([]float64, m)
	work2 := make([]float64, m)
	work3 := make([]float64, m)
	lw := make([]float64, m)
	sub := make([]float64, n/np+3)
	subS := make([]float64, n/np+3)
	for it := 0; it < inner; it++ {
		for i := 0; i < n; i++ {
			work1[i] = x[i] - trend[i]
		}
		// Cycle-subseries smoothing, extended one period at each end.
		for j := 0; j < np; j++ {
			k := (n-j-1)/np + 1
			for i := 0; i < k; i++ {
				sub[i] = work1[i*np+j]
			}
			stlLoess(sub[:k], ns, isdeg, nsj, subS[1:k+1], lw)
			nright := min(ns, k)
			if v, ok := stlEst(sub[:k], ns, isdeg, 0, 1, nright, lw); ok {
				subS[0] = v
			} else {
				subS[0] = subS[1]
			}
			nleft := max(1, k-ns+1)
			if v, ok := stlEst(sub[:k], ns, isdeg, float64(k+1), nleft, k, lw); ok {
				subS[k+1] = v
			} else {
				subS[k+1] = subS[k]
			}
			for i := 0; i < k+2; i++ {
				work2[i*np+j] = subS[i]
			}
		}
		// Low-pass filter of the extended cycle-subseries.
		movingAverage(work2[:m], np, work3)
		movingAverage(work3[:m-np+1], np, work1)
		movingAverage(work1[:m-2*np+2], 3, work3)
		stlLoess(work3[:n], nl, 1, nlj, work1[:n], lw)
		for i := 0; i < n; i++ {
			seasonal[i] = work2[np+i] - work1[i]
			work3[i] = x[i] - seasonal[i]
		}
		stlLoess(work3[:n], nt, 1, ntj, trend, lw)
	}
	for i := 0; i < n; i++ {
		remainder[i] = x[i] - seasonal[i] - trend[i]
	}
}

func nextOdd(v float64) int {
	k := int(math.Round(v))
	if k%2 == 0 {
		k++
	}
	return k
}

func oddAtLeast3(k int) int {
	k = max(k, 3)
	if k%2 == 0 {
		k++
	}
	return k
}

// movingAverage writes the len(x)−w+1 means of w consecutive values.
func movingAverage(x []float64, w int, dst []float64) {
	n := len(x)
	var s float64
	for i := 0; i < w; i++ {
		s += x[i]
	}
	dst[0] = s / float64(w)
	for i := 1; i <= n-w; i++ {
		s += x[i+w-1] - x[i-1]
		dst[i] = s / float64(w)
	}
}

// stlLoess smooths y with a loess of span span and degree deg, evaluated at
// every jump-th point and interpolated linearly between (positions are
// 1-based as in the reference implementation). w is scratch of length ≥ n.
func stlLoess(y []float64, span, deg, jump int, ys, w []float64) {
	n := len(y)
	if n < 2 {
		ys[0] = y[0]
		return
	}
	nj := min(jump, n-1)
	est := func(i, nleft, nright int) {
		if v, ok := stlEst(y, span, deg, float64(i), nleft, nright, w); ok {
			ys[i-1] = v
		} else {
			ys[i-1] = y[i-1]
		}
	}
	switch {
	case span >= n:
		for i := 1; i <= n; i += nj {
			est(i, 1, n)
		}
	case nj == 1:
		nsh := (span + 1) / 2
		nleft, nright := 1, span
		for i := 1; i <= n; i++ {
			if i > nsh && nright != n {
				nleft++
				nright++
			}
			est(i, nleft, nright)
		}
	default:
		nsh := (span + 1) / 2
		for i := 1; i <= n; i += nj {
			var nleft, nright int
			switch {
			case i < nsh:
				nleft, nright = 1, span
			case i >= n-nsh+1:
				nleft, nright = n-span+1, n
			default:
				nleft, nright = i-nsh+1, span+i-nsh
			}
			est(i, nleft, nright)
		}
	}
	if nj == 1 {
		return
	}
	for i := 1; i <= n-nj; i += nj {
		delta := (ys[i+nj-1] - ys[i-1]) / float64(nj)
		for j := i + 1; j < i+nj; j++ {
			ys[j-1] = ys[i-1] + delta*float64(j-i)
		}
	}
	k := ((n-1)/nj)*nj + 1
	if k != n {
		est(n, max(1, n-span+1), n)
		if k != n-1 {
			delta := (ys[n-1] - ys[k-1]) / float64(n-k)
			for j := k + 1; j < n; j++ {
				ys[j-1] = ys[k-1] + delta*float64(j-k)
			}
		}
	}
}

// stlEst is the local tricube-weighted fit of degree 0 or 1 at position xs
// over the 1-based window nleft..nright.
func stlEst(y []float64, span, deg int, xs float64, nleft, nright int, w []float64) (float64, bool) {
	n := len(y)
	rng := float64(n) - 1
	h := math.Max(xs-float64(nleft), float64(nright)-xs)
	if span > n {
		h += float64((span - n) / 2)
	}
	h9, h1 := 0.999*h, 0.001*h
	var a float64
	for j := nleft; j <= nright; j++ {
		w[j-1] = 0
		r := math.Abs(float64(j) - xs)
		if r <= h9 {
			if r <= h1 {
				w[j-1] = 1
			} else {
				q := r / h
				q = 1 - q*q*q
				w[j-1] = q * q * q
			}
			a += w[j-1]
		}
	}
	if a <= 0 {
		return 0, false
	}
	for j := nleft; j <= nright; j++ {
		w[j-1] /= a
	}
	if h > 0 && deg > 0 {
		var am float64
		for j := nleft; j <= nright; j++ {
			am += w[j-1] * float64(j)
		}
		b := xs - am
		var c float64
		for j := nleft; j <= nright; j++ {
			d := float64(j) - am
			c += w[j-1] * d * d
		}
		if math.Sqrt(c) > 0.001*rng {
			b /= c
			for j := nleft; j <= nright; j++ {
				w[j-1] *= b*(float64(j)-am) + 1
			}
		}
	}
	var s float64
	for j := nleft; j <= nright; j++ {
		s += w[j-1] * y[j-1]
	}
	return s, true
}

// SeasonalStrength is max(0, 1 − Var(R)/Var(S+R)) for the STL remainder R
// and seasonal component S, the seasonal-strength measure of Wang, Smith &
// Hyndman (2006, Data Mining and Knowledge Discovery 13(3)) in its
// variance-ratio form. Values near 1 mean a strong, stable seasonal pattern.
func SeasonalStrength(seasonal, remainder []float64) float64 {
	n := len(seasonal)
	if n < 2 {
		return 0
	}
	var mr, ms float64
	for i := range seasonal {
		mr += remainder[i]
		ms += seasonal[i] + remainder[i]
	}
	mr /= float64(n)
	ms /= float64(n)
	var vr, vs float64
	for i := range seasonal {
		d := remainder[i] - mr
		vr += d * d
		e := seasonal[i] + remainder[i] - ms
		vs += e * e
	}
	if !(vs > 0) {
		return 0
	}
	return math.Max(0, 1-vr/vs)
}

// StrongSeasonStrength is the seasonal strength above which a series is
// treated as strongly seasonal: 0.64, the value used in common practice
// with the STL strength measure (recalled from memory of Hyndman &
// Athanasopoulos, Forecasting: Principles and Practice, not from a table).
const StrongSeasonStrength = 0.64

// StronglySeasonal reports whether the STL seasonal strength of x with
// period m (seasonal window 13) exceeds StrongSeasonStrength. It needs two
// full seasons and m ≥ 2; otherwise it reports false.
func StronglySeasonal(x []float64, m int) bool {
	n := len(x)
	if m < 2 || n < 2*m {
		return false
	}
	s, tr, r := make([]float64, n), make([]float64, n), make([]float64, n)
	STL(x, m, STLOptions{SeasonalWindow: 13}, s, tr, r)
	return SeasonalStrength(s, r) > StrongSeasonStrength
}
