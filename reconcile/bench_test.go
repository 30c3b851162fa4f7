package reconcile

import (
	"fmt"
	"testing"
	"time"

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

// BenchmarkMinTRetailLocked times the large-n path on the full bench
// structure (39,442 nodes) without and with locks, alternating within
// each iteration so that both meet the same machine load: at every one
// of the 28 steps the total (5% above its base forecast), one state, one
// category and twenty items (at zero, as closures), 23 locks a step. It
// reports the wall seconds of each, their ratio (the target: locked
// within 1.5× of unlocked) and the ratio of CPU time, the steadier figure
// on a machine shared with other work. The nonnegative case pushes one bottom base forecast
// in fifty below zero, so that every step is solved by the non-negative
// programme (and, with locks, again without them for the report's
// comparison). Run with
// go test -bench MinTRetailLocked -run '^$' -benchtime 3x ./reconcile
func BenchmarkMinTRetailLocked(b *testing.B) {
	st := retail(b, 2, 5, 3, 10, 100)
	p := problemFor(st, 60, 28, 1)
	var locks []Lock
	state, _ := st.Lookup([]string{"S0", "", "", "", ""})
	cat, _ := st.Lookup([]string{"", "", "C1", "", ""})
	for k := 0; k < 28; k++ {
		locks = append(locks, Lock{Node: 0, Step: k, Value: 1.05 * p.Base[0][k]},
			Lock{Node: state, Step: k, Value: p.Base[state][k]}, Lock{Node: cat, Step: k, Value: p.Base[cat][k]})
		for q := 0; q < 20; q++ {
			item, _ := st.Lookup([]string{"S1", "S1T2", "C2", "C2D3", fmt.Sprintf("C2D3I%d", q)})
			locks = append(locks, Lock{Node: item, Step: k})
		}
	}
	neg := p
	neg.Base = make([][]float64, len(p.Base))
	off := st.BottomOffset()
	for i, row := range p.Base {
		neg.Base[i] = append([]float64(nil), row...)
		if i >= off && (i-off)%50 == 0 {
			for k := range neg.Base[i] {
				neg.Base[i][k] = -20
			}
		}
	}
	neg.Nonnegative = true
	for _, c := range []struct {
		name string
		p    Problem
	}{{"signed", p}, {"nonnegative", neg}} {
		b.Run(c.name, func(b *testing.B) {
			var wall, cpu [2]time.Duration // unlocked, locked
			for b.Loop() {
				for r, ls := range [][]Lock{nil, locks} {
					q := c.p
					q.Locks = ls
					start, c0 := time.Now(), cpuTime()
					if _, err := (Projection{Cov: CovShrink}).Reconcile(q); err != nil {
						b.Fatal(err)
					}
					wall[r] += time.Since(start)
					cpu[r] += cpuTime() - c0
				}
			}
			b.ReportMetric(wall[0].Seconds()/float64(b.N), "unlocked-s")
			b.ReportMetric(wall[1].Seconds()/float64(b.N), "locked-s")
			b.ReportMetric(wall[1].Seconds()/wall[0].Seconds(), "ratio")
			if cpu[0] > 0 {
				b.ReportMetric(cpu[1].Seconds()/cpu[0].Seconds(), "cpu-ratio")
			}
		})
	}
}

// BenchmarkMinTNodeGrowth times the variances with every node's growth
// (one factor of G per step) against the bottom series' growth (one
// factor for all steps) on a structure just under exactGrowthMaxWork at
// T = 60, h = 28, alternating within each iteration. Run with
// go test -bench MinTNodeGrowth -run '^$' -benchtime 2x ./reconcile
func BenchmarkMinTNodeGrowth(b *testing.B) {
	st := retail(b, 2, 5, 3, 10, 11)
	if n := len(st.Nodes); !nodeGrowth(n, 28, 60) {
		b.Fatalf("%d nodes, over the limit", n)
	}
	p := problemFor(st, 60, 28, 1)
	var wall [2]time.Duration // every node's growth, bottom growth
	for b.Loop() {
		for r, limit := range []int{exactGrowthMaxWork, 0} {
			old := exactGrowthMaxWork
			exactGrowthMaxWork = limit
			start := time.Now()
			_, err := Projection{Cov: CovShrink}.Reconcile(p)
			wall[r] += time.Since(start)
			exactGrowthMaxWork = old
			if err != nil {
				b.Fatal(err)
			}
		}
	}
	b.ReportMetric(float64(len(st.Nodes)), "nodes")
	b.ReportMetric(wall[0].Seconds()/float64(b.N), "node-growth-s")
	b.ReportMetric(wall[1].Seconds()/float64(b.N), "bottom-growth-s")
}
