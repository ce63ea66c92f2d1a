//go:build unix

package web

import "syscall"

// cpuSeconds returns the user+system CPU time of this process so far (s),
// so benchmarks can report CPU time next to the wall time, which on a
// shared machine depends on other people's load.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if syscall.Getrusage(syscall.RUSAGE_SELF, &ru) != nil {
		return 0
	}
	return float64(ru.Utime.Sec+ru.Stime.Sec) + 1e-6*float64(ru.Utime.Usec+ru.Stime.Usec)
}
