package grid

import (
	"encoding/json"
	"math"
	"math/cmplx"
	"math/rand/v2"
	"os"
	"path/filepath"
	"runtime"
	"slices"
	"testing"
)

type fftCase struct {
	N      int       `json:"n"`
	X      []float64 `json:"x"`
	Re     []float64 `json:"rfftn_re"`
	Im     []float64 `json:"rfftn_im"`
	SRe    []float64 `json:"s_re"`
	SIm    []float64 `json:"s_im"`
	IRfftn []float64 `json:"irfftn"`
}

func loadReference(t *testing.T) []fftCase {
	t.Helper()
	b, err := os.ReadFile(filepath.Join("..", "..", "testdata", "grid", "fft_reference.json"))
	if err != nil {
		t.Fatal(err)
	}
	var ref struct {
		Cases []fftCase `json:"cases"`
	}
	if err := json.Unmarshal(b, &ref); err != nil {
		t.Fatal(err)
	}
	if len(ref.Cases) == 0 {
		t.Fatal("no reference cases")
	}
	return ref.Cases
}

func mustFFT(t testing.TB, n int) *FFT {
	t.Helper()
	f, err := NewFFT(n)
	if err != nil {
		t.Fatal(err)
	}
	return f
}

func randomField(n int, seed uint64) []float64 {
	r := rand.New(rand.NewPCG(seed, 7))
	x := make([]float64, n*n*n)
	for i := range x {
		x[i] = r.NormFloat64()
	}
	return x
}

// Forward and Inverse agree with numpy.fft.rfftn / irfftn
// (testdata/grid/fft_reference.json, made by make_fft_reference.py with
// numpy 1.24.2).
func TestMatchesNumpy(t *testing.T) {
	for _, c := range loadReference(t) {
		n := c.N
		g := Geometry{N: n, L: 1}
		f := mustFFT(t, n)
		got := make([]complex128, g.HalfLen())
		f.Forward(got, c.X)
		if len(c.Re) != len(got) {
			t.Fatalf("N=%d: reference has %d modes, want %d", n, len(c.Re), len(got))
		}
		scale := 0.0
		for i := range c.Re {
			scale = max(scale, cmplx.Abs(complex(c.Re[i], c.Im[i])))
		}
		for i, v := range got {
			want := complex(c.Re[i], c.Im[i])
			if cmplx.Abs(v-want) > 1e-12*scale {
				t.Fatalf("N=%d Forward[%d] = %v, numpy rfftn %v", n, i, v, want)
			}
		}
		if c.SRe == nil {
			continue
		}
		s := make([]complex128, g.HalfLen())
		for i := range s {
			s[i] = complex(c.SRe[i], c.SIm[i])
		}
		x := make([]float64, g.Len())
		f.Inverse(x, s)
		for i, v := range x {
			if math.Abs(v-c.IRfftn[i]) > 1e-12*100 {
				t.Fatalf("N=%d Inverse[%d] = %v, numpy irfftn %v", n, i, v, c.IRfftn[i])
			}
		}
	}
}

// Inverse(Forward(x)) = x: the definition of the normalised inverse DFT.
func TestRoundTrip(t *testing.T) {
	for _, n := range []int{2, 4, 6, 16, 32} {
		g := Geometry{N: n, L: 1}
		f := mustFFT(t, n)
		x := randomField(n, uint64(n))
		k := make([]complex128, g.HalfLen())
		f.Forward(k, x)
		y := make([]float64, g.Len())
		f.Inverse(y, k)
		for i := range x {
			if math.Abs(x[i]-y[i]) > 1e-12 {
				t.Fatalf("N=%d: round trip [%d] %v → %v", n, i, x[i], y[i])
			}
		}
	}
}

