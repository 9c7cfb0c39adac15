//go:build unix

package ingest

import (
	"syscall"

	"golang.org/x/sys/unix"
	"time"
)

// processCPU returns the user+system CPU time of the process so far. Benchmarks
// report it per op besides wall time, which on a shared machine mostly measures
// the other load.
func processCPU() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// threadCPU returns the CPU time of the calling OS thread (lock it first).
func threadCPU() time.Duration {
	var ts unix.Timespec
	if err := unix.ClockGettime(unix.CLOCK_THREAD_CPUTIME_ID, &ts); err != nil {
		return 0
	}
	return time.Duration(ts.Nano())
}
