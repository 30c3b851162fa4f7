package ets

import (
	"math"
	"math/rand/v2"
	"testing"

	"trueup/inputerr"
	"trueup/models"
)

func TestParseSpec(t *testing.T) {
	for _, text := range []string{"ETS(M,Ad,M)", "ets(a,n,n)", "A,A,A", " ETS( M , N , A ) "} {
		s, err := ParseSpec(text)
		if err != nil {
			t.Fatalf("%q: %v", text, err)
		}
		again, err := ParseSpec(s.String())
		if err != nil || again != s {
			t.Errorf("%q: round trip gave %v, %v", text, again, err)
		}
	}
	if s, _ := ParseSpec("M,Ad,M"); s.String() != "ETS(M,Ad,M)" {
		t.Errorf("String = %s", s)
	}
	for _, bad := range []string{"ETS(A,N,M)", "ETS(A,Ad,M)", "ETS(X,N,N)", "ETS(A,M,N)", "ETS(A,N)", ""} {
		if _, err := ParseSpec(bad); err == nil || !inputerr.Is(err) {
			t.Errorf("%q: want input error, got %v", bad, err)
		}
	}
	if n := len(AllSpecs()); n != 15 {
		t.Errorf("AllSpecs has %d forms, want 15 (18 minus the three (A,·,M))", n)
	}
}

// TestClassOneVariance checks the generic c_j recursion against the closed
// forms of HKOS Table 6.1 (from memory of the table):
// ETS(A,N,N): v_h = σ²(1 + (h−1)α²);
// ETS(A,A,N): v_h = σ²(1 + (h−1)(α² + αβh + β²h(2h−1)/6)).
func TestClassOneVariance(t *testing.T) {
	y := loadSeries(t, "austres")
	for _, text := range []string{"A,N,N", "A,A,N"} {
		sp, _ := ParseSpec(text)
		f, err := FitSpec(y, sp, 1)
		if err != nil {
			t.Fatal(err)
		}
		_, v := f.Forecast(12)
		a, b, s2 := f.par.Alpha, f.par.Beta, f.sigma2
		for i, got := range v {
			h := float64(i + 1)
			want := s2 * (1 + (h-1)*a*a)
			if sp.HasTrend() {
				want = s2 * (1 + (h-1)*(a*a+a*b*h+b*b*h*(2*h-1)/6))
			}
			if math.Abs(got-want) > 1e-9*want {
				t.Errorf("%s h=%d: v=%g want %g", sp, i+1, got, want)
			}
		}
	}
}

// TestClassTwoVarianceBySimulation checks the class-2 formula (HKOS eq.
// 6.2) for ETS(M,A,A) against a brute-force simulation of the model's own
// equations written independently here (common practice for checking a
// variance formula).
func TestClassTwoVarianceBySimulation(t *testing.T) {
	y := loadSeries(t, "USAccDeaths")
	sp, _ := ParseSpec("M,A,A")
	f, err := FitSpec(y, sp, 12)
	if err != nil {
		t.Fatal(err)
	}
	const h, paths = 14, 40000
	mean, v := f.Forecast(h)
	rng := rand.New(rand.NewPCG(1, 2))
	sum, sumSq := make([]float64, h), make([]float64, h)
	sd := math.Sqrt(f.sigma2)
	p := f.par
	for k := 0; k < paths; k++ {
		l, b := f.level, f.trend
		s := append([]float64(nil), f.season...)
		for i := 0; i < h; i++ {
			mu := l + b + s[i%12]
			e := sd * rng.NormFloat64()
			yv := mu * (1 + e)
			sum[i] += yv
			sumSq[i] += yv * yv
			// state-space form: ℓ' = ℓ+b+α·μ·ε, b' = b+β·μ·ε, s' = s+γ·μ·ε
			l, b, s[i%12] = l+b+p.Alpha*mu*e, b+p.Beta*mu*e, s[i%12]+p.Gamma*mu*e
		}
	}
	for i := 0; i < h; i++ {
		m := sum[i] / paths
		vs := sumSq[i]/paths - m*m
		if math.Abs(m-mean[i]) > 0.01*mean[i] {
			t.Errorf("h=%d: simulated mean %g, point forecast %g", i+1, m, mean[i])
		}
		if math.Abs(vs-v[i]) > 0.05*v[i] {
			t.Errorf("h=%d: simulated variance %g, formula %g", i+1, vs, v[i])
		}
	}
}

// TestSimulatedIntervals: for ETS(M,A,M) the simulated variance and
// quantile intervals are deterministic, positive and widen with h, and a
// 95% interval contains the point forecast.
func TestSimulatedIntervals(t *testing.T) {
	y := loadSeries(t, "AirPassengers")
	sp, _ := ParseSpec("M,A,M")
	f, err := FitSpec(y, sp, 12)
	if err != nil {
		t.Fatal(err)
	}
	mean, v := f.Forecast(24)
	_, v2 := f.Forecast(24)
	lo, hi := f.Interval(24, 0.95)
	for i := range mean {
		if v[i] != v2[i] {
			t.Fatal("simulated variance is not deterministic")
		}
		if !(v[i] > 0) || !(lo[i] < mean[i] && mean[i] < hi[i]) {
			t.Errorf("h=%d: v=%g interval [%g, %g] mean %g", i+1, v[i], lo[i], hi[i], mean[i])
		}
	}
	if hi[23]-lo[23] <= hi[0]-lo[0] {
		t.Error("interval does not widen with the horizon")
	}
}

