//go:build !unix

package tokenize

import "time"

// threadCPU is not measured here; the benchmarks then report wall time only.
func threadCPU() time.Duration { return 0 }
