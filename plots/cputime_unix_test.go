//go:build unix

package plots

import (
	"syscall"
	"time"
)

// cpuTime is the process's user + system CPU time, for benchmarks run on
// a shared machine where wall time overstates the cost.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