// TestAutoChoosesSmallestAICc: Auto's choice has the smallest AICc among
// its admissible candidates, is deterministic, and on AirPassengers (whose
// seasonal swing grows with the level; Box & Jenkins 1970, Series G) has
// multiplicative seasonality.
func TestAutoChoosesSmallestAICc(t *testing.T) {
	y := loadSeries(t, "AirPassengers")
	f, cands, err := Auto(y, 12)
	if err != nil {
		t.Fatal(err)
	}
	for _, c := range cands {
		if c.AICc < f.crit.AICc {
			t.Errorf("%s has AICc %g below the chosen %s (%g)", c.Spec, c.AICc, f.spec, f.crit.AICc)
		}
	}
	if f.spec.Season != Mul {
		t.Errorf("chose %s for AirPassengers", f.spec)
	}
	g, _, _ := Auto(y, 12)
	if g.crit != f.crit || g.spec != f.spec {
		t.Error("Auto is not deterministic")
	}
	var fam models.Family = Family{}
	m, err := fam.Fit(y, models.FitOptions{Period: 12, Horizon: 12})
	if err != nil || m.Spec() != f.Spec() || m.Family() != "ets" {
		t.Errorf("Family.Fit: %v %v", m, err)
	}
}

func TestAutoRules(t *testing.T) {
	y := loadSeries(t, "USAccDeaths") // positive, 72 months
	specs, _ := Candidates(y, 12)
	if len(specs) != 15 {
		t.Errorf("positive monthly series: %d candidates, want 15", len(specs))
	}
	neg := append([]float64(nil), y...)
	neg[5] = 0
	specs, note := Candidates(neg, 12)
	for _, s := range specs {
		if s.Multiplicative() {
			t.Errorf("%s offered for data with a zero", s)
		}
	}
	if note == "" {
		t.Error("no note on dropped multiplicative forms")
	}
	specs, _ = Candidates(y[:20], 12) // less than two seasons
	for _, s := range specs {
		if s.Seasonal() {
			t.Errorf("%s offered with fewer than two seasons", s)
		}
	}
	specs, note = Candidates(append(y, y...), 52)
	for _, s := range specs {
		if s.Seasonal() {
			t.Errorf("%s offered for m = 52", s)
		}
	}
	if note == "" {
		t.Error("no note for m > 24")
	}
}

// TestOddInput: constant, tiny, zero-containing and huge-valued series give
// an error or a finite fit, never a panic or NaN.
func TestOddInput(t *testing.T) {
	cases := map[string][]float64{
		"constant": {5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5, 5},
		"zeros":    make([]float64, 30),
		"short":    {1, 2},
		"spike":    {0, 0, 0, 100, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0, 1, 0, 0, 0, 0, 0, 0, 0, 0, 0, 0},
		"huge":     {1e300, 2e300, 1e300, 3e300, 1e300, 2e300, 1e300, 3e300, 1e300, 2e300, 1e300, 3e300},
		"negative": {-3, -1, -4, -1, -5, -9, -2, -6, -5, -3, -5, -8, -9, -7, -9, -3},
	}
	for name, y := range cases {
		f, _, err := Auto(y, 4)
		if err != nil {
			continue
		}
		mean, v := f.Forecast(8)
		lo, hi := f.Interval(8, 0.9)
		for i := range mean {
			for _, x := range []float64{mean[i], v[i], lo[i], hi[i]} {
				if math.IsNaN(x) {
					t.Errorf("%s (%s): NaN in forecast", name, f.Spec())
				}
			}
		}
		for _, r := range f.Residuals() {
			if math.IsNaN(r) {
				t.Errorf("%s: NaN residual", name)
			}
		}
		c := f.Criteria()
		if math.IsNaN(c.AICc) || math.IsNaN(c.LogLik) {
			t.Errorf("%s: NaN criteria", name)
		}
	}
	if _, _, err := Auto([]float64{1, 2}, 1); err == nil || !inputerr.Is(err) {
		t.Errorf("two observations: want input error, got %v", err)
	}
	if _, err := FitSpec([]float64{1, 0, 2, 3, 4, 5, 6, 7}, Spec{Mul, None, None}, 1); !inputerr.Is(err) {
		t.Errorf("multiplicative on a zero: want input error, got %v", err)
	}
}

func TestResidualsOnDataScale(t *testing.T) {
	y := loadSeries(t, "ldeaths")
	sp, _ := ParseSpec("M,N,M")
	f, err := FitSpec(y, sp, 12)
	if err != nil {
		t.Fatal(err)
	}
	r, fit := f.Residuals(), f.FittedValues()
	if len(r) != len(y) || f.NObs() != len(y) {
		t.Fatalf("%d residuals for %d observations", len(r), len(y))
	}
	for i := range y {
		if math.Abs(r[i]-(y[i]-fit[i])) > 1e-9*math.Abs(y[i]) {
			t.Fatalf("residual %d = %g, y − ŷ = %g", i, r[i], y[i]-fit[i])
		}
	}
}

// TestAdmissible: inside the usual bounds the seasonal forms are
// forecastable; far outside (α = 1.9, γ = 0.9, m = 4, where the discount
// matrix has eigenvalues −1.15 ± 0.59i, modulus 1.29, computed with gonum)
// they are not, and the structural unit eigenvalue is not held against them.
func TestAdmissible(t *testing.T) {
	sp := Spec{Add, Add, Add}
	if !admissible(sp, 4, &Params{Alpha: 0.3, Beta: 0.05, Gamma: 0.2}) {
		t.Error("usual-region parameters judged inadmissible")
	}
	if admissible(sp, 4, &Params{Alpha: 1.9, Beta: 0.05, Gamma: 0.9}) {
		t.Error("α = 1.9, γ = 0.9 judged admissible")
	}
	if !admissible(Spec{Add, None, None}, 1, &Params{Alpha: 1.5}) {
		t.Error("non-seasonal forms are not checked")
	}
}
