//go:build unix

package pipeline

import "syscall"

// usage returns this process's user plus system CPU seconds so far and its
// peak resident memory in bytes (0 where the platform does not say).
func usage() (cpu float64, peak int64) {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0, 0
	}
	tv := func(t syscall.Timeval) float64 { return float64(t.Sec) + float64(t.Usec)/1e6 }
	return tv(ru.Utime) + tv(ru.Stime), maxRSSBytes(ru.Maxrss)
}