// Parseval's theorem for the DFT: Σ|x|² = N⁻³ Σ_full |F|², with half
// spectrum modes 0 < kz < N/2 counted twice.
func TestParseval(t *testing.T) {
	n := 16
	g := Geometry{N: n, L: 1}
	x := randomField(n, 3)
	k := make([]complex128, g.HalfLen())
	mustFFT(t, n).Forward(k, x)
	var sx, sk float64
	for _, v := range x {
		sx += v * v
	}
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			for kz := 0; kz <= n/2; kz++ {
				m := 2.0
				if kz == 0 || kz == n/2 {
					m = 1
				}
				v := k[g.KIndex(i, j, kz)]
				sk += m * (real(v)*real(v) + imag(v)*imag(v))
			}
		}
	}
	sk /= float64(n * n * n)
	if math.Abs(sx-sk) > 1e-10*sx {
		t.Fatalf("Parseval: Σx² = %v, N⁻³Σ|F|² = %v", sx, sk)
	}
}

// A plane wave cos(2π(a i + b j + c k)/N) with 0 < c < N/2 has half
// spectrum N³/2 at (a, b, c) and zero elsewhere (its partner (−a,−b,−c) is
// in the other half); the sign of the exponent in Forward is checked with
// a sine, whose coefficient is −i N³/2 for exp(−i k·x).
func TestPlaneWave(t *testing.T) {
	n := 8
	g := Geometry{N: n, L: 1}
	f := mustFFT(t, n)
	a, b, c := 3, 6, 1 // b = 6 is frequency −2
	for _, sine := range []bool{false, true} {
		x := make([]float64, g.Len())
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				for k := 0; k < n; k++ {
					ph := 2 * math.Pi * float64(a*i+b*j+c*k) / float64(n)
					if sine {
						x[g.Index(i, j, k)] = math.Sin(ph)
					} else {
						x[g.Index(i, j, k)] = math.Cos(ph)
					}
				}
			}
		}
		out := make([]complex128, g.HalfLen())
		f.Forward(out, x)
		want := complex(float64(n*n*n)/2, 0)
		if sine {
			want = complex(0, -float64(n*n*n)/2)
		}
		for idx, v := range out {
			w := complex128(0)
			if idx == g.KIndex(a, b, c) {
				w = want
			}
			if cmplx.Abs(v-w) > 1e-10 {
				t.Fatalf("sine=%v: mode %d = %v, want %v", sine, idx, v, w)
			}
		}
	}
}

// bruteForce returns the full-spectrum DFT F(k) = Σ_x x exp(−i k·x) of a
// small real field, straight from the definition.
func bruteForce(x []float64, n int) []complex128 {
	F := make([]complex128, n*n*n)
	for a := 0; a < n; a++ {
		for b := 0; b < n; b++ {
			for c := 0; c < n; c++ {
				var s complex128
				for i := 0; i < n; i++ {
					for j := 0; j < n; j++ {
						for k := 0; k < n; k++ {
							ph := -2 * math.Pi * float64(a*i+b*j+c*k) / float64(n)
							s += complex(x[(i*n+j)*n+k], 0) * cmplx.Exp(complex(0, ph))
						}
					}
				}
				F[(a*n+b)*n+c] = s
			}
		}
	}
	return F
}

