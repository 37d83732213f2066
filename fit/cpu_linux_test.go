//go:build linux

package fit

import "syscall"

// cpuSeconds returns the process's user + system CPU time, for reporting
// benchmarks on a shared machine where wall time is noisy.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if syscall.Getrusage(syscall.RUSAGE_SELF, &ru) != nil {
		return 0
	}
	return float64(ru.Utime.Sec+ru.Stime.Sec) + 1e-6*float64(ru.Utime.Usec+ru.Stime.Usec)
}
