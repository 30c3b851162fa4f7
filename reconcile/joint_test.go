package reconcile

import (
	"math"
	"math/rand/v2"
	"strings"
	"testing"
)

// TestJointMatchesVariance: the diagonal of every method's joint
// distribution, computed from its factor, is the method's variance
// (Solution.Variance, itself checked against the direct formulas in
// TestProjectionVarianceExact and TestSplitVariance), on the dense and
// the large path, with every node's growth or the bottom series' (above
// exactGrowthMaxWork), and with residuals that start late.
func TestJointMatchesVariance(t *testing.T) {
	st := grouped(t, 2, 2, 3)
	p := problemFor(st, 30, 3, 13)
	lateStarts(&p, 4, 2)
	p.Joint = true
	methods := []struct {
		name   string
		method Method
		solver Solver
	}{
		{"mint-shrink dense", Projection{Cov: CovShrink}, SolverDense},
		{"mint-shrink large", Projection{Cov: CovShrink}, SolverLarge},
		{"mint-shrink large, bottom growth", Projection{Cov: CovShrink}, SolverLarge},
		{"mint-variance", Projection{Cov: CovVariance}, SolverDense},
		{"bottom-up", BottomUp{}, SolverAuto},
		{"top-down", TopDown{Proportions: ProportionsOfAverages}, SolverAuto},
		{"middle-out", MiddleOut{Level: "region+store"}, SolverAuto},
	}
	for _, c := range methods {
		q := p
		q.Solver = c.solver
		if strings.HasSuffix(c.name, "bottom growth") {
			bottomGrowthOnly(t)
		}
		sol, err := c.method.Reconcile(q)
		if err != nil {
			t.Fatalf("%s: %v", c.name, err)
		}
		if sol.Joint == nil {
			t.Fatalf("%s: no joint distribution", c.name)
		}
		for k := 0; k < 3; k++ {
			v := sol.Joint.variance(k)
			for i := range st.Nodes {
				if relDiff(v[i], sol.Variance[i][k]) > 1e-9 {
					t.Fatalf("%s: %s step %d: joint variance %g, Variance %g", c.name, st.Label(i), k+1, v[i], sol.Variance[i][k])
				}
			}
		}
	}
	base, err := BaseJoint(p)
	if err != nil {
		t.Fatal(err)
	}
	for k := 0; k < 3; k++ {
		v := base.variance(k)
		for i := range st.Nodes {
			if relDiff(v[i], p.BaseVar[i][k]) > 1e-9 {
				t.Fatalf("base: %s step %d: joint variance %g, BaseVar %g", st.Label(i), k+1, v[i], p.BaseVar[i][k])
			}
		}
	}
}

// TestJointDraws: draws are coherent (every aggregate's error is the sum
// of its bottom series') and their sample variance approaches the
// variance (20,000 seeded draws: within 5% at every node, about five
// standard errors of a sample variance, √(2/20000) ≈ 1%).
func TestJointDraws(t *testing.T) {
	st := grouped(t, 2, 2, 2)
	p := problemFor(st, 24, 2, 5)
	lateStarts(&p, 3, 4)
	p.Joint = true
	sol, err := Projection{Cov: CovShrink}.Reconcile(p)
	if err != nil {
		t.Fatal(err)
	}
	n := len(st.Nodes)
	rng := rand.New(rand.NewPCG(1, 2))
	x := make([]float64, n)
	ss := make([]float64, n)
	const N = 20000
	for s := 0; s < N; s++ {
		sol.Joint.Draw(x, 1, rng)
		for i := range st.Nodes {
			var sum float64
			for _, j := range st.S.Row(i) {
				sum += x[st.BottomOffset()+j]
			}
			if relDiff(sum, x[i]) > 1e-9 {
				t.Fatalf("draw %d: %s is %g, its bottom series add to %g", s, st.Label(i), x[i], sum)
			}
			ss[i] += x[i] * x[i]
		}
	}
	for i := range st.Nodes {
		if v := ss[i] / N; math.Abs(v/sol.Variance[i][1]-1) > 0.05 {
			t.Errorf("%s: sample variance %g, variance %g", st.Label(i), v, sol.Variance[i][1])
		}
	}
}
