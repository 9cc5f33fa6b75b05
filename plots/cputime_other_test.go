//go:build !unix

package plots

import "time"

// cpuTime is unavailable here; benchmarks report 0 CPU time.
func cpuTime() time.Duration { return 0 }
