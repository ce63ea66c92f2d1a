package pipeline

import (
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"testing"
)

// Grid sizes are the smallest 5-smooth even numbers (OEIS A051037) that
// give the spacing asked for, within the cap.
func TestGridSize(t *testing.T) {
	for _, c := range []struct {
		side, h   float64
		max, want int
	}{
		{648, 1.856, 512, 360}, // 349.1 cells asked: 350 = 2·5²·7 is not 5-smooth
		{600, 600.0 / 256, 512, 256},
		{1000, 1, 512, 512},
		{1000, 1, 490, 486}, // the cap 490 = 2·5·7² is not 5-smooth: 486 = 2·3⁵
		{10, 1, 512, 16},
	} {
		if got := gridSize(c.side, c.h, c.max); got != c.want {
			t.Errorf("gridSize(%g, %g, %d) = %d, want %d", c.side, c.h, c.max, got, c.want)
		}
	}
}

// RunBox gives bit-for-bit the same densities, fields and labels whatever
// the number of threads (the project's rule for results).
func TestRunBoxThreadIndependent(t *testing.T) {
	const L = 50.0
	rng := rand.New(rand.NewPCG(3, 4))
	xyz := make([]float64, 3*4000)
	for i := range xyz {
		// clustered: half the points in a Gaussian clump
		if i < len(xyz)/2 {
			xyz[i] = math.Mod(25+4*rng.NormFloat64()+L, L)
		} else {
			xyz[i] = L * rng.Float64()
		}
	}
	run := func(procs int) *Result {
		old := runtime.GOMAXPROCS(procs)
		defer runtime.GOMAXPROCS(old)
		r, err := RunBox(xyz, L, nil, Options{Threshold: math.NaN(), Seed: 9, Recon: ReconOptions{Mode: ReconZeldovich, Threshold: math.NaN()}})
		if err != nil {
			t.Fatal(err)
		}
		return r
	}
	a, b := run(1), run(2)
	same := func(name string, x, y []float64) {
		if !slices.EqualFunc(x, y, func(u, v float64) bool { return u == v || (math.IsNaN(u) && math.IsNaN(v)) }) {
			t.Errorf("%s differs between 1 and 2 threads", name)
		}
	}
	same("dtfe_density", a.DTFEDensity, b.DTFEDensity)
	same("delta", a.Delta, b.Delta)
	same("tidal_l1", a.L1, b.L1)
	same("lagrangian positions", a.Recon.Lagr, b.Recon.Lagr)
	if !slices.Equal(a.Web, b.Web) {
		t.Error("web labels differ between 1 and 2 threads")
	}
	// The clump is denser than the background: its centre cell is
	// overdense and not a void.
	var inClump []int
	for i := range 4000 {
		dx, dy, dz := xyz[3*i]-25, xyz[3*i+1]-25, xyz[3*i+2]-25
		if dx*dx+dy*dy+dz*dz < 4 {
			inClump = append(inClump, i)
		}
	}
	for _, i := range inClump {
		if !(a.Delta[i] > 0) || a.Web[i] == 0 {
			t.Fatalf("point %d at the clump centre: delta %g, web %d; want an overdense non-void", i, a.Delta[i], a.Web[i])
		}
	}
	if len(inClump) == 0 {
		t.Fatal("no point near the clump centre")
	}
}
