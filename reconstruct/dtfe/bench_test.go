package dtfe

import (
	"math/rand/v2"
	"syscall"
	"testing"
	"time"

	"github.com/filigree-survey/filigree/reconstruct/grid"
	"github.com/filigree-survey/filigree/reconstruct/tess"
)

// uniformPoints returns n points uniform in [0, l)^3.
func uniformPoints(n int, seed uint64, l float64) []float64 {
	rng := rand.New(rand.NewPCG(seed, 7))
	xyz := make([]float64, 3*n)
	for i := range xyz {
		xyz[i] = l * rng.Float64()
	}
	return xyz
}

// cpuTime returns the user plus system CPU time of the process so far: on
// a shared machine it measures the work, where wall time also counts the
// waits for a core.
func cpuTime() time.Duration {
	var ru syscall.Rusage
	if err := syscall.Getrusage(syscall.RUSAGE_SELF, &ru); err != nil {
		return 0
	}
	return time.Duration(ru.Utime.Nano() + ru.Stime.Nano())
}

// reportCPU reports the CPU seconds per operation since start.
func reportCPU(b *testing.B, start time.Duration) {
	b.ReportMetric((cpuTime()-start).Seconds()/float64(b.N), "cpu-s/op")
}

// bench1M tessellates 10^6 uniform points in [0, 100)^3 once per process,
// outside the timed part.
var bench1M struct {
	xyz []float64
	t   *tess.Tessellation
}

func tess1M(b *testing.B) ([]float64, *tess.Tessellation) {
	if bench1M.t == nil {
		xyz := uniformPoints(1000000, 1, 100)
		t, err := tess.New(xyz, tess.Options{Seed: 1})
		if err != nil {
			b.Fatal(err)
		}
		bench1M.xyz, bench1M.t = xyz, t
	}
	return bench1M.xyz, bench1M.t
}

// BenchmarkDTFE1M times New — the densities of 10^6 uniform points, their
// hull flags and the walk index — given the tessellation.
func BenchmarkDTFE1M(b *testing.B) {
	xyz, t := tess1M(b)
	b.ResetTimer()
	c0 := cpuTime()
	for i := 0; i < b.N; i++ {
		if _, err := New(t, xyz, nil); err != nil {
			b.Fatal(err)
		}
	}
	reportCPU(b, c0)
}

// BenchmarkGrid256 times the DTFE of 10^6 uniform points onto a 256^3 grid
// given the tessellation: New plus SampleNodes (nodes), or plus
// AverageCells with 2^3 sub-samples per cell (cells2).
func BenchmarkGrid256(b *testing.B) {
	xyz, t := tess1M(b)
	g := grid.Geometry{N: 256, L: 100}
	dst := make([]float64, g.Len())
	b.Run("nodes", func(b *testing.B) {
		c0 := cpuTime()
		defer reportCPU(b, c0)
		for i := 0; i < b.N; i++ {
			f, err := New(t, xyz, nil)
			if err != nil {
				b.Fatal(err)
			}
			if out := f.SampleNodes(dst, g); out == 0 {
				b.Fatal("no cell outside the hull of points in a cube")
			}
		}
	})
	b.Run("cells2", func(b *testing.B) {
		c0 := cpuTime()
		defer reportCPU(b, c0)
		for i := 0; i < b.N; i++ {
			f, err := New(t, xyz, nil)
			if err != nil {
				b.Fatal(err)
			}
			f.AverageCells(dst, g, 2)
		}
	})
}

// BenchmarkAt1M times At at 10^5 uniform random positions in the cube of
// the 10^6 points (walks from the coarse index of New).
func BenchmarkAt1M(b *testing.B) {
	xyz, t := tess1M(b)
	f, err := New(t, xyz, nil)
	if err != nil {
		b.Fatal(err)
	}
	q := uniformPoints(100000, 99, 100)
	b.ResetTimer()
	c0 := cpuTime()
	for i := 0; i < b.N; i++ {
		for j := 0; j < len(q); j += 3 {
			f.At([3]float64(q[j : j+3]))
		}
	}
	reportCPU(b, c0)
}
