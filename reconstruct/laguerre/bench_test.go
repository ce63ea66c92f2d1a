package laguerre

import (
	"math"
	"testing"
)

// benchLaguerre times Index.Compute for n uniform random points in a
// periodic unit box with weights uniform in ±0.1 s² (s the mean spacing),
// reusing the Index and the Cells as a transport solver does.
func benchLaguerre(b *testing.B, n int) {
	opt := unitBox(true)
	xyz := randomPoints(n, 21, opt.Lo, opt.Hi)
	s := math.Cbrt(1.0 / float64(n))
	psi := randomWeights(n, 22, 0.1*s*s)
	ix, err := NewIndex(xyz, opt)
	if err != nil {
		b.Fatal(err)
	}
	var out Cells
	if err := ix.Compute(psi, &out); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for _, w := range out.workers {
		w.p.calls, w.p.cuts = 0, 0
	}
	runs := 0
	b.ResetTimer()
	for b.Loop() {
		runs++
		if err := ix.Compute(psi, &out); err != nil {
			b.Fatal(err)
		}
	}
	b.StopTimer()
	b.ReportMetric(float64(len(out.Nbr))/float64(n), "nbr/cell")
	calls, cuts := 0, 0
	for _, w := range out.workers {
		calls += w.p.calls
		cuts += w.p.cuts
	}
	b.ReportMetric(float64(calls)/float64(runs*n), "planes/cell")
	b.ReportMetric(float64(cuts)/float64(runs*n), "cuts/cell")
}

// BenchmarkLaguerre1M: 10^6 points, the size the transport step targets.
func BenchmarkLaguerre1M(b *testing.B) { benchLaguerre(b, 1000000) }

// BenchmarkLaguerre100k: 10^5 points, for quick runs.
func BenchmarkLaguerre100k(b *testing.B) { benchLaguerre(b, 100000) }

// BenchmarkIndex1M times NewIndex for 10^6 points (built once per point set).
func BenchmarkIndex1M(b *testing.B) {
	opt := unitBox(true)
	xyz := randomPoints(1000000, 21, opt.Lo, opt.Hi)
	b.ReportAllocs()
	for b.Loop() {
		if _, err := NewIndex(xyz, opt); err != nil {
			b.Fatal(err)
		}
	}
}

// BenchmarkLaguerre1MWarm times Index.Compute with Options.WarmStart for the
// points of BenchmarkLaguerre1M, alternating between two weight vectors
// that differ by uniform ±0.01 s², so every call starts from the neighbour
// lists of slightly different weights (a late transport-solver step).
func BenchmarkLaguerre1MWarm(b *testing.B) { benchWarm(b, 1000000) }

// BenchmarkLaguerre100kWarm: BenchmarkLaguerre1MWarm for 10^5 points.
func BenchmarkLaguerre100kWarm(b *testing.B) { benchWarm(b, 100000) }

func benchWarm(b *testing.B, n int) {
	opt := unitBox(true)
	opt.WarmStart = true
	xyz := randomPoints(n, 21, opt.Lo, opt.Hi)
	s := math.Cbrt(1.0 / float64(n))
	psi := [2][]float64{randomWeights(n, 22, 0.1*s*s), randomWeights(n, 23, 0.01*s*s)}
	for i := range psi[1] {
		psi[1][i] += psi[0][i]
	}
	ix, err := NewIndex(xyz, opt)
	if err != nil {
		b.Fatal(err)
	}
	var out Cells
	if err := ix.Compute(psi[0], &out); err != nil {
		b.Fatal(err)
	}
	b.ReportAllocs()
	for _, w := range out.workers {
		w.p.calls, w.p.cuts = 0, 0
	}
	runs, k := 0, 1
	for b.Loop() {
		runs++
		if err := ix.Compute(psi[k], &out); err != nil {
			b.Fatal(err)
		}
		k ^= 1
	}
	b.StopTimer()
	calls, cuts := 0, 0
	for _, w := range out.workers {
		calls += w.p.calls
		cuts += w.p.cuts
	}
	b.ReportMetric(float64(calls)/float64(runs*n), "planes/cell")
	b.ReportMetric(float64(cuts)/float64(runs*n), "cuts/cell")
}
