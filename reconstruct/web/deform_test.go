package web

import (
	"math"
	"math/rand/v2"
	"testing"

	"github.com/filigree-survey/filigree/reconstruct/grid"
)

// gaussianDisplacement returns a Gaussian random displacement field that is
// the gradient of a potential (Ψ_k = i k δ_k / k², the Zel'dovich
// displacement of δ, Zel'dovich 1970), and δ itself, with P(k) ∝ k⁻²
// exp(−k²) in grid units.
func gaussianDisplacement(g grid.Geometry, seed uint64) ([3][]float64, []float64) {
	rng := rand.New(rand.NewPCG(seed, 7))
	fft, _ := grid.NewFFT(g.N)
	white := make([]float64, g.Len())
	for i := range white {
		white[i] = rng.NormFloat64()
	}
	dk := make([]complex128, g.HalfLen())
	fft.Forward(dk, white)
	h := g.H()
	g.EachMode(func(kx, ky, kz float64, idx int) {
		k2 := (kx*kx + ky*ky + kz*kz) * h * h
		if k2 == 0 {
			dk[idx] = 0
			return
		}
		dk[idx] *= complex(math.Sqrt(math.Exp(-k2)/k2), 0)
	})
	var psi [3][]float64
	tmp := make([]complex128, g.HalfLen())
	for a := 0; a < 3; a++ {
		g.EachMode(func(kx, ky, kz float64, idx int) {
			k := [3]float64{kx, ky, kz}
			k2 := kx*kx + ky*ky + kz*kz
			if k2 == 0 || k[a] == math.Pi/h {
				tmp[idx] = 0
				return
			}
			tmp[idx] = complex(0, k[a]/k2) * dk[idx]
		})
		psi[a] = make([]float64, g.Len())
		fft.Inverse(psi[a], tmp)
	}
	delta := make([]float64, g.Len())
	copy(tmp, dk)
	fft.Inverse(delta, tmp)
	return psi, delta
}

// TestDeformationDoroshkevich is the check: the eigenvalues of the
// deformation tensor of a Gaussian displacement field, counted above zero,
// fall in the fractions 0.08, 0.42, 0.42, 0.08 (Doroshkevich 1970,
// Astrofizika 6, 581) within ±0.01; and for a gradient field the
// deformation tensor equals the tidal tensor of δ = −∇·Ψ (cell by cell, to
// float32 rounding).
func TestDeformationDoroshkevich(t *testing.T) {
	g := grid.Geometry{N: 128, L: 128}
	var sum [4]float64
	seeds := []uint64{11, 12}
	if testing.Short() {
		seeds = seeds[:1]
	}
	for _, seed := range seeds {
		psi, delta := gaussianDisplacement(g, seed)
		f, err := Deformation(psi, g, 1.5)
		if err != nil {
			t.Fatal(err)
		}
		vol, _ := Fractions(f.Classify(0), nil, nil)
		for c := range vol {
			sum[c] += vol[c] / float64(len(seeds))
		}
		tid, err := Tidal(delta, g, 1.5)
		if err != nil {
			t.Fatal(err)
		}
		var worst float64
		for i := range tid.L1 {
			worst = math.Max(worst, math.Abs(float64(tid.L1[i]-f.L1[i]))+math.Abs(float64(tid.L3[i]-f.L3[i])))
		}
		if worst > 1e-4 {
			t.Errorf("seed %d: deformation and tidal eigenvalues differ by %.3g", seed, worst)
		}
	}
	want := [4]float64{0.08, 0.42, 0.42, 0.08}
	t.Logf("fractions %.4f %.4f %.4f %.4f", sum[0], sum[1], sum[2], sum[3])
	for c := range want {
		if math.Abs(sum[c]-want[c]) > 0.01 {
			t.Errorf("%d eigenvalues above 0: fraction %.4f, Doroshkevich %.2f", c, sum[c], want[c])
		}
	}
}

// TestGridDisplacement checks the mass-weighted assignment: a uniform
// displacement comes back uniform in every cell that received mass, and
// empty cells are zero.
func TestGridDisplacement(t *testing.T) {
	g := grid.Geometry{N: 8, L: 8}
	q := []float64{1.5, 1.5, 1.5, 2.2, 1.9, 1.4}
	d := []float64{0.3, -0.2, 0.1, 0.3, -0.2, 0.1}
	out, err := GridDisplacement(q, d, []float64{2, 5}, g, 0)
	if err != nil {
		t.Fatal(err)
	}
	for c := 0; c < g.Len(); c++ {
		for a := 0; a < 3; a++ {
			v := out[a][c]
			if v != 0 && math.Abs(v-d[a]) > 1e-12 {
				t.Fatalf("cell %d axis %d: %v, want %v or 0", c, a, v, d[a])
			}
		}
	}
	if out[0][g.Index(1, 1, 1)] == 0 || out[0][g.Index(6, 6, 6)] != 0 {
		t.Error("occupied cell empty or empty cell filled")
	}
}

// TestGridDisplacementSparse: particles on a lattice 2.5 grid cells apart
// carry Ψ_x = A sin(kx). Smoothed at R by normalised convolution the grid
// holds A·exp(−k²R²/2)·sin(kx) (the Fourier transform of the Gaussian),
// to within the cloud-in-cell and sampling corrections (2% here), at every
// cell, although most cells receive no particle. Filling empty cells with
// zero before smoothing, as the unsmoothed assignment does, gives about
// a third of that amplitude.
func TestGridDisplacementSparse(t *testing.T) {
	const L, nl, N = 100.0, 20, 50 // particle spacing 5 = 2.5 cells of 2
	g := grid.Geometry{N: N, L: L}
	k := 2 * math.Pi / L
	A, R := 1.5, 10.0
	var q, d []float64
	for i := 0; i < nl; i++ {
		for j := 0; j < nl; j++ {
			for l := 0; l < nl; l++ {
				x := (float64(i) + 0.5) * L / nl
				q = append(q, x, (float64(j)+0.5)*L/nl, (float64(l)+0.5)*L/nl)
				d = append(d, A*math.Sin(k*x), 0, 0)
			}
		}
	}
	out, err := GridDisplacement(q, d, nil, g, R)
	if err != nil {
		t.Fatal(err)
	}
	want := A * math.Exp(-0.5*k*k*R*R)
	worst := 0.0
	for c := 0; c < g.Len(); c++ {
		i := c / (N * N)
		x := (float64(i) + 0.5) * g.H()
		worst = math.Max(worst, math.Abs(out[0][c]-want*math.Sin(k*x)))
	}
	if worst > 0.02*want {
		t.Errorf("largest deviation %.4f from %.4f·sin(kx), want below 2%%", worst, want)
	}
	// the zero-filled alternative fails the same check
	raw, _ := GridDisplacement(q, d, nil, g, 0)
	fft, _ := grid.NewFFT(N)
	dk := make([]complex128, g.HalfLen())
	fft.Forward(dk, raw[0])
	grid.SmoothGaussian(dk, g, R)
	fft.Inverse(raw[0], dk)
	amp := 0.0
	for c := 0; c < g.Len(); c++ {
		amp = math.Max(amp, math.Abs(raw[0][c]))
	}
	t.Logf("normalised convolution: deviation %.2g of %.3f; zero-filled then smoothed: amplitude %.3f", worst, want, amp)
	if amp > 0.8*want {
		t.Errorf("zero-filled amplitude %.3f, expected well below %.3f", amp, want)
	}
}