// PowerSpectrum equals a brute-force average of V/N⁶|F|² over the full
// DFT spectrum (computed from the DFT definition), with the same mode
// counts; this pins the Hermitian weighting of the kz = 0 and N/2 planes.
func TestPowerSpectrumBruteForce(t *testing.T) {
	n := 8
	g := Geometry{N: n, L: 100}
	x := randomField(n, 11)
	half := make([]complex128, g.HalfLen())
	mustFFT(t, n).Forward(half, x)
	kf := 2 * math.Pi / g.L
	edges := []float64{0, 1.5 * kf, 2.5 * kf, 3.5 * kf, 4.5 * kf, 7 * kf}
	got := PowerSpectrum(half, g, edges)

	full := bruteForce(x, n)
	nb := len(edges) - 1
	sumP := make([]float64, nb)
	sumK := make([]float64, nb)
	cnt := make([]int, nb)
	for a := 0; a < n; a++ {
		for b := 0; b < n; b++ {
			for c := 0; c < n; c++ {
				if a == 0 && b == 0 && c == 0 {
					continue
				}
				ka, kb, kc := g.Wavenumber(a), g.Wavenumber(b), g.Wavenumber(c)
				km := math.Sqrt(ka*ka + kb*kb + kc*kc)
				for bin := 0; bin < nb; bin++ {
					if km >= edges[bin] && km < edges[bin+1] {
						v := full[(a*n+b)*n+c]
						sumP[bin] += real(v)*real(v) + imag(v)*imag(v)
						sumK[bin] += km
						cnt[bin]++
					}
				}
			}
		}
	}
	total := 0
	for bin := range got {
		total += got[bin].Modes
		if got[bin].Modes != cnt[bin] {
			t.Errorf("bin %d: %d modes, brute force %d", bin, got[bin].Modes, cnt[bin])
		}
		wantP := g.Volume() / math.Pow(float64(n), 6) * sumP[bin] / float64(cnt[bin])
		if math.Abs(got[bin].P-wantP) > 1e-10*wantP {
			t.Errorf("bin %d: P = %v, brute force %v", bin, got[bin].P, wantP)
		}
		if wk := sumK[bin] / float64(cnt[bin]); math.Abs(got[bin].KMean-wk) > 1e-12*wk {
			t.Errorf("bin %d: KMean = %v, brute force %v", bin, got[bin].KMean, wk)
		}
	}
	// The largest |k| on an 8³ grid is √3·4 k_f < 7 k_f, so every mode but
	// k = 0 is binned.
	if total != n*n*n-1 {
		t.Errorf("binned %d modes, want N³−1 = %d", total, n*n*n-1)
	}
	cross := CrossSpectrum(half, half, g, edges)
	for bin := range got {
		if cross[bin] != got[bin] {
			t.Errorf("bin %d: CrossSpectrum(a,a) %+v ≠ PowerSpectrum %+v", bin, cross[bin], got[bin])
		}
	}
}

// A half spectrum with |δ_k| = A on every mode has P = V/N⁶·A² in every
// bin: the normalisation P(k) = V⟨|δ_k|²⟩/N⁶ of the unnormalised DFT
// (from memory: the usual FFT estimator, e.g. Jing 2005). The phases are
// random, so no Hermitian structure is needed for this check. An empty
// bin is NaN.
func TestPowerSpectrumKnownAmplitude(t *testing.T) {
	n := 16
	g := Geometry{N: n, L: 500}
	A := 3.0
	r := rand.New(rand.NewPCG(1, 2))
	dk := make([]complex128, g.HalfLen())
	for i := range dk {
		dk[i] = cmplx.Rect(A, 2*math.Pi*r.Float64())
	}
	kf := 2 * math.Pi / g.L
	edges := []float64{0.1 * kf, 0.2 * kf, 1.2 * kf, 4 * kf, 8 * kf}
	ps := PowerSpectrum(dk, g, edges)
	want := g.Volume() / math.Pow(float64(n), 6) * A * A
	if ps[0].Modes != 0 || !math.IsNaN(ps[0].P) {
		t.Errorf("empty bin: %+v", ps[0])
	}
	// Bin [0.2, 1.2) k_f holds the 6 modes with one unit frequency.
	if ps[1].Modes != 6 {
		t.Errorf("bin 1 has %d modes, want 6", ps[1].Modes)
	}
	for _, b := range ps[1:] {
		if math.Abs(b.P-want) > 1e-12*want {
			t.Errorf("bin %+v: P want %v", b, want)
		}
	}
	// Scaling one spectrum by 2 doubles the cross power.
	dk2 := slices.Clone(dk)
	for i := range dk2 {
		dk2[i] *= 2
	}
	cs := CrossSpectrum(dk, dk2, g, edges)
	for b := 1; b < len(cs); b++ {
		if math.Abs(cs[b].P-2*ps[b].P) > 1e-12*ps[b].P {
			t.Errorf("cross bin %d: %v, want %v", b, cs[b].P, 2*ps[b].P)
		}
	}
}

