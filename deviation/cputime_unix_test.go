//go:build unix

package deviation

import (
	"syscall"
	"time"
)

// processCPU returns the CPU time (user + system) used so far by the
// process, for benchmarks run on a shared machine, where wall-clock time
// per operation also counts the time other processes held the cores.
func processCPU() (time.Duration, bool) {
	var r syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &r); err != nil {
		return 0, false
	}
	return time.Duration(r.Utime.Nano() + r.Stime.Nano()), true
}
