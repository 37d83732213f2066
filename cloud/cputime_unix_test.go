//go:build unix

package cloud

import (
	"syscall"
	"time"
)

// processCPU returns the CPU time (user + system, all threads) the test
// process has used, or 0 when the system does not say.
func processCPU() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}