// Smoothing a unit mass at a cell centre with SmoothGaussian gives the
// sampled 3D normal density H³(2πR²)^(−3/2) exp(−r²/2R²) (R ≫ H, so
// aliasing is below 1e-8, and R ≪ L, so periodic images are negligible).
func TestSmoothGaussianPoint(t *testing.T) {
	n := 32
	g := Geometry{N: n, L: 64}
	R := 4.0
	x := make([]float64, g.Len())
	c := n / 2
	x[g.Index(c, c, c)] = 1
	f := mustFFT(t, n)
	dk := make([]complex128, g.HalfLen())
	f.Forward(dk, x)
	SmoothGaussian(dk, g, R)
	f.Inverse(x, dk)
	h := g.H()
	norm := h * h * h / math.Pow(2*math.Pi*R*R, 1.5)
	for _, d := range [][3]int{{0, 0, 0}, {1, 0, 0}, {2, 3, -1}, {-4, 2, 5}} {
		r2 := float64(d[0]*d[0]+d[1]*d[1]+d[2]*d[2]) * h * h
		want := norm * math.Exp(-r2/(2*R*R))
		got := x[g.Index(c+d[0], c+d[1], c+d[2])]
		if math.Abs(got-want) > 1e-7*norm {
			t.Errorf("offset %v: %v, want %v", d, got, want)
		}
	}
}

// Gradient and Hessian of sin(k₀x) are k₀cos(k₀x) and −k₀²sin(k₀x);
// ∂²/∂x∂y of sin(k₀x)sin(k₀y) is k₀²cos(k₀x)cos(k₀y).
func TestDerivatives(t *testing.T) {
	n := 16
	g := Geometry{N: n, L: 10}
	f := mustFFT(t, n)
	k0 := 3 * 2 * math.Pi / g.L
	x := make([]float64, g.Len())
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			for k := 0; k < n; k++ {
				xi, yj := float64(i)*g.H(), float64(j)*g.H()
				x[g.Index(i, j, k)] = math.Sin(k0*xi) * math.Sin(k0*yj)
			}
		}
	}
	spec := make([]complex128, g.HalfLen())
	f.Forward(spec, x)
	work := make([]complex128, g.HalfLen())
	out := make([]float64, g.Len())
	check := func(name string, want func(xi, yj float64) float64) {
		f.Inverse(out, work)
		for i := 0; i < n; i++ {
			for j := 0; j < n; j++ {
				xi, yj := float64(i)*g.H(), float64(j)*g.H()
				if d := out[g.Index(i, j, 5)] - want(xi, yj); math.Abs(d) > 1e-10*k0*k0 {
					t.Fatalf("%s at (%d,%d): off by %v", name, i, j, d)
				}
			}
		}
	}
	Gradient(work, spec, g, 0)
	check("d/dx", func(xi, yj float64) float64 { return k0 * math.Cos(k0*xi) * math.Sin(k0*yj) })
	Hessian(work, spec, g, 0, 0)
	check("d2/dx2", func(xi, yj float64) float64 { return -k0 * k0 * math.Sin(k0*xi) * math.Sin(k0*yj) })
	Hessian(work, spec, g, 0, 1)
	check("d2/dxdy", func(xi, yj float64) float64 { return k0 * k0 * math.Cos(k0*xi) * math.Cos(k0*yj) })
	Gradient(work, spec, g, 2)
	check("d/dz", func(xi, yj float64) float64 { return 0 })

	// The x-Nyquist wave cos(πi) has derivative −(πN/L)·sin(πi) = 0 at
	// every grid point; Gradient zeroes that plane, so it must give 0.
	for i := 0; i < n; i++ {
		for j := 0; j < n*n; j++ {
			x[i*n*n+j] = math.Cos(math.Pi * float64(i))
		}
	}
	f.Forward(spec, x)
	if v := spec[g.KIndex(n/2, 0, 0)]; math.Abs(real(v)-float64(n*n*n)) > 1e-9 {
		t.Fatalf("Nyquist mode %v, want N³", v)
	}
	Gradient(work, spec, g, 0)
	check("d/dx Nyquist", func(xi, yj float64) float64 { return 0 })
}

