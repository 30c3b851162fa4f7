package transform

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
	"trueup/fixtures/reference"

	"trueup/models"
	"trueup/models/arima"
	"trueup/models/ets"
)

// airPassengers reads R's datasets::AirPassengers (R 4.2.2), committed
// with provenance under fixtures/reference/ets.
func airPassengers(t *testing.T) []float64 {
	t.Helper()
	y, err := reference.Series("ets/data/AirPassengers.csv")
	if err != nil {
		t.Fatal(err)
	}
	return y
}

func TestRoundTrip(t *testing.T) {
	y := []float64{0.5, 1, 3, 10, 250}
	for _, tr := range []Transform{{Identity: true}, {Lambda: 0}, {Lambda: 0.3}, {Lambda: -0.7}, {Lambda: 1.5}} {
		z := tr.Apply(make([]float64, len(y)), y)
		for i := range y {
			if back := tr.Inverse(z[i]); math.Abs(back-y[i]) > 1e-9*y[i] {
				t.Errorf("%v: %g → %g → %g", tr, y[i], z[i], back)
			}
		}
	}
	if v := (Transform{Lambda: 0.5}).Inverse(-5); v != 0 {
		t.Errorf("below the domain: %g, want 0", v)
	}
	if v := (Transform{Lambda: -0.5}).Inverse(5); v != math.MaxFloat64 {
		t.Errorf("above the domain: %g, want MaxFloat64", v)
	}
}

// TestGuerrero: the chosen λ minimises Guerrero's coefficient of variation
// (checked by a brute-force grid of step 0.0005 written here), and on
// AirPassengers it is about −0.29, the value commonly quoted for this
// series with blocks of one year (recalled from memory of textbook
// examples; tolerance 0.02).
func TestGuerrero(t *testing.T) {
	y := airPassengers(t)
	l, ok := Guerrero(y, 12, LambdaMin, LambdaMax)
	if !ok {
		t.Fatal("no lambda")
	}
	cv := func(lambda float64) float64 {
		var r []float64
		for end := len(y); end >= 12; end -= 12 {
			b := y[end-12 : end]
			mu, ss := 0.0, 0.0
			for _, v := range b {
				mu += v / 12
			}
			for _, v := range b {
				ss += (v - mu) * (v - mu)
			}
			r = append(r, math.Sqrt(ss/11)/math.Pow(mu, 1-lambda))
		}
		mu, ss := 0.0, 0.0
		for _, v := range r {
			mu += v / float64(len(r))
		}
		for _, v := range r {
			ss += (v - mu) * (v - mu)
		}
		return math.Sqrt(ss/float64(len(r)-1)) / mu
	}
	best := LambdaMin
	for g := LambdaMin; g <= LambdaMax; g += 0.0005 {
		if cv(g) < cv(best) {
			best = g
		}
	}
	if math.Abs(l-best) > 0.001 {
		t.Errorf("lambda %g, grid minimum %g", l, best)
	}
	if math.Abs(l+0.29) > 0.02 {
		t.Errorf("AirPassengers lambda %g, want about −0.29", l)
	}
	if _, ok := Guerrero(y[:13], 12, LambdaMin, LambdaMax); ok {
		t.Error("one block should not give a lambda")
	}
}

func TestZeroAndSignRules(t *testing.T) {
	zeros := []float64{0, 3, 5, 2, 0, 4, 6, 3, 1, 5, 7, 4, 0, 6, 8, 5}
	tr, note := Choose(Log, zeros, 4)
	if tr.Identity || tr.Lambda < ZeroLambdaMin || note == "" {
		t.Errorf("log with zeros: %v %q", tr, note)
	}
	tr, _ = Choose(BoxCox, zeros, 4)
	if tr.Identity || tr.Lambda < ZeroLambdaMin {
		t.Errorf("Box-Cox with zeros: %v", tr)
	}
	neg := append([]float64{-1}, zeros...)
	if tr, note := Choose(BoxCox, neg, 4); !tr.Identity || note == "" {
		t.Errorf("negative data: %v %q", tr, note)
	}
	if tr, note := Choose(Log, []float64{1, 2, 3}, 1); tr.Identity || tr.Lambda != 0 || note != "" {
		t.Errorf("log of positive data: %v %q", tr, note)
	}
	if _, err := ParseKind("sqrt"); err == nil {
		t.Error("ParseKind accepted sqrt")
	}
}

// TestBiasAdjustment compares the back-transformed means with a Monte Carlo
// average of f⁻¹(Z), Z ~ N(μ, v) (an independent check by simulation).
func TestBiasAdjustment(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for _, lambda := range []float64{0, 0.4} {
		f := &Fitted{tr: Transform{Lambda: lambda}, bias: true}
		mu, v := 5.0, 0.04
		if lambda != 0 {
			mu = 15
			v = 0.5
		}
		mean, variance := f.moments(mu, v)
		var s, ss float64
		const n = 400000
		for i := 0; i < n; i++ {
			x := f.tr.Inverse(mu + math.Sqrt(v)*rng.NormFloat64())
			s += x
			ss += x * x
		}
		mc := s / n
		mcv := ss/n - mc*mc
		if math.Abs(mean-mc) > 0.002*mc {
			t.Errorf("lambda %g: adjusted mean %g, simulated %g", lambda, mean, mc)
		}
		if math.Abs(variance-mcv) > 0.05*mcv {
			t.Errorf("lambda %g: variance %g, simulated %g", lambda, variance, mcv)
		}
		f.bias = false
		if med, _ := f.moments(mu, v); med != f.tr.Inverse(mu) {
			t.Errorf("median %g", med)
		}
	}
}

