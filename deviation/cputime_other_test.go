//go:build !unix

package deviation

import "time"

// processCPU is not available here; benchmarks then omit cpu-ns/op.
func processCPU() (time.Duration, bool) { return 0, false }