// DeconvolveCIC divides by Π sinc²(k_i H/2): at the x-Nyquist mode that is
// sinc²(π/2) = 4/π², at (1,2,0) sinc²(π/N)·sinc²(2π/N).
func TestDeconvolveCIC(t *testing.T) {
	n := 8
	g := Geometry{N: n, L: 3}
	dk := make([]complex128, g.HalfLen())
	for i := range dk {
		dk[i] = 1
	}
	DeconvolveCIC(dk, g)
	s := func(x float64) float64 { return math.Sin(x) / x }
	cases := []struct {
		i, j, k int
		w       float64
	}{
		{0, 0, 0, 1},
		{n / 2, 0, 0, 4 / (math.Pi * math.Pi)},
		{1, 2, 0, math.Pow(s(math.Pi/8)*s(2*math.Pi/8), 2)},
		{7, 0, 4, math.Pow(s(-math.Pi/8)*s(math.Pi/2), 2)},
	}
	for _, c := range cases {
		got := real(dk[g.KIndex(c.i, c.j, c.k)])
		if math.Abs(got-1/c.w) > 1e-12/c.w {
			t.Errorf("mode %d,%d,%d: %v, want %v", c.i, c.j, c.k, got, 1/c.w)
		}
	}
}

// Two particles by hand: a unit mass at a cell centre lands wholly in
// that cell; a mass of 2 at a quarter cell past the centre of cell
// (N−1, 0, 0) on x and half a cell past on y splits 2·(3/4, 1/4) on x
// (wrapping to cell 0) and (1/2, 1/2) on y (Hockney & Eastwood 1981 CIC
// weights are the overlap of a cell-sized cube with each cell).
func TestAssignCICHand(t *testing.T) {
	n := 4
	g := Geometry{N: n, L: 8, Origin: [3]float64{-1, 0, 10}}
	h := g.H()
	pos := []float64{
		-1 + 1.5*h, 2.5 * h, 10 + 0.5*h, // centre of cell (1, 2, 0)
		-1 + (float64(n)-1+0.5+0.25)*h + g.L, (0.5 + 0.5) * h, 10 + 3.5*h, // wraps on x
	}
	w := []float64{1, 2}
	dst := make([]float64, g.Len())
	AssignCIC(dst, g, pos, w)
	want := make([]float64, g.Len())
	want[g.Index(1, 2, 0)] += 1
	want[g.Index(3, 0, 3)] += 2 * 0.75 * 0.5
	want[g.Index(3, 1, 3)] += 2 * 0.75 * 0.5
	want[g.Index(0, 0, 3)] += 2 * 0.25 * 0.5
	want[g.Index(0, 1, 3)] += 2 * 0.25 * 0.5
	for i := range dst {
		if math.Abs(dst[i]-want[i]) > 1e-15 {
			t.Fatalf("cell %d: %v, want %v", i, dst[i], want[i])
		}
	}
}

