package mock

import (
	"math"
	"runtime"
	"testing"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/reconstruct/grid"
)

func planck(t testing.TB) (*cosmo.Model, *cosmo.LinearPower) {
	t.Helper()
	p, err := cosmo.Preset("planck2018")
	if err != nil {
		t.Fatal(err)
	}
	m, err := cosmo.New(p)
	if err != nil {
		t.Fatal(err)
	}
	lp, err := m.LinearPower(cosmo.PowerOptions{})
	if err != nil {
		t.Fatal(err)
	}
	return m, lp
}

// expectedField returns the half spectrum with |δ_k|² = P(k) N⁶/V exactly,
// so that grid.PowerSpectrum of it is the input P averaged over the same
// modes as a measurement.
func expectedField(g grid.Geometry, lp *cosmo.LinearPower, window func(k float64) float64) []complex128 {
	dk := make([]complex128, g.HalfLen())
	n3 := float64(g.Len())
	g.EachMode(func(kx, ky, kz float64, idx int) {
		k := math.Sqrt(kx*kx + ky*ky + kz*kz)
		w := 1.0
		if window != nil {
			w = window(k)
		}
		dk[idx] = complex(w*math.Sqrt(lp.At(k)*n3*n3/g.Volume()), 0)
	})
	dk[0] = 0
	return dk
}

// TestLinearFieldPower measures the power spectrum of a generated field and
// compares it in every k bin with the input averaged over the same modes.
// Each independent mode's |δ_k|² is exponentially distributed (a Gaussian
// field), so a bin mean over M independent modes has relative standard
// deviation 1/√M (Feldman, Kaiser & Peacock 1994, eq. 2.4.6 without shot
// noise; M = half the full-spectrum modes counted by PowerSpectrum, as
// partners are not independent). Each bin must lie within 4σ and the sum
// of squared deviations must look like χ² with one degree per bin.
func TestLinearFieldPower(t *testing.T) {
	m, lp := planck(t)
	_ = m
	g := grid.Geometry{N: 64, L: 500}
	fft, err := grid.NewFFT(g.N)
	if err != nil {
		t.Fatal(err)
	}
	dk := make([]complex128, g.HalfLen())
	if err := LinearField(dk, make([]float64, g.Len()), fft, g, lp, 7); err != nil {
		t.Fatal(err)
	}
	kf := 2 * math.Pi / g.L
	var edges []float64
	for k := 1.5 * kf; k < 0.7*math.Pi/g.H(); k += 2 * kf {
		edges = append(edges, k)
	}
	got := grid.PowerSpectrum(dk, g, edges)
	want := grid.PowerSpectrum(expectedField(g, lp, nil), g, edges)
	var chi2 float64
	for i := range got {
		indep := float64(got[i].Modes) / 2
		sigma := 1 / math.Sqrt(indep)
		dev := (got[i].P/want[i].P - 1) / sigma
		chi2 += dev * dev
		if math.Abs(dev) > 4 {
			t.Errorf("k = %.3f h/Mpc: P = %.4g, input %.4g (%.1fσ, %d modes)", got[i].KMean, got[i].P, want[i].P, dev, got[i].Modes)
		}
	}
	nb := float64(len(got))
	t.Logf("%d bins, χ² = %.1f", len(got), chi2)
	if chi2 > nb+5*math.Sqrt(2*nb) {
		t.Errorf("χ² = %.1f for %d bins", chi2, len(got))
	}
}

