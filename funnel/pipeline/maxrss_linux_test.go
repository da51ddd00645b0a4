//go:build linux

package pipeline

// maxRSSBytes converts getrusage's ru_maxrss (kilobytes on Linux).
func maxRSSBytes(v int64) int64 { return v * 1024 }
