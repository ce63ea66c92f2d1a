//go:build !unix

package web

// cpuSeconds is unavailable off Unix; benchmarks then report 0 CPU time.
func cpuSeconds() float64 { return 0 }