// TestSigma8InBox smooths a generated field with the 8 Mpc/h top-hat,
// measures the variance over the cells in real space and compares it with
// the expectation for the box, Σ_k P(k) W²(8k)/V over the box's modes; the
// standard deviation of the measurement is √(Σ c_m²) over independent modes
// with c_m their contribution (each |δ_k|² exponential). The box expectation
// itself must be within 5% of σ8² (the box misses k < 2π/L and k > k_Nyq).
func TestSigma8InBox(t *testing.T) {
	_, lp := planck(t)
	g := grid.Geometry{N: 128, L: 1000}
	fft, err := grid.NewFFT(g.N)
	if err != nil {
		t.Fatal(err)
	}
	dk := make([]complex128, g.HalfLen())
	work := make([]float64, g.Len())
	if err := LinearField(dk, work, fft, g, lp, 11); err != nil {
		t.Fatal(err)
	}
	w := func(k float64) float64 {
		x := 8 * k
		if x < 1e-3 {
			return 1
		}
		return 3 * (math.Sin(x) - x*math.Cos(x)) / (x * x * x)
	}
	g.EachMode(func(kx, ky, kz float64, idx int) { dk[idx] *= complex(w(math.Sqrt(kx*kx+ky*ky+kz*kz)), 0) })
	fft.Inverse(work, dk)
	var s2 float64
	for _, v := range work {
		s2 += v * v
	}
	s2 /= float64(len(work))
	// Expectation and its error from the same modes.
	var exp2, var2 float64
	n := g.N
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			for k := 0; k <= n/2; k++ {
				kx, ky, kz := g.Wavenumber(i), g.Wavenumber(j), g.Wavenumber(k)
				kk := math.Sqrt(kx*kx + ky*ky + kz*kz)
				if kk == 0 {
					continue
				}
				c := lp.At(kk) * w(kk) * w(kk) / g.Volume()
				mult := 1.0
				if k > 0 && k < n/2 {
					mult = 2
				}
				exp2 += mult * c
				// A Hermitian pair (mult 2) is one complex mode worth 2c with
				// variance (2c)²; a self-conjugate mode (mult 1) is real, worth
				// c with variance 2c². Both are 2·mult·c².
				var2 += 2 * mult * c * c
			}
		}
	}
	sigma8 := 0.8102
	t.Logf("σ8 measured %.4f, box expectation %.4f ± %.4f (σ², %.4f ± %.4f), requested %.4f",
		math.Sqrt(s2), math.Sqrt(exp2), 0.5*math.Sqrt(var2)/math.Sqrt(exp2), s2, math.Sqrt(var2), sigma8)
	if math.Abs(s2-exp2) > 4*math.Sqrt(var2) {
		t.Errorf("σ²(8) = %.5f, box expectation %.5f ± %.5f", s2, exp2, math.Sqrt(var2))
	}
	if r := exp2 / (sigma8 * sigma8); r < 0.95 || r > 1 {
		t.Errorf("box captures %.3f of σ8²; want 0.95–1", r)
	}
}

// TestSecondOrderCrossedWaves checks the displacement fields for δ = A cos
// k1x + B cos k2y, where everything is analytic: Ψ1 = −(A sin k1x / k1,
// B sin k2y / k2, 0); the 2LPT source is φ,xx φ,yy = AB cos k1x cos k2y, so
// φ2 = −AB cos k1x cos k2y /(k1²+k2²) and Ψ2 = ∇φ2 (Scoccimarro 1998, eq.
// A4). A single plane wave (B = 0) has no second-order displacement: the
// Zel'dovich solution is exact in one dimension (Zel'dovich 1970).
func TestSecondOrderCrossedWaves(t *testing.T) {
	m, _ := planck(t)
	g := grid.Geometry{N: 32, L: 100}
	h := g.H()
	k1, k2 := 2*math.Pi/g.L*2, 2*math.Pi/g.L*3
	for _, B := range []float64{0, 0.3} {
		A := 0.5
		x := make([]float64, g.Len())
		for i := 0; i < g.N; i++ {
			for j := 0; j < g.N; j++ {
				for k := 0; k < g.N; k++ {
					qx, qy := (float64(i)+0.5)*h, (float64(j)+0.5)*h
					x[g.Index(i, j, k)] = A*math.Cos(k1*qx) + B*math.Cos(k2*qy)
				}
			}
		}
		fft, _ := grid.NewFFT(g.N)
		dk := make([]complex128, g.HalfLen())
		fft.Forward(dk, x)
		r, err := GenerateFrom(Config{Model: m, N: g.N, L: g.L, Order: 2}, dk)
		if err != nil {
			t.Fatal(err)
		}
		var worst float64
		for i := 0; i < g.N; i++ {
			for j := 0; j < g.N; j++ {
				for k := 0; k < g.N; k++ {
					qx, qy := (float64(i)+0.5)*h, (float64(j)+0.5)*h
					id := g.Index(i, j, k)
					want := [6]float64{
						-A * math.Sin(k1*qx) / k1, -B * math.Sin(k2*qy) / k2, 0,
						A * B * k1 * math.Sin(k1*qx) * math.Cos(k2*qy) / (k1*k1 + k2*k2),
						A * B * k2 * math.Cos(k1*qx) * math.Sin(k2*qy) / (k1*k1 + k2*k2), 0,
					}
					got := [6]float32{r.Psi1[0][id], r.Psi1[1][id], r.Psi1[2][id], r.Psi2[0][id], r.Psi2[1][id], r.Psi2[2][id]}
					for c := range got {
						worst = math.Max(worst, math.Abs(float64(got[c])-want[c]))
					}
				}
			}
		}
		if worst > 1e-5 {
			t.Errorf("B = %v: largest displacement error %.3g Mpc/h", B, worst)
		}
	}
}

