//go:build !linux

package allocate

import "math"

// cpuSeconds is not measured on this system.
func cpuSeconds() float64 { return math.NaN() }
