package match

import (
	"math"
	"math/rand/v2"
	"runtime"
	"syscall"
	"testing"
)

// cpuSeconds returns the user plus system CPU time of the process so far:
// on a shared machine it measures the work done, where wall time measures
// the load of the others.
func cpuSeconds() float64 {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return math.NaN()
	}
	return float64(ru.Utime.Nano()+ru.Stime.Nano()) / 1e9
}

// uniformSky returns n positions uniform on the sphere (RA uniform in
// [0, 360), sin Dec uniform in [−1, 1]), in degrees.
func uniformSky(n int, seed uint64) (ra, dec []float64) {
	rng := rand.New(rand.NewPCG(seed, 0x6d61746368))
	ra, dec = make([]float64, n), make([]float64, n)
	for i := range ra {
		ra[i] = 360 * rng.Float64()
		dec[i] = math.Asin(2*rng.Float64()-1) / deg
	}
	return ra, dec
}

// BenchmarkMatch1M is the nearest match of 10^6 against 10^6 positions
// uniform on the sphere within 1 arcsec: unit vectors, tree and queries,
// not the generation. It reports the pairs found and the heap obtained from
// the system (HeapSys) at the end, and the CPU seconds of all threads per
// match (cpu-s/op).
func BenchmarkMatch1M(b *testing.B) {
	const n = 1000000
	lra, ldec := uniformSky(n, 1)
	rra, rdec := uniformSky(n, 2)
	b.ResetTimer()
	cpu0 := cpuSeconds()
	var r *Result
	for i := 0; i < b.N; i++ {
		var err error
		if r, err = Sky(lra, ldec, rra, rdec, 1.0/3600, Options{}); err != nil {
			b.Fatal(err)
		}
	}
	b.StopTimer()
	b.ReportMetric((cpuSeconds()-cpu0)/float64(b.N), "cpu-s/op")
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	b.ReportMetric(float64(len(r.Left)), "pairs")
	b.ReportMetric(float64(ms.HeapSys)/(1<<20), "heapsys-MiB")
}
