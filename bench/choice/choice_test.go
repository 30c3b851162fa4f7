// Package choice benchmarks the automatic choice per node on the demo
// chain's store × category series (fixtures.Generate, the invented chain):
// 72 monthly points and 260 weekly points, horizon one season. Run with
// bench/choice/run.sh, which also writes and summarises a CPU profile.
package choice

import (
	"sort"
	"syscall"
	"testing"
	"time"

	"trueup/fixtures"
	"trueup/models"
	"trueup/models/choose"
)

// nodes returns up to k store × category series of the demo chain at the
// grain with at least n periods, each cut to its last n values.
func nodes(tb testing.TB, grain string, n, k int) [][]float64 {
	tb.Helper()
	d := fixtures.Generate(fixtures.DefaultConfig(grain))
	var out [][]float64
	var cur []float64
	flush := func() {
		if len(cur) >= n && len(out) < k {
			out = append(out, append([]float64(nil), cur[len(cur)-n:]...))
		}
		cur = nil
	}
	for i := range d.Sales {
		if i > 0 && (d.Store[i] != d.Store[i-1] || d.Category[i] != d.Category[i-1]) {
			flush()
		}
		cur = append(cur, d.Sales[i])
	}
	flush()
	if len(out) < k {
		tb.Fatalf("%d series of %d %ss, want %d", len(out), n, grain, k)
	}
	return out
}

// run fits every series per iteration and reports the median and mean CPU
// milliseconds per node (this process's user + system time around each
// fit; the machines are shared, so CPU time is steadier than wall time).
func run(b *testing.B, ys [][]float64, period int) {
	fam := choose.Standard(choose.Options{})
	opt := models.FitOptions{Period: period, Horizon: period}
	var per []float64
	for b.Loop() {
		for _, y := range ys {
			start := cpuTime()
			if _, err := fam.Fit(y, opt); err != nil {
				b.Fatal(err)
			}
			per = append(per, float64(cpuTime()-start)/1e6)
		}
	}
	sort.Float64s(per)
	sum := 0.0
	for _, v := range per {
		sum += v
	}
	b.ReportMetric(per[len(per)/2], "median-cpu-ms/node")
	b.ReportMetric(sum/float64(len(per)), "mean-cpu-ms/node")
	b.ReportMetric(0, "ns/op")
}

// BenchmarkMonthly72: 24 nodes of 72 months. Target: 15 ms CPU median.
func BenchmarkMonthly72(b *testing.B) { run(b, nodes(b, "month", 72, 24), 12) }

// BenchmarkWeekly260: 12 nodes of 260 weeks. Target: 40 ms CPU median.
func BenchmarkWeekly260(b *testing.B) { run(b, nodes(b, "week", 260, 12), 52) }

func cpuTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
