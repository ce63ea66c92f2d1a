package mock

import (
	"fmt"
	"math"
	"runtime"
	"runtime/debug"
	"sync"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/internal/parallel"
	"github.com/filigree-survey/filigree/reconstruct/grid"
)

// Config chooses a realisation of the initial conditions.
type Config struct {
	// Model is the background cosmology (growth factors and rates).
	Model *cosmo.Model
	// Power is the linear power spectrum today.
	Power *cosmo.LinearPower
	// N is the number of grid cells (and particles) per side, even, ≥ 4.
	N int
	// L is the side of the periodic box in Mpc/h.
	L float64
	// Seed selects the realisation.
	Seed uint64
	// Order is 1 for Zel'dovich displacements, 2 for second-order LPT.
	Order int
	// BiasSmooth is the Gaussian smoothing radius (Mpc/h) of the linear
	// field that galaxy selection responds to; 0 means 1.5 cells.
	BiasSmooth float64
	// KeepDensity keeps the linear density contrast δ_L(q) today on the
	// grid (Realisation.Density), for writing the initial field.
	KeepDensity bool
	// Progress, when not nil, is called with a short name before each
	// step and with "" when Generate ends.
	Progress func(step string)
}

// Realisation is one set of initial conditions and its Lagrangian
// displacement fields. The particle of grid cell (i, j, k) starts at the
// cell centre q = ((i+½)H, (j+½)H, (k+½)H) (Mpc/h, box from 0 to L) and at
// growth factors D (first order, D = 1 today) and D2 (second order,
// negative; cosmo.Model.SecondOrderGrowth) sits at
//
//	x = q + D Ψ1(q) + D2 Ψ2(q)
//
// with Ψ1 = −∇φ1, ∇²φ1 = δ_L (the linear density contrast today) and
// Ψ2 = ∇φ2, ∇²φ2 = Σ_{i<j} [φ1,ii φ1,jj − (φ1,ij)²] (Scoccimarro 1998,
// MNRAS 299, 1097, eqs. A1–A4; Bouchet et al. 1995). Its velocity is
//
//	v = a H(z) [f1 D Ψ1 + f2 D2 Ψ2]
//
// which is 100 E(z)/(1+z) [f1 D Ψ1 + f2 D2 Ψ2] km/s for Ψ in Mpc/h. Fields
// are float32 (about 7 significant digits, far below the accuracy of LPT).
type Realisation struct {
	Geometry grid.Geometry
	Model    *cosmo.Model
	Order    int
	Seed     uint64
	// Psi1 and Psi2 are the x, y, z components of Ψ1 and Ψ2 on the grid
	// (Mpc/h); Psi2 is nil for Order 1.
	Psi1, Psi2 [3][]float32
	// Nu is the linear density contrast today smoothed with a Gaussian of
	// radius BiasSmooth, divided by its rms SigmaBias (so unit variance).
	Nu        []float32
	SigmaBias float64
	// BiasSmooth is the smoothing radius actually used, Mpc/h.
	BiasSmooth float64
	// Density is δ_L(q) today when Config.KeepDensity was set, else nil.
	Density []float32
	// SigmaGrid is the rms of δ_L today over the grid cells.
	SigmaGrid float64

	histOnce      sync.Once // histogram of Nu for the selection
	hist          []int64
	histLo, histW float64
}

// Generate draws the linear field and computes the displacement fields. It
// needs, for N³ cells, about 2 complex half grids and 2 real grids of
// float64 besides the float32 outputs: ≈ 8.5 GB at N = 512, ≈ 1.1 GB at
// N = 256.
func Generate(cfg Config) (*Realisation, error) {
	if cfg.Power == nil {
		return nil, fmt.Errorf("mock: Generate needs a power spectrum")
	}
	return generate(cfg, nil)
}

// GenerateFrom is Generate for a given linear density contrast today: dk is
// its half spectrum on the grid of cfg.N cells and side cfg.L (as made by
// grid.FFT.Forward); it is overwritten. cfg.Power and cfg.Seed are unused.
func GenerateFrom(cfg Config, dk []complex128) (*Realisation, error) {
	if len(dk) != cfg.N*cfg.N*(cfg.N/2+1) {
		return nil, fmt.Errorf("mock: GenerateFrom: half spectrum of length %d for N = %d", len(dk), cfg.N)
	}
	return generate(cfg, dk)
}