// CIC weights of each particle sum to its mass, so total mass is kept: to
// the last bit for positions on a 1/64-cell lattice (all weights exact in
// binary), to rounding for random positions, wherever the particles lie.
func TestAssignCICMass(t *testing.T) {
	n := 16
	g := Geometry{N: n, L: 32, Origin: [3]float64{5, -3, 0}}
	r := rand.New(rand.NewPCG(5, 5))
	np := 100000
	pos := make([]float64, 3*np)
	exact := make([]float64, 3*np)
	for i := range pos {
		pos[i] = g.Origin[i%3] + (3*r.Float64()-1)*g.L
		exact[i] = g.Origin[i%3] + float64(r.IntN(64*n*3)-64*n)*g.H()/64
	}
	dst := make([]float64, g.Len())
	AssignCIC(dst, g, exact, nil)
	var sum float64
	for _, v := range dst {
		sum += v
	}
	if sum != float64(np) {
		t.Errorf("lattice positions: mass %v, want exactly %d", sum, np)
	}
	w := make([]float64, np)
	var wsum float64
	for i := range w {
		w[i] = r.Float64()
		wsum += w[i]
	}
	AssignCIC(dst, g, pos, w)
	sum = 0
	for _, v := range dst {
		sum += v
		if v < 0 {
			t.Fatalf("negative cell mass %v", v)
		}
	}
	if math.Abs(sum-wsum) > 1e-12*wsum {
		t.Errorf("random positions: mass %v, want %v", sum, wsum)
	}
}

// Trilinear interpolation reproduces a linear field exactly between cell
// centres, and AssignCIC is its adjoint: Σ_cells f·CIC(p) = Σ_p interp(f).
func TestInterpolateTrilinear(t *testing.T) {
	n := 8
	g := Geometry{N: n, L: 4, Origin: [3]float64{1, 2, 3}}
	h := g.H()
	lin := func(x, y, z float64) float64 { return 0.5 + 2*x - 3*y + 0.25*z }
	field := make([]float64, g.Len())
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			for k := 0; k < n; k++ {
				field[g.Index(i, j, k)] = lin(g.Origin[0]+(float64(i)+0.5)*h,
					g.Origin[1]+(float64(j)+0.5)*h, g.Origin[2]+(float64(k)+0.5)*h)
			}
		}
	}
	r := rand.New(rand.NewPCG(9, 9))
	np := 1000
	pos := make([]float64, 3*np)
	for i := range pos {
		// Between the first and last cell centres: no periodic wrap.
		pos[i] = g.Origin[i%3] + (0.5+float64(n-1)*r.Float64())*h
	}
	got := make([]float64, np)
	InterpolateTrilinear(got, field, g, pos)
	for p := range got {
		want := lin(pos[3*p], pos[3*p+1], pos[3*p+2])
		if math.Abs(got[p]-want) > 1e-12 {
			t.Fatalf("particle %d: %v, want %v", p, got[p], want)
		}
	}
	// Adjointness with wrapped positions and a random field.
	for i := range pos {
		pos[i] = g.Origin[i%3] + (2*r.Float64()-0.5)*g.L
	}
	for i := range field {
		field[i] = r.NormFloat64()
	}
	InterpolateTrilinear(got, field, g, pos)
	mass := make([]float64, g.Len())
	AssignCIC(mass, g, pos, nil)
	var a, b float64
	for i := range field {
		a += field[i] * mass[i]
	}
	for _, v := range got {
		b += v
	}
	if math.Abs(a-b) > 1e-10*math.Abs(a) {
		t.Errorf("adjoint: %v vs %v", a, b)
	}
}

// Results are bit-for-bit the same with GOMAXPROCS 1 and 2.
func TestDeterministicAcrossThreads(t *testing.T) {
	n := 32
	g := Geometry{N: n, L: 100}
	f := mustFFT(t, n)
	x := randomField(n, 21)
	r := rand.New(rand.NewPCG(4, 4))
	np := cicBatch + 1000 // more than one batch
	pos := make([]float64, 3*np)
	for i := range pos {
		pos[i] = r.Float64() * g.L
	}
	edges := []float64{0, 0.1, 0.3, 1, 3}
	run := func(procs int) ([]complex128, []float64, []float64, []PowerBin) {
		old := runtime.GOMAXPROCS(procs)
		defer runtime.GOMAXPROCS(old)
		dk := make([]complex128, g.HalfLen())
		f.Forward(dk, x)
		ps := PowerSpectrum(dk, g, edges)
		back := make([]float64, g.Len())
		f.Inverse(back, slices.Clone(dk))
		m := make([]float64, g.Len())
		AssignCIC(m, g, pos, nil)
		return dk, back, m, ps
	}
	k1, b1, m1, p1 := run(1)
	k2, b2, m2, p2 := run(2)
	if !slices.Equal(k1, k2) || !slices.Equal(b1, b2) || !slices.Equal(m1, m2) {
		t.Error("transform or CIC grid differs between GOMAXPROCS 1 and 2")
	}
	for i := range p1 {
		if p1[i] != p2[i] {
			t.Errorf("power bin %d differs: %+v vs %+v", i, p1[i], p2[i])
		}
	}
}

