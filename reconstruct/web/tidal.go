package web

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/internal/parallel"
	"github.com/filigree-survey/filigree/reconstruct/grid"
)

// DefaultThreshold is filigree's default eigenvalue threshold λ_th (no
// unit: the tidal tensor is normalised so that its trace is the density
// contrast δ_R). A cell's web code counts the eigenvalues above it.
//
// λ_th = 0 (Hahn et al. 2007) is the linear-theory boundary between
// expansion and collapse along an axis, and gives for a Gaussian field the
// Doroshkevich (1970) fractions 8/42/42/8 %: voids then fill only 8 % of
// the volume, far less than maps suggest. Forero-Romero et al. (2009)
// pointed out that an axis with a small positive eigenvalue collapses only
// in the far future, so a positive threshold picks the axes that have
// collapsed by now; from memory: they found λ_th ≈ 0.2–0.4 best matched the
// visual impression of the web in their simulations (smoothing ~1 Mpc/h).
// We take 0.2, the lower end of that range: a galaxy survey is smoothed on
// a larger scale (DefaultSmoothing), where the tidal field has a smaller
// variance, so a threshold meaning the same in units of that spread is
// smaller, and 0.2 stays closer to the physical λ_th = 0 limit. This is a
// convention, not a measurement: the labels depend on it, and filigree
// records it with every result.
const DefaultThreshold = 0.2

// DefaultSmoothing returns filigree's default Gaussian smoothing radius R
// (Mpc/h) for a tracer sample of mean inter-galaxy separation
// meanSeparation = n̄^(−1/3) (Mpc/h): R = meanSeparation.
//
// Why: the tidal tensor is a second derivative of the potential and
// amplifies shot noise, so the kernel must hold several tracers. A Gaussian
// of radius R has an effective volume (2π)^(3/2)·R³ ≈ 15.7·R³, so at R
// equal to the mean separation it holds about 16 galaxies and the Poisson
// scatter of δ_R is about 1/√16 = 25 %; smaller R lets the noise decide the
// labels. Larger R is always allowed (and often wise for sparse samples).
// Hahn et al. (2007) and Forero-Romero et al. (2009) smoothed dark-matter
// simulations at ~1–2 Mpc/h (from memory), well above their particle
// spacing, in the same spirit. It returns NaN unless meanSeparation is
// finite and positive.
func DefaultSmoothing(meanSeparation float64) float64 {
	if !(meanSeparation > 0) || math.IsInf(meanSeparation, 0) {
		return math.NaN()
	}
	return meanSeparation
}

// Fields holds the tidal fields of a density contrast on a periodic grid:
// the Gaussian-smoothed density contrast Delta = δ_R and the eigenvalues
// L1 ≥ L2 ≥ L3 of the tidal tensor T_ij = ∂_i∂_j φ, ∇²φ = δ_R − ⟨δ_R⟩, per
// cell (len G.Len(), layout of grid.Geometry.Index, values at cell
// centres, no unit). L1+L2+L3 = Delta − ⟨Delta⟩ up to float32 rounding. R is
// the smoothing radius (Mpc/h) they were made with.
type Fields struct {
	G          grid.Geometry
	R          float64
	Delta      []float32
	L1, L2, L3 []float32
}

