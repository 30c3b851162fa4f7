package arima

import (
	"errors"
	"fmt"
	"math"
	"sort"

	"trueup/inputerr"
	"trueup/internal/numeric"
)

// AutoOptions bounds the automatic order search. The zero value searches
// p, q ≤ 5, P, Q ≤ 2 with p+q+P+Q ≤ 5 on the untransformed series.
type AutoOptions struct {
	// Period is the seasonal period m (1 or 0: non-seasonal).
	Period int
	// Log fits on ln y; the series must be strictly positive.
	Log bool
	// Orders at most these (0 means the default above).
	MaxP, MaxQ, MaxSP, MaxSQ, MaxOrder int
	// MaxFourier bounds K for long periods (m > 24); 0 means 6.
	MaxFourier int
	// RankByCSS ranks the candidate orders by their conditional-sum-of-
	// squares fits on every series, not only on long ones (n > 150 or
	// m > 12); the chosen order is still refitted by exact likelihood.
	// It is several times faster and may pick a different order.
	RankByCSS bool
}

// maxSeasonalARMAPeriod is the longest period for which seasonal ARMA
// terms are searched; longer periods use Fourier regressors instead.
const maxSeasonalARMAPeriod = 24

// Auto chooses and fits a seasonal ARIMA model for y:
//
//   - D: one seasonal difference when the STL seasonal strength (Wang,
//     Smith & Hyndman 2006) of the (transformed) series exceeds 0.64
//     (numeric.StronglySeasonal). We use
//     the strength measure rather than a seasonal unit-root test because it
//     needs no tables of critical values for each period and, being a
//     variance ratio, behaves the same for any m.
//   - d: successive KPSS tests at 5% on the seasonally differenced series
//     (Kwiatkowski et al. 1992; lags ⌊3√n/13⌋, Hwang & Schmidt 1996),
//     at most d = 2.
//   - p, q, P, Q and the constant: the stepwise search of Hyndman &
//     Khandakar (2008, J. Statistical Software 27(3), §3.2) by AICc, with a
//     constant considered only when d + D ≤ 1. AICc is compared only among
//     models with the same differencing, which the search keeps fixed.
//   - For m > 24 no seasonal ARMA terms: K Fourier pairs as regressors with
//     ARMA errors, K chosen by AICc (dynamic harmonic regression, Young,
//     Pedregal & Tych 1999).
//
// Short series (fewer than two seasons) are fitted without seasonal terms,
// constant series as their value with zero variance; every fallback is
// recorded in the model's Warning.
func Auto(y []float64, opt AutoOptions) (*Fitted, error) {
	for i, v := range y {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, inputerr.New("observation %d is not a finite number", i+1)
		}
	}
	n := len(y)
	if n == 0 {
		return nil, inputerr.New("the series is empty")
	}
	if opt.Log {
		for _, v := range y {
			if !(v > 0) {
				return nil, inputerr.New("the log transform needs a strictly positive series")
			}
		}
	}
	if isConstant(y) {
		return constantModel(y, opt.Log), nil
	}
	setDefault := func(v *int, d int) {
		if *v <= 0 {
			*v = d
		}
	}
	setDefault(&opt.MaxP, 5)
	setDefault(&opt.MaxQ, 5)
	setDefault(&opt.MaxSP, 2)
	setDefault(&opt.MaxSQ, 2)
	setDefault(&opt.MaxOrder, 5)
	setDefault(&opt.MaxFourier, 6)
	var warn []string
	m := opt.Period
	if m < 1 {
		m = 1
	}
	if m > 1 && n < 2*m {
		warn = append(warn, fmt.Sprintf("series has %d observations, fewer than two seasons of %d: fitted without seasonal terms", n, m))
		m = 1
	}
	z := make([]float64, n)
	for i, v := range y {
		if opt.Log {
			z[i] = math.Log(v)
		} else {
			z[i] = v
		}
	}
	sd := 0
	fourier := m > maxSeasonalARMAPeriod
	if m > 1 && !fourier {
		if numeric.StronglySeasonal(z, m) && n-m >= m+3 {
			sd = 1
		}
	}
	x := z
	if sd == 1 {
		x = difference(z, diffPoly(0, 1, m))
	}
	d := 0
	for d < 2 && len(x) > 3 && !isConstant(x) && numeric.KPSSLevel(x, numeric.KPSSLags(len(x))) > numeric.KPSSLevelCritical5 {
		x = difference(x, []float64{1})
		d++
	}
	base := Spec{D: d, SD: sd, Period: m, Log: opt.Log}
	if m == 1 {
		base.Period = 0
	}
	// Hyndman & Khandakar rank candidates by an approximation on long
	// series; the winner is refitted exactly.
	approx := opt.RankByCSS || n > 150 || m > 12
	var ranked []*Fitted
	var err error
	if fourier {
		ranked, err = searchFourier(y, base, opt, approx)
	} else {
		ranked, err = stepwise(y, base, opt, approx, m > 1)
	}
	var chosen *Fitted
	if err == nil {
		chosen, err = best(y, ranked, approx)
	}
	if err != nil {
		fb, why := fallback(y, base)
		if fb == nil {
			return nil, fmt.Errorf("automatic ARIMA: %v; %s", err, why)
		}
		warn = append(warn, fmt.Sprintf("order search failed (%v): %s", err, why))
		chosen = fb
	}
	chosen.warn = append(warn, chosen.warn...)
	return chosen, nil
}

