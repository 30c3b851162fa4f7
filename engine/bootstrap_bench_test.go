package engine

import (
	"fmt"
	"math/rand/v2"
	"runtime"
	"testing"
	"time"

	"trueup/hierarchy"
	"trueup/models"
	"trueup/reconcile"
)

// BenchmarkBootstrapRetail times bootstrap intervals (1,000 draws,
// h = 28, T = 60) on the 39,442-node structure of bench/reconcile (state
// → store crossed with category → department → item, 30,000 bottom
// series), reconciled by MinT with the shrinkage covariance, against the
// point reconcile with its Gaussian variances. Every node's model is an
// ARIMA(0,1,1) path form (ψ_j = 0.5) on invented residuals, aggregated
// through S so that the covariance has the structure's correlations.
// Reports the peak heap in use. Run with
//
//	go test -bench BootstrapRetail -run '^$' -benchtime 1x ./engine
func BenchmarkBootstrapRetail(b *testing.B) {
	const T, h, draws = 60, 28, DefaultDraws
	var keys [][]string
	for s := 0; s < 2; s++ {
		for st := 0; st < 5; st++ {
			for c := 0; c < 3; c++ {
				for d := 0; d < 10; d++ {
					for i := 0; i < 100; i++ {
						keys = append(keys, []string{fmt.Sprintf("S%d", s), fmt.Sprintf("S%dT%d", s, st),
							fmt.Sprintf("C%d", c), fmt.Sprintf("C%dD%d", c, d), fmt.Sprintf("C%dD%dI%d", c, d, i)})
					}
				}
			}
		}
	}
	st, err := hierarchy.Build([]hierarchy.Chain{{"state", "store"}, {"category", "department", "item"}}, keys)
	if err != nil {
		b.Fatal(err)
	}
	n, m := len(st.Nodes), st.NumBottom()
	rng := rand.New(rand.NewPCG(1, 2))
	resid, base := make([][]float64, n), make([][]float64, n)
	for i := range resid {
		resid[i], base[i] = make([]float64, T), make([]float64, h)
	}
	bottom, all := make([]float64, m), make([]float64, n)
	common := make([]float64, T)
	for t := range common {
		common[t] = rng.NormFloat64()
	}
	for t := 0; t < T; t++ {
		for j := range bottom {
			bottom[j] = 3*rng.NormFloat64() + common[t]
		}
		st.S.MulVec(all, bottom)
		for i := range all {
			resid[i][t] = all[i]
		}
	}
	for k := 0; k < h; k++ {
		for j := range bottom {
			bottom[j] = 50 + 10*rng.Float64()
		}
		st.S.MulVec(all, bottom)
		for i := range all {
			base[i][k] = all[i]
		}
	}
	fits := make([]NodeFit, n)
	variance := make([][]float64, n)
	for i := range fits {
		psi := make([]float64, h)
		for j := range psi {
			psi[j] = 0.5
		}
		psi[0] = 1
		var s2 float64
		for _, v := range resid[i] {
			s2 += v * v / T
		}
		variance[i] = make([]float64, h)
		for k := range variance[i] {
			variance[i][k] = s2 * (1 + 0.25*float64(k))
		}
		fits[i] = NodeFit{Fitted: true, First: 0, Last: T - 1, Mean: base[i], Variance: variance[i], Residuals: resid[i],
			Path: &models.PathForm{Mean: base[i], Psi: psi, Innovations: resid[i]}}
	}
	prob := reconcile.Problem{Structure: st, Base: base, BaseVar: variance, Residuals: resid}
	method := reconcile.Projection{Cov: reconcile.CovShrink}
	toFull := make([]int, n)
	for i := range toFull {
		toFull[i] = i
	}
	trading := &openPart{st: st, toFull: toFull}
	budget, err := memoryBudget()
	if err != nil {
		b.Fatal(err)
	}
	for b.Loop() {
		start := time.Now()
		sol, err := method.Reconcile(prob)
		if err != nil {
			b.Fatal(err)
		}
		point := time.Since(start)
		runtime.GC()
		var before runtime.MemStats
		runtime.ReadMemStats(&before)
		start = time.Now()
		sp, err := bootstrapIntervals(method, prob, sol, fits, trading, st, h, DefaultLevels, draws, false, budget)
		if err != nil {
			b.Fatal(err)
		}
		boot := time.Since(start)
		var after runtime.MemStats
		runtime.ReadMemStats(&after)
		b.ReportMetric(point.Seconds(), "point-s")
		b.ReportMetric(boot.Seconds(), "bootstrap-s")
		b.ReportMetric(float64(after.TotalAlloc-before.TotalAlloc)/1e9, "alloc-GB")
		b.ReportMetric(float64(n), "nodes")
		_ = sp
	}
}
