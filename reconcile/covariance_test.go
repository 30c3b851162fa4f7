package reconcile

import (
	"math"
	"strings"
	"testing"

	"trueup/inputerr"
)

// directLambda is the Schäfer & Strimmer (2005) shrinkage intensity for
// target D written as the published double sum over pairs, O(n²T):
// Var̂(r_ij) = T/(T−1)³ Σ_t (w_tij − w̄_ij)², λ = Σ_{i≠j} Var̂(r_ij) /
// Σ_{i≠j} r_ij², clipped to [0, 1] (their eq. 8 with Appendix A).
func directLambda(res [][]float64) float64 {
	n, T := len(res), len(res[0])
	x := make([][]float64, n)
	for i, r := range res {
		var d float64
		for _, e := range r {
			d += e * e
		}
		d /= float64(T)
		x[i] = make([]float64, T)
		for t, e := range r {
			x[i][t] = e / math.Sqrt(d)
		}
	}
	Tf := float64(T)
	var num, den float64
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			if i == j {
				continue
			}
			var mean float64
			for t := 0; t < T; t++ {
				mean += x[i][t] * x[j][t]
			}
			mean /= Tf
			var ss float64
			for t := 0; t < T; t++ {
				d := x[i][t]*x[j][t] - mean
				ss += d * d
			}
			num += Tf / math.Pow(Tf-1, 3) * ss
			den += mean * mean
		}
	}
	return math.Min(1, math.Max(0, num/den))
}

func TestLambdaMatchesDirectFormula(t *testing.T) {
	for _, tc := range []struct{ regions, stores, cats, T int }{{2, 2, 3, 12}, {3, 4, 5, 40}, {2, 3, 2, 200}} {
		st := grouped(t, tc.regions, tc.stores, tc.cats)
		p := problemFor(st, tc.T, 1, uint64(tc.T))
		w, err := p.errorCov()
		if err != nil {
			t.Fatal(err)
		}
		want := directLambda(p.Residuals)
		if math.Abs(w.lambda-want) > 1e-12 || want <= 0 || want >= 1 {
			t.Errorf("n=%d T=%d: λ = %.15g, direct O(n²T) formula %.15g (want strictly inside (0,1))", len(st.Nodes), tc.T, w.lambda, want)
		}
	}
}

// TestShrinkageCovariance checks W = λD + (1−λ)W1 entry by entry against
// the uncentred sample covariance computed directly.
func TestShrinkageCovariance(t *testing.T) {
	st := grouped(t, 2, 2, 3)
	p := problemFor(st, 20, 1, 7)
	w, err := p.errorCov()
	if err != nil {
		t.Fatal(err)
	}
	n, T := len(p.Residuals), 20
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			var w1 float64
			for k := 0; k < T; k++ {
				w1 += p.Residuals[i][k] * p.Residuals[j][k]
			}
			w1 /= float64(T)
			want := (1 - w.lambda) * w1
			if i == j {
				want = w1
			}
			if relDiff(w.at(i, j), want) > 1e-12 {
				t.Fatalf("W[%d][%d] = %g, want %g", i, j, w.at(i, j), want)
			}
		}
	}
}

// TestMissingResiduals checks the documented rule for nodes that started
// late: own variance over observed periods, missing residuals count as
// zero in cross moments divided by T, so W keeps D on its diagonal, is
// positive semi-definite, and equals the no-missing W when nothing is
// missing.
func TestMissingResiduals(t *testing.T) {
	st := grouped(t, 2, 2, 2)
	p := problemFor(st, 30, 1, 3)
	late := st.BottomOffset() + 1
	for k := 0; k < 18; k++ {
		p.Residuals[late][k] = math.NaN()
	}
	w, err := newErrCov(p.Residuals, 0.25, st.Label)
	if err != nil {
		t.Fatal(err)
	}
	var d float64
	for _, e := range p.Residuals[late][18:] {
		d += e * e
	}
	d /= 12
	if relDiff(w.D[late], d) > 1e-12 || relDiff(w.at(late, late), d) > 1e-12 {
		t.Errorf("late node variance %g (diagonal of W %g), want mean square of its 12 residuals %g", w.D[late], w.at(late, late), d)
	}
	other := late + 1
	var cross float64
	for k := 18; k < 30; k++ {
		cross += p.Residuals[late][k] * p.Residuals[other][k]
	}
	// r_ij = (1/T) Σ_t x_ti x_tj with x = 0 where missing; W_ij = (1−λ) r_ij √(D_i D_j).
	want := 0.75 * cross / 30 / math.Sqrt(w.D[late]*w.D[other]) * math.Sqrt(w.D[late]*w.D[other])
	if relDiff(w.at(late, other), want) > 1e-12 {
		t.Errorf("W[late][other] = %g, want %g", w.at(late, other), want)
	}
	// Positive semi-definite: every 2×2 principal minor and the dense
	// Cholesky of W succeed.
	if _, err := newDenseProjector(st, w); err != nil {
		t.Errorf("W with missing residuals not positive definite: %v", err)
	}
}

// TestDegenerateResiduals: a node with no residual at all or with all
// residuals zero gets the variance floor, not an error or a NaN, and the
// projection pins it to its base forecast.
func TestDegenerateResiduals(t *testing.T) {
	st := grouped(t, 1, 2, 2)
	for _, fill := range []float64{math.NaN(), 0} {
		p := problemFor(st, 10, 1, 3)
		j := st.BottomOffset()
		for k := range p.Residuals[j] {
			p.Residuals[j][k] = fill
		}
		p.Base[j][0] = 0
		w, err := p.errorCov()
		if err != nil || !(w.D[j] > 0) || math.IsNaN(w.lambda) {
			t.Fatalf("residuals all %v: D=%g λ=%g err=%v", fill, w.D[j], w.lambda, err)
		}
		for _, solver := range []Solver{SolverDense, SolverLarge} {
			p.Solver = solver
			sol, err := Projection{Cov: CovShrink}.Reconcile(p)
			if err != nil {
				t.Fatal(err)
			}
			if math.Abs(sol.Forecast[j][0]) > 1e-6 || math.IsNaN(sol.Variance[j][0]) {
				t.Errorf("residuals all %v, solver %d: forecast %g variance %g, want the base 0", fill, solver, sol.Forecast[j][0], sol.Variance[j][0])
			}
		}
	}
	p := problemFor(st, 10, 1, 3)
	p.Residuals[1][4] = math.Inf(1)
	if _, err := p.errorCov(); err == nil {
		t.Error("infinite residual accepted")
	}
	// A finite residual whose square overflows is refused up front, naming
	// the node, instead of failing deep inside the solver.
	p = problemFor(st, 10, 1, 3)
	p.Residuals[1][4] = -math.MaxFloat64
	if _, err := (Projection{Cov: CovShrink}).Reconcile(p); err == nil || !inputerr.Is(err) || !strings.Contains(err.Error(), st.Label(1)) {
		t.Errorf("huge residual: got %v, want an input error naming %s", err, st.Label(1))
	}
}