type candidate struct {
	p, q, sp, sq int
	constant     bool
}

// stepwise runs the Hyndman–Khandakar stepwise search with differencing
// fixed by base and returns every model it fitted, best AICc first.
func stepwise(y []float64, base Spec, opt AutoOptions, approx, seasonal bool) ([]*Fitted, error) {
	allowConst := base.nDiff() <= 1
	type result struct {
		f    *Fitted
		aicc float64
	}
	tried := map[candidate]result{}
	fit := func(c candidate) result {
		if r, ok := tried[c]; ok {
			return r
		}
		r := result{aicc: math.Inf(1)}
		ok := c.p >= 0 && c.q >= 0 && c.sp >= 0 && c.sq >= 0 &&
			c.p <= opt.MaxP && c.q <= opt.MaxQ && c.sp <= opt.MaxSP && c.sq <= opt.MaxSQ &&
			c.p+c.q+c.sp+c.sq <= opt.MaxOrder && (allowConst || !c.constant) &&
			(seasonal || (c.sp == 0 && c.sq == 0))
		if ok {
			s := base
			s.P, s.Q, s.SP, s.SQ, s.Constant = c.p, c.q, c.sp, c.sq, c.constant
			f, err := FitOrder(y, s, Options{Approximate: approx})
			if err == nil && !nearBoundary(f) {
				r = result{f: f, aicc: f.crit.AICc}
				if math.IsInf(r.aicc, 1) {
					// Too few observations for AICc's correction: keep
					// the model, ranked after every model with a finite
					// AICc.
					r.aicc = math.MaxFloat64
				}
			}
		}
		tried[c] = r
		return r
	}
	var starts []candidate
	if seasonal {
		starts = []candidate{{2, 2, 1, 1, allowConst}, {0, 0, 0, 0, allowConst}, {1, 0, 1, 0, allowConst}, {0, 1, 0, 1, allowConst}}
	} else {
		starts = []candidate{{2, 2, 0, 0, allowConst}, {0, 0, 0, 0, allowConst}, {1, 0, 0, 0, allowConst}, {0, 1, 0, 0, allowConst}}
	}
	if allowConst {
		starts = append(starts, candidate{0, 0, 0, 0, false})
	}
	cur := candidate{}
	curAICc := math.Inf(1)
	for _, c := range starts {
		if r := fit(c); r.aicc < curAICc {
			cur, curAICc = c, r.aicc
		}
	}
	if math.IsInf(curAICc, 1) {
		return nil, errors.New("no starting model could be fitted")
	}
	for iter := 0; iter < 100; iter++ {
		improved := false
		for _, nb := range neighbours(cur, seasonal, allowConst) {
			if r := fit(nb); r.aicc < curAICc {
				cur, curAICc = nb, r.aicc
				improved = true
				break // move, then search around the new model
			}
		}
		if !improved {
			break
		}
	}
	ranked := make([]*Fitted, 0, len(tried))
	for _, r := range tried {
		if r.f != nil {
			ranked = append(ranked, r.f)
		}
	}
	rankFits(ranked)
	return ranked, nil
}

// rankFits sorts fits by AICc (undefined AICc last), ties by spelling, so
// the order is deterministic.
func rankFits(fs []*Fitted) {
	key := func(f *Fitted) float64 {
		if math.IsInf(f.crit.AICc, 1) {
			return math.MaxFloat64
		}
		return f.crit.AICc
	}
	sort.SliceStable(fs, func(i, j int) bool {
		ki, kj := key(fs[i]), key(fs[j])
		if ki != kj {
			return ki < kj
		}
		return fs[i].spec.String() < fs[j].spec.String()
	})
}