func TestNewFFTRejects(t *testing.T) {
	for _, n := range []int{-2, 0, 1, 3, 9} {
		if _, err := NewFFT(n); err == nil {
			t.Errorf("NewFFT(%d) accepted", n)
		}
	}
	if (Geometry{N: 3, L: 1}).Validate() == nil || (Geometry{N: 4, L: 0}).Validate() == nil {
		t.Error("Validate accepted a bad geometry")
	}
	if err := (Geometry{N: 4, L: 1}).Validate(); err != nil {
		t.Error(err)
	}
}

// BenchmarkFFT256 is one forward and one inverse transform of a 256³ grid.
func BenchmarkFFT256(b *testing.B) {
	n := 256
	g := Geometry{N: n, L: 1}
	f := mustFFT(b, n)
	x := randomField(n, 1)
	dk := make([]complex128, g.HalfLen())
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		f.Forward(dk, x)
		f.Inverse(x, dk)
	}
}

// BenchmarkForward256 is one forward transform of a 256³ grid.
func BenchmarkForward256(b *testing.B) {
	n := 256
	g := Geometry{N: n, L: 1}
	f := mustFFT(b, n)
	x := randomField(n, 1)
	dk := make([]complex128, g.HalfLen())
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		f.Forward(dk, x)
	}
}

// BenchmarkAssignCIC256 assigns 256³ particles to a 256³ grid.
func BenchmarkAssignCIC256(b *testing.B) {
	n := 256
	g := Geometry{N: n, L: 1000}
	r := rand.New(rand.NewPCG(1, 1))
	pos := make([]float64, 3*n*n*n)
	for i := range pos {
		pos[i] = r.Float64() * g.L
	}
	dst := make([]float64, g.Len())
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		AssignCIC(dst, g, pos, nil)
	}
}

// BenchmarkFFT512 is one forward and one inverse transform of a 512³ grid
// (about 2.1 GB of field and spectrum); run it under /usr/bin/time -v to
// see the peak memory.
func BenchmarkFFT512(b *testing.B) {
	n := 512
	g := Geometry{N: n, L: 1}
	f := mustFFT(b, n)
	x := make([]float64, g.Len())
	for i := range x {
		x[i] = float64(i%1000) * 1e-3
	}
	dk := make([]complex128, g.HalfLen())
	b.ReportAllocs()
	b.ResetTimer()
	for b.Loop() {
		f.Forward(dk, x)
		f.Inverse(x, dk)
	}
}

// cicWeights agrees with a direct evaluation through math.Mod, including
// positions several boxes away and just below a cell centre.
func TestCICWeightsWrap(t *testing.T) {
	n := 8
	g := Geometry{N: n, L: 16, Origin: [3]float64{-3, 0, 0}}
	h := g.H()
	r := rand.New(rand.NewPCG(2, 3))
	xs := []float64{-3, -3 + 16, -3 + h/2, -3 + h/2 - 1e-15, -3 - 1e-300, 13 - 1e-14, -3 + 5*16 + 0.3, -3 - 7*16 + 0.7}
	for range 1000 {
		xs = append(xs, -3+(r.Float64()*10-5)*g.L)
	}
	for _, x := range xs {
		i, d := cicWeights(x, g.Origin[0], 1/h, n)
		u := math.Mod((x-g.Origin[0])/h-0.5, float64(n))
		if u < 0 {
			u += float64(n)
		}
		wi := int(math.Floor(u)) % n
		wd := u - math.Floor(u)
		if i < 0 || i >= n || d < 0 || d >= 1 {
			t.Fatalf("x=%v: cell %d weight %v out of range", x, i, d)
		}
		// Equal up to rounding, allowing the wrap 0 ↔ 1 of d at a centre.
		same := i == wi && math.Abs(d-wd) < 1e-9
		wrapped := (i == (wi+1)%n && d < 1e-9 && wd > 1-1e-9) || (wi == (i+1)%n && wd < 1e-9 && d > 1-1e-9)
		if !same && !wrapped {
			t.Errorf("x=%v: (%d, %v), math.Mod gives (%d, %v)", x, i, d, wi, wd)
		}
	}
}

