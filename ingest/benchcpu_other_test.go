//go:build !unix

package ingest

import "time"

// processCPU is not measured on this platform.
func processCPU() time.Duration { return 0 }

// threadCPU is not measured on this platform.
func threadCPU() time.Duration { return 0 }
