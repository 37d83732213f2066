//go:build !unix

package e57

import "time"

func cpuTime() time.Duration { return 0 }
