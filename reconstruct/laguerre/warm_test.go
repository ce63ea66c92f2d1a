package laguerre

import (
	"math"
	"testing"
)

// TestWarmStart checks Options.WarmStart against the cold computation, which
// TestBruteForce and TestVoronoiScipy check against the definition and
// scipy: after a first call, a warm call with changed weights must give the
// same neighbour lists and the same volumes, centroids and facet areas up to
// rounding, and bit-identical results for 1 and 2 threads. It covers both
// domains, weights large enough to empty cells (amp 4 s²), and a change of
// weights that alters many neighbour lists.
func TestWarmStart(t *testing.T) {
	const n = 4000
	for _, periodic := range []bool{false, true} {
		for _, amp := range []float64{0.1, 4} {
			opt := Options{Lo: [3]float64{-1, 0, 2}, Hi: [3]float64{2, 1, 4}, Periodic: periodic}
			s := math.Cbrt(3 * 1 * 2 / float64(n))
			xyz := randomPoints(n, 51, opt.Lo, opt.Hi)
			psi0 := randomWeights(n, 52, amp*s*s)
			psi1 := randomWeights(n, 53, 0.05*amp*s*s)
			for i := range psi1 {
				psi1[i] += psi0[i]
			}
			cold := compute(t, xyz, psi1, opt)

			var warm [2]Cells
			for k, th := range []int{1, 2} {
				o := opt
				o.WarmStart, o.Threads = true, th
				ix, err := NewIndex(xyz, o)
				if err != nil {
					t.Fatal(err)
				}
				for _, psi := range [][]float64{psi0, psi1} {
					if err := ix.Compute(psi, &warm[k]); err != nil {
						t.Fatal(err)
					}
				}
			}
			a, b := &warm[0], &warm[1]
			for i := range a.Volume {
				if math.Float64bits(a.Volume[i]) != math.Float64bits(b.Volume[i]) {
					t.Fatalf("periodic=%v amp=%g: warm volume %d: %v with 1 thread, %v with 2", periodic, amp, i, a.Volume[i], b.Volume[i])
				}
			}
			if a.Empty != cold.Empty || len(a.Nbr) != len(cold.Nbr) {
				t.Fatalf("periodic=%v amp=%g: warm %d empty, %d neighbour entries; cold %d, %d", periodic, amp, a.Empty, len(a.Nbr), cold.Empty, len(cold.Nbr))
			}
			tolV := 1e-12 * s * s * s
			for i := 0; i < n; i++ {
				if math.Abs(a.Volume[i]-cold.Volume[i]) > tolV {
					t.Fatalf("periodic=%v amp=%g: cell %d volume %.17g warm, %.17g cold", periodic, amp, i, a.Volume[i], cold.Volume[i])
				}
				for k := 0; k < 3; k++ {
					if math.Abs(a.Centroid[3*i+k]-cold.Centroid[3*i+k]) > 1e-12*s {
						t.Fatalf("periodic=%v amp=%g: cell %d centroid %v warm, %v cold", periodic, amp, i, a.Centroid[3*i:3*i+3], cold.Centroid[3*i:3*i+3])
					}
				}
				if a.NbrStart[i+1] != cold.NbrStart[i+1] {
					t.Fatalf("periodic=%v amp=%g: cell %d neighbour offsets differ", periodic, amp, i)
				}
			}
			changed := 0
			for k := range a.Nbr {
				if a.Nbr[k] != cold.Nbr[k] || math.Abs(a.Area[k]-cold.Area[k]) > 1e-12*s*s {
					t.Fatalf("periodic=%v amp=%g: neighbour entry %d: %d area %g warm, %d area %g cold", periodic, amp, k, a.Nbr[k], a.Area[k], cold.Nbr[k], cold.Area[k])
				}
			}
			// the second weights must have changed the tessellation, or
			// the warm start would only replay the first result
			first := compute(t, xyz, psi0, opt)
			for i := 0; i < n; i++ {
				if first.NbrStart[i+1]-first.NbrStart[i] != cold.NbrStart[i+1]-cold.NbrStart[i] {
					changed++
				}
			}
			if changed < n/50 {
				t.Errorf("periodic=%v amp=%g: only %d cells changed their neighbour count", periodic, amp, changed)
			}
			t.Logf("periodic=%v amp=%g: %d empty cells, %d cells with a new neighbour count", periodic, amp, a.Empty, changed)
		}
	}
}
