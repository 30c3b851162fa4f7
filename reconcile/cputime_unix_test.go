//go:build unix

package reconcile

import (
	"syscall"
	"time"
)

// cpuTime is the CPU time (user and system) the process has used, for
// benchmarks that compare work on a machine shared with other work.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
