//go:build unix

package e57

import (
	"syscall"
	"time"
)

// cpuTime returns the user + system CPU time of the process so far, so that
// benchmarks on a shared machine can report throughput per CPU second
// besides wall-clock MB/s.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if syscall.Getrusage(syscall.RUSAGE_SELF, &ru) != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