// best returns the first of the ranked fits; after an approximate search
// it refits them exactly in rank order until one succeeds.
func best(y []float64, ranked []*Fitted, approx bool) (*Fitted, error) {
	if len(ranked) == 0 {
		return nil, errors.New("no candidate model could be fitted")
	}
	if !approx {
		return ranked[0], nil
	}
	for _, r := range ranked {
		f, err := FitOrder(y, r.spec, Options{})
		if err == nil && !nearBoundary(f) {
			return f, nil
		}
	}
	return nil, errors.New("no candidate could be refitted by exact likelihood")
}

// neighbours lists the moves of the stepwise search in a fixed order
// (Hyndman & Khandakar 2008, §3.2, steps (a)–(d), with P and Q varied
// together as well).
func neighbours(c candidate, seasonal, allowConst bool) []candidate {
	var out []candidate
	add := func(dp, dq, dsp, dsq int) {
		out = append(out, candidate{c.p + dp, c.q + dq, c.sp + dsp, c.sq + dsq, c.constant})
	}
	if seasonal {
		add(0, 0, -1, 0)
		add(0, 0, 1, 0)
		add(0, 0, 0, -1)
		add(0, 0, 0, 1)
		add(0, 0, -1, -1)
		add(0, 0, 1, 1)
	}
	add(-1, 0, 0, 0)
	add(1, 0, 0, 0)
	add(0, -1, 0, 0)
	add(0, 1, 0, 0)
	add(-1, -1, 0, 0)
	add(1, 1, 0, 0)
	if allowConst {
		out = append(out, candidate{c.p, c.q, c.sp, c.sq, !c.constant})
	}
	return out
}

// nearBoundary reports a fit whose AR or MA polynomial has a partial
// autocorrelation beyond ±0.99, i.e. a root within about 1% of the unit
// circle. Like Hyndman & Khandakar (2008), the search rejects such models:
// they forecast erratically and often signal cancelling AR and MA roots.
func nearBoundary(f *Fitted) bool {
	check := func(c []float64, sign float64) bool {
		if len(c) == 0 {
			return false
		}
		tmp := make([]float64, len(c))
		for i, v := range c {
			tmp[i] = sign * v
		}
		pacf, ok := numeric.ARToPACF(tmp, tmp, make([]float64, len(c)))
		if !ok {
			return true
		}
		for _, r := range pacf {
			if math.Abs(r) > 0.99 {
				return true
			}
		}
		return false
	}
	return check(f.ar, 1) || check(f.ma, -1) || check(f.sar, 1) || check(f.sma, -1)
}

// searchFourier runs a stepwise search of non-seasonal ARMA error models
// for each number K of Fourier pairs and returns all fits ranked by AICc,
// so that K is chosen by AICc too.
func searchFourier(y []float64, base Spec, opt AutoOptions, approx bool) ([]*Fitted, error) {
	var all []*Fitted
	var lastErr error
	maxK := min(opt.MaxFourier, base.Period/2)
	for k := 1; k <= maxK; k++ {
		s := base
		s.Fourier = k
		fs, err := stepwise(y, s, opt, approx, false)
		if err != nil {
			lastErr = err
			continue
		}
		all = append(all, fs...)
	}
	if len(all) == 0 {
		if lastErr == nil {
			lastErr = errors.New("no Fourier model could be fitted")
		}
		return nil, lastErr
	}
	rankFits(all)
	return all, nil
}

// fallback tries progressively simpler models after a failed search.
func fallback(y []float64, base Spec) (*Fitted, string) {
	tries := []Spec{
		{D: base.D, SD: base.SD, Period: base.Period, Log: base.Log, Constant: base.nDiff() <= 1},
		{D: 1, Log: base.Log},
		{D: 0, Constant: true, Log: base.Log},
		{Log: base.Log},
	}
	for _, s := range tries {
		if f, err := FitOrder(y, s, Options{}); err == nil {
			return f, "fell back to " + s.String()
		}
	}
	return nil, "no fallback model could be fitted"
}

func isConstant(x []float64) bool {
	for _, v := range x[1:] {
		if v != x[0] {
			return false
		}
	}
	return true
}
