package reconcile

import (
	"fmt"
	"testing"

	"trueup/hierarchy"
)

// retail builds state→store crossed with category→department→item, the
// shape of the bench/reconcile structure.
func retail(tb testing.TB, states, storesPer, cats, deptsPer, itemsPer int) *hierarchy.Structure {
	tb.Helper()
	var keys [][]string
	for s := 0; s < states; s++ {
		for st := 0; st < storesPer; st++ {
			for c := 0; c < cats; c++ {
				for d := 0; d < deptsPer; d++ {
					for i := 0; i < itemsPer; i++ {
						keys = append(keys, []string{
							fmt.Sprintf("S%d", s), fmt.Sprintf("S%dT%d", s, st),
							fmt.Sprintf("C%d", c), fmt.Sprintf("C%dD%d", c, d), fmt.Sprintf("C%dD%dI%d", c, d, i)})
					}
				}
			}
		}
	}
	st, err := hierarchy.Build([]hierarchy.Chain{{"state", "store"}, {"category", "department", "item"}}, keys)
	if err != nil {
		tb.Fatal(err)
	}
	return st
}

// BenchmarkMinT compares the dense and large-n paths of MinT(Shrink) on
// about 2,000 nodes (T = 60, h = 28), variances included. Run with
// go test -bench MinT -run '^$' ./reconcile
func BenchmarkMinT(b *testing.B) {
	st := retail(b, 2, 3, 2, 4, 26) // 1,971 nodes, 1,248 bottom
	p := problemFor(st, 60, 28, 1)
	for _, s := range []struct {
		name   string
		solver Solver
	}{{"dense", SolverDense}, {"large", SolverLarge}} {
		b.Run(fmt.Sprintf("%s/n=%d", s.name, len(st.Nodes)), func(b *testing.B) {
			p.Solver = s.solver
			for b.Loop() {
				if _, err := (Projection{Cov: CovShrink}).Reconcile(p); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}

// BenchmarkMinTRetail times the large-n path on the full bench structure
// (39,442 nodes). Run with go test -bench MinTRetail -run '^$' ./reconcile
func BenchmarkMinTRetail(b *testing.B) {
	st := retail(b, 2, 5, 3, 10, 100)
	p := problemFor(st, 60, 28, 1)
	for b.Loop() {
		sol, err := Projection{Cov: CovShrink}.Reconcile(p)
		if err != nil {
			b.Fatal(err)
		}
		b.ReportMetric(sol.Notes["cg_iterations"], "cg-iters")
		b.ReportMetric(sol.Notes["shrinkage"], "lambda")
	}
}