func TestWrappedETS(t *testing.T) {
	y := airPassengers(t)
	fam := Family{Inner: ets.Family{}, Opt: Options{Kind: BoxCox}}
	m, err := fam.Fit(y, models.FitOptions{Period: 12, Horizon: 24})
	if err != nil {
		t.Fatal(err)
	}
	if m.Family() != "ets" || !strings.Contains(m.Spec(), "Box-Cox") {
		t.Errorf("family %s spec %s", m.Family(), m.Spec())
	}
	if p := m.Params()["transform"].(map[string]any); p["kind"] != "boxcox" || !(p["lambda"].(float64) <= 0) {
		t.Errorf("transform %v", p)
	}
	mean, v := m.Forecast(24)
	lo, hi := m.(Interval).Interval(24, 0.95)
	for i := range mean {
		if !(lo[i] < mean[i] && mean[i] < hi[i]) || !(v[i] > 0) {
			t.Errorf("h=%d: [%g, %g] mean %g var %g", i+1, lo[i], hi[i], mean[i], v[i])
		}
	}
	inner := m.(*Fitted).Inner().(*ets.Fitted)
	zhat := inner.FittedValues()
	r := m.Residuals()
	tr := m.(*Fitted).Transform()
	for i := range y {
		if want := y[i] - tr.Inverse(zhat[i]); math.Abs(r[i]-want) > 1e-8*y[i] {
			t.Fatalf("residual %d: %g want %g", i, r[i], want)
		}
	}
}

// With λ = −1 the inverse y = 1/(1 − z) exists only for z < 1: a one-step
// prediction at or beyond 1 has no data-scale value, so its residual is NaN
// rather than a sentinel (Box & Cox 1964: the transform maps (0, ∞) onto
// (−∞, 1/|λ|) for λ < 0).
func TestInvertibleDomain(t *testing.T) {
	tr := Transform{Lambda: -1}
	for _, c := range []struct {
		z    float64
		want bool
	}{{0.5, true}, {0.999, true}, {1, false}, {3, false}, {math.NaN(), false}} {
		if got := tr.invertible(c.z); got != c.want {
			t.Errorf("λ=−1, z=%v: invertible %v, want %v", c.z, got, c.want)
		}
	}
	if (Transform{Lambda: 0}).invertible(800) {
		t.Error("log: e^800 overflows but was called invertible")
	}
	if !(Transform{Identity: true}).invertible(1e300) {
		t.Error("identity must invert every finite value")
	}
}

// TestClearOfPole checks the pole of the Box–Cox back-transform with
// λ < 0: y = (λz + 1)^{1/λ} is finite only for z < −1/λ (Box & Cox 1964;
// a fact of the formula). ARIMA(0,2,0) on the reciprocal scale (λ = −1,
// pole at z = 1) of a series whose transformed values rise in a straight
// line extrapolates that line, with a forecast variance that grows with
// the cube of the step; small wiggles keep its tail clear of the pole
// over a year, larger ones carry it across within the year.
func TestClearOfPole(t *testing.T) {
	line := func(wiggle float64) []float64 {
		y := make([]float64, 60)
		for i := range y {
			z := 0.5 + 0.004*float64(i) + wiggle*math.Sin(1.3*float64(i))
			y[i] = 1 / (1 - z) // the inverse of z = (y^−1 − 1)/−1
		}
		return y
	}
	fit := func(y []float64, tr Transform) *Fitted {
		t.Helper()
		mod, err := FitWith(arima.Fixed{Spec: arima.Spec{D: 2}}, tr, "", false, y, models.FitOptions{Horizon: 12})
		if err != nil {
			t.Fatal(err)
		}
		return mod.(*Fitted)
	}
	reciprocal := Transform{Lambda: -1}
	for _, c := range []struct {
		wiggle float64
		h      int
		clear  bool
	}{{0.0002, 12, true}, {0.005, 1, true}, {0.005, 12, false}} {
		f := fit(line(c.wiggle), reciprocal)
		if got := f.ClearOfPole(c.h); got != c.clear {
			mu, v := f.inner.Forecast(c.h)
			t.Errorf("wiggle %g, %d steps: clear = %v, want %v (last step z = %.3f ± 4·%.3f, pole at 1)", c.wiggle, c.h, got, c.clear, mu[c.h-1], math.Sqrt(v[c.h-1]))
		}
	}
	// The log and a positive λ have no pole above: always clear.
	for _, tr := range []Transform{{Lambda: 0}, {Lambda: 0.5}} {
		if f := fit(line(0.005), tr); !f.ClearOfPole(12) {
			t.Errorf("%v: not clear of a pole it does not have", tr)
		}
	}
}
