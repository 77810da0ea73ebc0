//go:build unix

package stats

import (
	"syscall"
	"time"
)

// processCPU returns the CPU time (user and system, every thread) the test process has used, or 0
// where it cannot be read. Benchmarks report it per op beside the wall time, which on a shared
// machine also counts the time other jobs held the cores.
func processCPU() time.Duration {
	var ru syscall.Rusage
	if syscall.Getrusage(syscall.RUSAGE_SELF, &ru) != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