// TestGenerateDeterministic checks that a realisation depends on the seed
// only: the same seed gives identical fields, another seed different ones.
func TestGenerateDeterministic(t *testing.T) {
	m, lp := planck(t)
	cfg := Config{Model: m, Power: lp, N: 16, L: 200, Seed: 3, Order: 2}
	a, err := Generate(cfg)
	if err != nil {
		t.Fatal(err)
	}
	b, _ := Generate(cfg)
	cfg.Seed = 4
	c, _ := Generate(cfg)
	same, differ := true, false
	for i := range a.Psi2[0] {
		same = same && a.Psi2[0][i] == b.Psi2[0][i] && a.Psi1[2][i] == b.Psi1[2][i]
		differ = differ || a.Psi1[0][i] != c.Psi1[0][i]
	}
	if !same || !differ {
		t.Errorf("same seed identical: %v; other seed differs: %v", same, differ)
	}
}

// TestThreadsIndependent checks the project rule that results do not depend
// on the number of threads: the fields, a box snapshot and a survey are
// identical with GOMAXPROCS 1 and 2.
func TestThreadsIndependent(t *testing.T) {
	m, lp := planck(t)
	run := func(procs int) (*Realisation, *Survey) {
		old := runtime.GOMAXPROCS(procs)
		defer runtime.GOMAXPROCS(old)
		r, err := Generate(Config{Model: m, Power: lp, N: 32, L: 300, Seed: 5, Order: 2})
		if err != nil {
			t.Fatal(err)
		}
		s, err := r.Survey(SurveyOptions{Footprint: allSkyT{}, NBar: func(float64) float64 { return 0.001 }, ZMax: 0.04, Bias: 1.3, AutoObserver: true})
		if err != nil {
			t.Fatal(err)
		}
		return r, s
	}
	r1, s1 := run(1)
	r2, s2 := run(2)
	for a := 0; a < 3; a++ {
		for i := range r1.Psi1[a] {
			if r1.Psi1[a][i] != r2.Psi1[a][i] || r1.Psi2[a][i] != r2.Psi2[a][i] {
				t.Fatalf("Ψ differs at cell %d axis %d", i, a)
			}
		}
	}
	if s1.Len() != s2.Len() || s1.Len() == 0 {
		t.Fatalf("surveys of %d and %d galaxies", s1.Len(), s2.Len())
	}
	for i := range s1.Z {
		if s1.Z[i] != s2.Z[i] || s1.ID[i] != s2.ID[i] {
			t.Fatalf("galaxy %d differs", i)
		}
	}
}

type allSkyT struct{}

func (allSkyT) Completeness(ra, dec float64) float64 { return 1 }