// tidalComponents is the shared core of Tidal: it returns the smoothed
// density contrast δ_R (float32, with its mean ⟨δ_R⟩ kept), that mean, and
// five of the six independent components of T, xx, yy, xy, xz, yz in this
// order (float32). The sixth is T_zz = δ_R − ⟨δ_R⟩ − T_xx − T_yy, the trace
// identity in k-space (k_x²+k_y²+k_z²)/k² = 1 for every k ≠ 0, Nyquist
// modes included (grid.Hessian keeps them on the diagonal).
//
// Fourier method (Hahn et al. 2007): φ_k = −δ_k/k² (φ_0 = 0), T_ij,k =
// −k_i k_j φ_k by grid.Hessian, one component at a time into one complex
// scratch spectrum and one float64 scratch grid, rounded to float32 as it
// is stored. Peak memory is the two spectra (16·N²(N/2+1) bytes each),
// one float64 grid and six float32 grids: about 56 bytes a cell with the
// caller's input, against 96 for six float64 components.
func tidalComponents(delta []float64, g grid.Geometry, R float64) (d32 []float32, mean float64, comp [5][]float32, err error) {
	if err = g.Validate(); err != nil {
		return nil, 0, comp, fmt.Errorf("web: %w", err)
	}
	if len(delta) != g.Len() {
		return nil, 0, comp, fmt.Errorf("web: density grid has %d cells, want N³ = %d", len(delta), g.Len())
	}
	if !(R >= 0) || math.IsInf(R, 0) {
		return nil, 0, comp, fmt.Errorf("web: smoothing radius R = %g Mpc/h, want a finite value ≥ 0", R)
	}
	if bad := firstNonFinite(delta); bad >= 0 {
		return nil, 0, comp, fmt.Errorf("web: density contrast %g at cell %d is not finite", delta[bad], bad)
	}
	fft, err := grid.NewFFT(g.N)
	if err != nil {
		return nil, 0, comp, fmt.Errorf("web: %w", err)
	}
	n := g.Len()
	dk := make([]complex128, g.HalfLen())
	work := make([]complex128, g.HalfLen())
	real64 := make([]float64, n)

	fft.Forward(dk, delta)
	grid.SmoothGaussian(dk, g, R)
	mean = real(dk[0]) / float64(n)

	copy(work, dk) // Inverse overwrites its input
	fft.Inverse(real64, work)
	d32 = toFloat32(real64)

	// φ_k = −δ_k/k²; the k = 0 mode (the mean) has no potential.
	g.EachMode(func(kx, ky, kz float64, idx int) {
		k2 := kx*kx + ky*ky + kz*kz
		if k2 == 0 {
			dk[idx] = 0
			return
		}
		dk[idx] *= complex(-1/k2, 0)
	})
	axes := [5][2]int{{0, 0}, {1, 1}, {0, 1}, {0, 2}, {1, 2}}
	for c, ab := range axes {
		grid.Hessian(work, dk, g, ab[0], ab[1])
		fft.Inverse(real64, work)
		comp[c] = toFloat32(real64)
	}
	return d32, mean, comp, nil
}

// cellChunk is the number of cells per parallel chunk of the per-cell
// passes; fixed so that chunk boundaries never depend on the thread count.
const cellChunk = 1 << 14

func toFloat32(x []float64) []float32 {
	out := make([]float32, len(x))
	parallel.For(len(x), cellChunk, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			out[i] = float32(x[i])
		}
	})
	return out
}

// firstNonFinite returns the smallest index of a NaN or infinite value of
// x, or −1.
func firstNonFinite(x []float64) int {
	nc := (len(x) + cellChunk - 1) / cellChunk
	first := make([]int, nc)
	parallel.For(nc, 1, func(lo, hi int) {
		for c := lo; c < hi; c++ {
			first[c] = -1
			for i := c * cellChunk; i < min(len(x), (c+1)*cellChunk); i++ {
				if v := x[i]; v-v != 0 { // NaN or ±Inf
					first[c] = i
					break
				}
			}
		}
	})
	for _, f := range first {
		if f >= 0 {
			return f
		}
	}
	return -1
}

// Tidal computes the tidal fields of the density contrast delta (len N³,
// real space, layout of grid.Geometry.Index, periodic, no unit) on grid g
// smoothed by a normalised Gaussian of radius R (Mpc/h; 0 = no smoothing):
// δ_R, and the eigenvalues of T_ij = ∂_i∂_j φ with ∇²φ = δ_R − ⟨δ_R⟩ (the
// k = 0 mode has no potential on a periodic grid), so that tr T = δ_R −
// ⟨δ_R⟩ (Hahn et al. 2007). Derivatives are exact spectral ones
// (grid.Hessian: −k_i k_j, Nyquist planes zeroed off the diagonal).
// Eigenvalues are computed in float64 by Eigen3 from the float32-rounded
// components, and stored as float32, so they carry errors of a few float32
// ulps of the largest of |δ_R|, |T_ij|.
//
// delta is not modified. It returns an error if g is invalid, len(delta)
// ≠ N³, R is negative or not finite, or delta holds a NaN or infinity.
// Work is spread over all cores; the result is bit-for-bit independent of
// GOMAXPROCS.
func Tidal(delta []float64, g grid.Geometry, R float64) (*Fields, error) {
	d32, mean, comp, err := tidalComponents(delta, g, R)
	if err != nil {
		return nil, err
	}
	txx, tyy, txy, txz, tyz := comp[0], comp[1], comp[2], comp[3], comp[4]
	// The eigenvalues overwrite txx, tyy, txy cell by cell (each cell reads
	// its own six values before writing), so no further grids are needed.
	parallel.For(len(d32), cellChunk, func(lo, hi int) {
		for c := lo; c < hi; c++ {
			xx, yy := float64(txx[c]), float64(tyy[c])
			zz := float64(d32[c]) - mean - xx - yy
			l1, l2, l3 := Eigen3(xx, yy, zz, float64(txy[c]), float64(txz[c]), float64(tyz[c]))
			txx[c], tyy[c], txy[c] = float32(l1), float32(l2), float32(l3)
		}
	})
	return &Fields{G: g, R: R, Delta: d32, L1: txx, L2: tyy, L3: txy}, nil
}
