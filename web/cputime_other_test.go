//go:build !unix

package web

import "time"

// processCPU is not available here; benchmarks then report wall time only.
func processCPU() time.Duration { return 0 }
