//go:build unix && !linux

package pipeline

// maxRSSBytes is not converted off Linux (bytes on some systems, kilobytes
// on others): no figure.
func maxRSSBytes(int64) int64 { return 0 }
