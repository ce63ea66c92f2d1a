package pipeline

import (
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"testing"

	"github.com/filigree-survey/filigree/reconstruct/grid"
	"github.com/filigree-survey/filigree/reconstruct/web"
	"github.com/filigree-survey/filigree/reconstruct/zeldovich"
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
		r, err := RunBox(xyz, L, nil, Options{Threshold: math.NaN(), Seed: 9, Recon: ReconOptions{Mode: ReconZeldovich, Threshold: math.NaN(), Resamples: 3}})
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
	same("web_agree", a.Recon.WebAgree, b.Recon.WebAgree)
	// every galaxy is drawn by one of 3 resamples with probability
	// 1 − e⁻³ ≈ 0.95; agreement is a fraction
	drawn, sum := 0, 0.0
	for _, v := range a.Recon.WebAgree {
		if !math.IsNaN(v) {
			drawn++
			sum += v
			if v < 0 || v > 1 {
				t.Fatalf("web_agree %g outside [0, 1]", v)
			}
		}
	}
	if f := float64(drawn) / 4000; math.Abs(f-(1-math.Exp(-3))) > 0.02 {
		t.Errorf("%.3f of the points drawn by some resample, want 1 − e⁻³ = %.3f", f, 1-math.Exp(-3))
	}
	t.Logf("mean web_agree %.3f over %d points (%.2f s for 3 resamples)", sum/float64(drawn), drawn, a.Recon.ResampleSeconds)
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

// poisson1 draws Poisson(1) multiplicities: mean 1 and P(0) = e⁻¹ (the
// bootstrap's share of left-out galaxies, Efron 1979).
func TestPoisson1(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	const n = 200000
	zeros, sum := 0, 0
	for range n {
		k := poisson1(rng)
		sum += k
		if k == 0 {
			zeros++
		}
	}
	if m := float64(sum) / n; math.Abs(m-1) > 0.01 {
		t.Errorf("mean %.4f, want 1", m)
	}
	if p := float64(zeros) / n; math.Abs(p-math.Exp(-1)) > 0.005 {
		t.Errorf("P(0) = %.4f, want e⁻¹ = %.4f", p, math.Exp(-1))
	}
}

// The Zel'dovich deformation is computed as the tidal tensor of S_R δ/b:
// the same eigenvalues as web.Deformation of the Zel'dovich displacement
// (Ψ_k = i k S δ_k/(b k²), so −∂_jΨ_i = k_i k_j S δ_k/(b k²)), up to the
// Nyquist planes that the smoothing empties.
func TestZeldovichDeformationIsTidal(t *testing.T) {
	g := grid.Geometry{N: 32, L: 64}
	rng := rand.New(rand.NewPCG(5, 6))
	rho := make([]float64, g.Len())
	for i := range rho {
		rho[i] = 1 + 0.5*rng.NormFloat64()
	}
	const r, b = 5.0, 1.3
	fld, err := zeldovich.Displacement(rho, g, r, b)
	if err != nil {
		t.Fatal(err)
	}
	def, err := web.Deformation(fld.Psi, g, 0)
	if err != nil {
		t.Fatal(err)
	}
	scaled := make([]float64, len(rho))
	for i, v := range rho {
		scaled[i] = v / b
	}
	tid, err := web.Tidal(scaled, g, r)
	if err != nil {
		t.Fatal(err)
	}
	worst, scale := 0.0, 0.0
	for c := range def.L1 {
		for _, p := range [][2]float32{{def.L1[c], tid.L1[c]}, {def.L2[c], tid.L2[c]}, {def.L3[c], tid.L3[c]}} {
			worst = math.Max(worst, math.Abs(float64(p[0]-p[1])))
			scale = math.Max(scale, math.Abs(float64(p[0])))
		}
	}
	if worst > 1e-5*scale {
		t.Errorf("eigenvalues differ by up to %.3g (largest %.3g)", worst, scale)
	}
}
