package reconcile

import (
	"fmt"
	"math"
	"math/rand/v2"
	"testing"

	"trueup/hierarchy"
)

// The data in these tests are invented (seeded draws); the checks compare
// against formulas stated beside each test, not against stored outputs.

// grouped builds region→store crossed with category: regions × stores per
// region × categories bottom series.
func grouped(t testing.TB, regions, stores, cats int) *hierarchy.Structure {
	t.Helper()
	var keys [][]string
	for r := 0; r < regions; r++ {
		for s := 0; s < stores; s++ {
			for c := 0; c < cats; c++ {
				keys = append(keys, []string{fmt.Sprintf("R%d", r), fmt.Sprintf("R%dS%d", r, s), fmt.Sprintf("C%d", c)})
			}
		}
	}
	st, err := hierarchy.Build([]hierarchy.Chain{{"region", "store"}, {"category"}}, keys)
	if err != nil {
		t.Fatal(err)
	}
	return st
}

// tree builds a single chain region→store→item.
func tree(t testing.TB, regions, stores, items int) *hierarchy.Structure {
	t.Helper()
	var keys [][]string
	for r := 0; r < regions; r++ {
		for s := 0; s < stores; s++ {
			for i := 0; i < items; i++ {
				keys = append(keys, []string{fmt.Sprintf("R%d", r), fmt.Sprintf("R%dS%d", r, s), fmt.Sprintf("R%dS%dI%d", r, s, i)})
			}
		}
	}
	st, err := hierarchy.Build([]hierarchy.Chain{{"region", "store", "item"}}, keys)
	if err != nil {
		t.Fatal(err)
	}
	return st
}

// problemFor fills a problem with seeded bottom histories that share a
// common factor, their aggregates, residuals with a common factor, base
// forecasts that are incoherent and base variances growing with h.
func problemFor(st *hierarchy.Structure, T, h int, seed uint64) Problem {
	rng := rand.New(rand.NewPCG(seed, 1))
	n := len(st.Nodes)
	m := st.NumBottom()
	bottom := make([][]float64, m)
	common := make([]float64, T)
	for t := range common {
		common[t] = rng.NormFloat64()
	}
	for j := range bottom {
		bottom[j] = make([]float64, T)
		level := 10 + 5*rng.Float64()
		for t := range bottom[j] {
			bottom[j][t] = level + common[t] + rng.NormFloat64()
		}
	}
	hist := st.S.Aggregate(bottom)
	res := make([][]float64, n)
	for i := range res {
		res[i] = make([]float64, T)
		sd := math.Sqrt(float64(len(st.S.Row(i))))
		load := rng.Float64()
		for t := range res[i] {
			res[i][t] = sd * (load*common[t] + rng.NormFloat64())
		}
	}
	base := make([][]float64, n)
	bv := make([][]float64, n)
	for i := range base {
		base[i] = make([]float64, h)
		bv[i] = make([]float64, h)
		var d float64
		for _, e := range res[i] {
			d += e * e
		}
		d /= float64(T)
		for k := range base[i] {
			base[i][k] = hist[i][T-1] + rng.NormFloat64()*math.Sqrt(d)
			bv[i][k] = d * (1 + 0.3*float64(k)*rng.Float64())
		}
	}
	return Problem{Structure: st, Base: base, BaseVar: bv, Residuals: res, History: hist}
}

func relDiff(a, b float64) float64 {
	return math.Abs(a-b) / math.Max(1, math.Max(math.Abs(a), math.Abs(b)))
}

// checkCoherent fails unless every node equals the sum of its bottom series.
func checkCoherent(t *testing.T, st *hierarchy.Structure, sol Solution) {
	t.Helper()
	checkCoherentWithin(t, st, sol, 1e-12)
}

// checkCoherentWithin is checkCoherent to relative difference tol.
func checkCoherentWithin(t *testing.T, st *hierarchy.Structure, sol Solution, tol float64) {
	t.Helper()
	for i := range st.Nodes {
		for k := range sol.Forecast[i] {
			var s float64
			for _, j := range st.S.Row(i) {
				s += sol.Bottom[j][k]
			}
			if relDiff(s, sol.Forecast[i][k]) > tol {
				t.Fatalf("%s step %d: %g is not the sum of its parts %g", st.Label(i), k+1, sol.Forecast[i][k], s)
			}
		}
	}
}

// at returns W_ij of the diagonal-plus-low-rank covariance.
func (c *errCov) at(i, j int) float64 {
	var s float64
	if i == j {
		s = c.Delta[i]
	}
	if c.U != nil {
		T := c.T
		for t := 0; t < T; t++ {
			s += c.U[i*T+t] * c.U[j*T+t]
		}
	}
	return s
}
