package tess

import (
	"math/rand/v2"
	"os"
	"runtime"
	"testing"
)

// clusteredPoints returns n points in Gaussian blobs of width 0.8 around
// n/200 uniform centres in [0, 100)^3, plus 30% uniform background: the
// distribution of ../shared/bench/tess-vs-qhull.sh "clustered".
func clusteredPoints(n int, seed uint64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 11))
	nc := max(1, n/200)
	centres := make([]float64, 3*nc)
	for i := range centres {
		centres[i] = 100 * rng.Float64()
	}
	xyz := make([]float64, 3*n)
	for i := 0; i < n; i++ {
		if rng.Float64() < 0.3 {
			for k := 0; k < 3; k++ {
				xyz[3*i+k] = 100 * rng.Float64()
			}
			continue
		}
		c := rng.IntN(nc)
		for k := 0; k < 3; k++ {
			xyz[3*i+k] = centres[3*c+k] + 0.8*rng.NormFloat64()
		}
	}
	return xyz
}

// benchNew times New and reports the peak heap in use (sampled after
// construction, when the arrays are at their largest) and tets per point.
func benchNew(b *testing.B, xyz []float64) {
	b.ReportAllocs()
	var peak uint64
	var nt int
	for i := 0; i < b.N; i++ {
		runtime.GC()
		tt, err := New(xyz, Options{Seed: uint64(i)})
		if err != nil {
			b.Fatal(err)
		}
		var ms runtime.MemStats
		runtime.ReadMemStats(&ms)
		peak = max(peak, ms.HeapSys)
		nt = tt.NumTets()
	}
	b.ReportMetric(float64(peak)/(1<<20), "MiB-heap-sys")
	b.ReportMetric(float64(nt)/float64(len(xyz)/3), "tets/point")
}

func BenchmarkTessellate1M(b *testing.B) {
	benchNew(b, randomPoints(1000000, 1, 100))
}

// BenchmarkTessellate10M times 10^7 uniform points; it needs about 3 GB
// and a minute, so it runs only with FILIGREE_BENCH_10M=1 in the
// environment. Peak memory of the whole process:
//
//	FILIGREE_BENCH_10M=1 /usr/bin/time -v go test ./reconstruct/tess -run XXX -bench 'Tessellate10M$' -benchtime 1x
func BenchmarkTessellate10M(b *testing.B) {
	if os.Getenv("FILIGREE_BENCH_10M") != "1" {
		b.Skip("set FILIGREE_BENCH_10M=1 to run")
	}
	benchNew(b, randomPoints(10000000, 1, 100))
}

func BenchmarkTessellateClustered(b *testing.B) {
	benchNew(b, clusteredPoints(1000000, 2))
}

func BenchmarkVoronoiVolumes1M(b *testing.B) {
	tt, err := New(randomPoints(1000000, 1, 100), Options{})
	if err != nil {
		b.Fatal(err)
	}
	dst := make([]float64, tt.NumPoints())
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		tt.VoronoiVolumes(dst)
	}
}