func generate(cfg Config, dk []complex128) (*Realisation, error) {
	if cfg.Model == nil {
		return nil, fmt.Errorf("mock: Generate needs a cosmology")
	}
	if cfg.N < 4 || cfg.N%2 != 0 {
		return nil, fmt.Errorf("mock: grid size %d: want an even number ≥ 4", cfg.N)
	}
	if !(cfg.L > 0) || math.IsInf(cfg.L, 0) {
		return nil, fmt.Errorf("mock: box side %v Mpc/h: want a positive number", cfg.L)
	}
	if cfg.Order != 1 && cfg.Order != 2 {
		return nil, fmt.Errorf("mock: LPT order %d: want 1 or 2", cfg.Order)
	}
	step := func(s string) {
		if cfg.Progress != nil {
			cfg.Progress(s)
		}
	}
	defer step("")
	g := grid.Geometry{N: cfg.N, L: cfg.L}
	fft, err := grid.NewFFT(cfg.N)
	if err != nil {
		return nil, err
	}
	r := &Realisation{Geometry: g, Model: cfg.Model, Order: cfg.Order, Seed: cfg.Seed}
	tmp := make([]complex128, g.HalfLen())
	work := make([]float64, g.Len())
	if dk == nil {
		step("initial field")
		dk = make([]complex128, g.HalfLen())
		if err := LinearField(dk, work, fft, g, cfg.Power, cfg.Seed); err != nil {
			return nil, err
		}
	}
	if cfg.KeepDensity {
		copy(tmp, dk)
		fft.Inverse(work, tmp)
		r.Density = toFloat32(work)
	}
	r.SigmaGrid = math.Sqrt(halfSpectrumVariance(dk, g))

	// Bias field: smoothed δ_L normalised to unit variance.
	r.BiasSmooth = cfg.BiasSmooth
	if r.BiasSmooth <= 0 {
		r.BiasSmooth = 1.5 * g.H()
	}
	copy(tmp, dk)
	grid.SmoothGaussian(tmp, g, r.BiasSmooth)
	r.SigmaBias = math.Sqrt(halfSpectrumVariance(tmp, g))
	fft.Inverse(work, tmp)
	r.Nu = make([]float32, g.Len())
	inv := 1 / r.SigmaBias
	parallel.For(len(work), 1<<16, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			r.Nu[i] = float32(work[i] * inv)
		}
	})

	// First order: Ψ1_k = i k δ_k / k² (so ∇·Ψ1 = −δ).
	step("first-order displacement")
	for a := 0; a < 3; a++ {
		kspace(tmp, dk, g, func(k [3]float64, k2 float64) complex128 {
			return complex(0, k[a]/k2)
		}, a, a)
		fft.Inverse(work, tmp)
		r.Psi1[a] = toFloat32(work)
	}
	if cfg.Order == 1 {
		return r, nil
	}

	// Second order: source S = Σ_{i<j} φ,ii φ,jj − φ,ij² with φ,ab_k =
	// k_a k_b δ_k / k² (the Hessian of φ1 = −δ/k²).
	step("second-order source")
	hess := func(dst []float64, a, b int) {
		kspace(tmp, dk, g, func(k [3]float64, k2 float64) complex128 {
			return complex(k[a]*k[b]/k2, 0)
		}, a, b)
		fft.Inverse(dst, tmp)
	}
	work2 := make([]float64, g.Len())
	hess(work, 0, 0)
	dxx := toFloat32(work)
	hess(work, 1, 1)
	dyy := toFloat32(work)
	hess(work, 2, 2)
	parallel.For(len(work), 1<<16, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			xx, yy, zz := float64(dxx[i]), float64(dyy[i]), work[i]
			work[i] = xx*yy + xx*zz + yy*zz
		}
	})
	dxx, dyy = nil, nil
	for _, ab := range [3][2]int{{0, 1}, {0, 2}, {1, 2}} {
		hess(work2, ab[0], ab[1])
		parallel.For(len(work), 1<<16, func(lo, hi int) {
			for i := lo; i < hi; i++ {
				work[i] -= work2[i] * work2[i]
			}
		})
	}
	work2 = nil
	// Return the freed grids before the displacement fields are allocated:
	// at N = 512 each is 1 GB and the collector would otherwise let the heap
	// grow past them.
	runtime.GC()
	step("second-order displacement")
	// φ2_k = −S_k/k²; Ψ2 = ∇φ2 → Ψ2_k = i k φ2_k = −i k S_k / k².
	fft.Forward(dk, work) // dk is no longer needed: reuse it for S_k
	for a := 0; a < 3; a++ {
		kspace(tmp, dk, g, func(k [3]float64, k2 float64) complex128 {
			return complex(0, -k[a]/k2)
		}, a, a)
		fft.Inverse(work, tmp)
		r.Psi2[a] = toFloat32(work)
	}
	dk, tmp, work = nil, nil, nil
	debug.FreeOSMemory() // the working grids are gone; give their pages back
	return r, nil
}

// kspace sets dst = mult(k, k²)·src for every mode of a half spectrum, and
// 0 at k = 0 and on the Nyquist planes of axes a and b, where the sign of
// the wavenumber (and so an odd derivative) is not defined for a real field.
func kspace(dst, src []complex128, g grid.Geometry, mult func(k [3]float64, k2 float64) complex128, a, b int) {
	nyq := math.Pi / g.H()
	g.EachMode(func(kx, ky, kz float64, idx int) {
		k := [3]float64{kx, ky, kz}
		k2 := kx*kx + ky*ky + kz*kz
		if k2 == 0 || k[a] == nyq || k[b] == nyq {
			dst[idx] = 0
			return
		}
		dst[idx] = mult(k, k2) * src[idx]
	})
}

// halfSpectrumVariance returns the variance over the grid cells of the real
// field whose half spectrum is dk: (1/N⁶) Σ over the full spectrum of |δ_k|²
// without the k = 0 mode (Parseval), counting the modes of the half
// spectrum with 0 < k_z < N/2 twice for their Hermitian partners.
func halfSpectrumVariance(dk []complex128, g grid.Geometry) float64 {
	n := g.N
	h := n/2 + 1
	parts := make([]float64, n)
	parallel.For(n, 1, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			var s float64
			for j := 0; j < n; j++ {
				row := dk[(i*n+j)*h : (i*n+j+1)*h]
				for k, c := range row {
					p := real(c)*real(c) + imag(c)*imag(c)
					if k > 0 && k < n/2 {
						p *= 2
					}
					s += p
				}
			}
			parts[i] = s
		}
	})
	var s float64
	for _, p := range parts { // fixed order: same sum for any thread count
		s += p
	}
	s -= real(dk[0])*real(dk[0]) + imag(dk[0])*imag(dk[0])
	n3 := float64(g.Len())
	return s / (n3 * n3)
}

func toFloat32(x []float64) []float32 {
	y := make([]float32, len(x))
	parallel.For(len(x), 1<<16, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			y[i] = float32(x[i])
		}
	})
	return y
}
