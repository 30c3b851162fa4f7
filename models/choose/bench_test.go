package choose

import (
	"syscall"
	"testing"
	"time"

	"trueup/models"
)

// BenchmarkAuto96 times the full automatic choice for one node: a 96-month
// series (the first 96 months of R's AirPassengers), horizon 12, with
// Standard's candidates and validation, then the refit. Per-node figures
// on the demo chain: bench/choice.
func BenchmarkAuto96(b *testing.B) {
	y := series(b, "AirPassengers")[:96]
	fam := Standard(Options{})
	start := cpuTime()
	for b.Loop() {
		if _, err := fam.Fit(y, models.FitOptions{Period: 12, Horizon: 12}); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64((cpuTime()-start).Milliseconds())/float64(b.N), "cpu-ms/op")
}

// cpuTime is this process's user + system CPU time, reported per operation
// beside the wall time because the benchmark machines are shared.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
