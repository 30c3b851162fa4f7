package ets

import (
	"syscall"
	"testing"
	"time"
)

// cpuTime is this process's user + system CPU time. Benchmarks report it
// per operation beside the wall time because the machines they run on are
// shared: CPU time is what one core spends, whatever else is running.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// BenchmarkAuto96 times the automatic choice on the first 96 months of
// AirPassengers (R datasets); target 20 ms per fit on one core.
func BenchmarkAuto96(b *testing.B) {
	y := loadSeries(b, "AirPassengers")[:96]
	start := cpuTime()
	for b.Loop() {
		if _, _, err := Auto(y, 12); err != nil {
			b.Fatal(err)
		}
	}
	b.ReportMetric(float64((cpuTime()-start).Milliseconds())/float64(b.N), "cpu-ms/op")
}
