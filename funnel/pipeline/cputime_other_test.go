//go:build !unix

package pipeline

// usage is not measured on this platform.
func usage() (cpu float64, peak int64) { return 0, 0 }
