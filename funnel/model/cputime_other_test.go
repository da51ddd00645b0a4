//go:build !unix

package model

// cpuSeconds is not measured on this platform.
func cpuSeconds() float64 { return 0 }