// Over more than one batch of particles AssignCIC matches a plain serial
// loop over the particles using the textbook CIC weights (Hockney &
// Eastwood 1981) evaluated with math.Mod.
func TestAssignCICBatches(t *testing.T) {
	n := 16
	g := Geometry{N: n, L: 50, Origin: [3]float64{1, 2, 3}}
	np := cicBatch + 12345
	r := rand.New(rand.NewPCG(8, 8))
	pos := make([]float64, 3*np)
	w := make([]float64, np)
	for i := range pos {
		pos[i] = g.Origin[i%3] + (1.2*r.Float64()-0.1)*g.L
	}
	for i := range w {
		w[i] = r.Float64() + 0.5
	}
	got := make([]float64, g.Len())
	AssignCIC(got, g, pos, w)
	want := make([]float64, g.Len())
	h := g.H()
	for p := 0; p < np; p++ {
		var c [3]int
		var d [3]float64
		for a := 0; a < 3; a++ {
			u := math.Mod((pos[3*p+a]-g.Origin[a])/h-0.5+float64(n), float64(n))
			c[a] = int(math.Floor(u))
			d[a] = u - math.Floor(u)
		}
		for a := 0; a < 8; a++ {
			wt := w[p]
			var idx [3]int
			for ax := 0; ax < 3; ax++ {
				if a>>ax&1 == 1 {
					wt *= d[ax]
					idx[ax] = (c[ax] + 1) % n
				} else {
					wt *= 1 - d[ax]
					idx[ax] = c[ax] % n
				}
			}
			want[g.Index(idx[0], idx[1], idx[2])] += wt
		}
	}
	for i := range got {
		if math.Abs(got[i]-want[i]) > 1e-9*math.Abs(want[i]) {
			t.Fatalf("cell %d: %v, serial loop %v", i, got[i], want[i])
		}
	}
}

// The 5-smooth ("regular") numbers are OEIS A051037: 1, 2, 3, 4, 5, 6, 8,
// 9, 10, 12, 15, 16, 18, 20, 24, 25, 27, 30, 32, 36, 40, 45, 48, 50, 54,
// 60, 64, …; FastSize must return the even ones.
func TestFastSize(t *testing.T) {
	regular := []int{2, 4, 6, 8, 10, 12, 16, 18, 20, 24, 30, 32, 36, 40, 48, 50, 54, 60, 64}
	want := func(n int) int {
		for _, r := range regular {
			if r >= n {
				return r
			}
		}
		return -1
	}
	for n := -3; n <= 64; n++ {
		if got := FastSize(n); got != want(n) {
			t.Errorf("FastSize(%d) = %d, want %d", n, got, want(n))
		}
	}
	for _, c := range []struct{ n, up, down int }{
		{356, 360, 324}, {257, 270, 256}, {512, 512, 512}, {513, 540, 512}, {3, 4, 2},
	} {
		if got := FastSize(c.n); got != c.up {
			t.Errorf("FastSize(%d) = %d, want %d", c.n, got, c.up)
		}
		if got := FastSizeBelow(c.n); got != c.down {
			t.Errorf("FastSizeBelow(%d) = %d, want %d", c.n, got, c.down)
		}
	}
}
