//go:build !unix

package predict

import "time"

// cpuTime is unavailable here; benchmarks then report wall time only.
func cpuTime() time.Duration { return 0 }
