package laguerre

import (
	"math"
	"math/rand/v2"
	"testing"
)

// crowded returns n points of which 90% lie in a small sub-box [0.1, 0.3]³
// of the unit box and the rest on a coarse lattice-like spread over it, and
// weights with a large smooth part (a gradient across the box, as the
// Laguerre weights of a transport map with a bulk displacement have) plus
// noise: the case the crowding-adapted grid is for.
func crowded(n int, seed uint64) (xyz, psi []float64) {
	rng := rand.New(rand.NewPCG(seed, 5))
	xyz = make([]float64, 3*n)
	psi = make([]float64, n)
	for i := 0; i < n; i++ {
		for k := 0; k < 3; k++ {
			if i < 9*n/10 {
				xyz[3*i+k] = 0.1 + 0.2*rng.Float64()
			} else {
				xyz[3*i+k] = rng.Float64()
			}
		}
		psi[i] = 0.02*xyz[3*i] - 0.01*xyz[3*i+1]*xyz[3*i+1] + 1e-5*rng.Float64()
	}
	return xyz, psi
}

// Crowded points get a finer grid, so that a typical point's grid cell
// holds about gridDensity points; uniform points keep the uniform spacing.
func TestGridSpacingCrowded(t *testing.T) {
	opt := unitBox(false)
	n := 20000
	uni := randomPoints(n, 4, opt.Lo, opt.Hi)
	h0 := math.Cbrt(gridDensity / float64(n))
	if h := gridSpacing(uni, opt, 1, n); h != h0 {
		t.Errorf("uniform points: spacing %g, want %g", h, h0)
	}
	xyz, _ := crowded(n, 4)
	// 90% of the points in 1/125 of the volume: about 100× crowded.
	h := gridSpacing(xyz, opt, 1, n)
	if !(h < h0/2) || h < math.Cbrt(1/(8*float64(n))) {
		t.Errorf("crowded points: spacing %g, want well below %g and at least %g", h, h0, math.Cbrt(1/(8*float64(n))))
	}
}

// On crowded points with widely spread weights the cells are exact:
// volumes sum to the box, and with the grid of the uniform spacing (the
// rule before the adaptation) the cells are the same up to rounding. This
// test found a search that stopped too early: on the uniform grid the
// cells of sparse points must reach beyond the precomputed offset cube, and
// the search stopped at the cube's corners (bound 3√3·g) before visiting
// offsets just outside its faces (bound 4g); the periodic volumes then
// summed to 1.000049.
func TestCrowdedSameCells(t *testing.T) {
	for _, periodic := range []bool{false, true} {
		xyz, psi := crowded(6000, 3)
		opt := unitBox(periodic)
		ix, err := NewIndex(xyz, opt)
		if err != nil {
			t.Fatal(err)
		}
		var got Cells
		if err := ix.Compute(psi, &got); err != nil {
			t.Fatal(err)
		}
		ref, err := newIndex(xyz, opt, true)
		if err != nil {
			t.Fatal(err)
		}
		if ref.dims == ix.dims {
			t.Fatalf("periodic %v: the crowded points kept the uniform grid %v", periodic, ix.dims)
		}
		var want Cells
		if err := ref.Compute(psi, &want); err != nil {
			t.Fatal(err)
		}
		var tot float64
		for i := range got.Volume {
			tot += got.Volume[i]
			if d := math.Abs(got.Volume[i] - want.Volume[i]); d > 1e-9*math.Max(want.Volume[i], 1e-12) {
				t.Fatalf("periodic %v: cell %d volume %.17g, want %.17g", periodic, i, got.Volume[i], want.Volume[i])
			}
		}
		if math.Abs(tot-1) > 1e-9 {
			t.Errorf("periodic %v: volumes sum to %.15g, want the box volume 1", periodic, tot)
		}
	}
}
