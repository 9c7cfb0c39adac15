//go:build unix

package tokenize

import (
	"time"

	"golang.org/x/sys/unix"
)

// threadCPU is the CPU time of the calling OS thread (lock it first).
func threadCPU() time.Duration {
	var ts unix.Timespec
	if err := unix.ClockGettime(unix.CLOCK_THREAD_CPUTIME_ID, &ts); err != nil {
		return 0
	}
	return time.Duration(ts.Nano())
}
