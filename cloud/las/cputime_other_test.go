//go:build !unix

package las

import "time"

func cpuTime() time.Duration { return 0 }
