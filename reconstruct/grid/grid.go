// Package grid holds filigree's periodic 3D grids: their geometry, a
// parallel real-to-complex FFT, power spectra, Gaussian smoothing and
// cloud-in-cell mass assignment and interpolation. The mock generator, the
// DTFE grid, the tidal-tensor classifier and Zel'dovich reconstruction all
// share it, so every k-space quantity in filigree uses one layout and one
// sign convention.
//
// Layout: a real field of a Geometry g is a flat []float64 of g.Len() = N³
// values indexed by g.Index(i, j, k) = (i·N+j)·N+k (x slowest, z fastest).
// Its transform is the half spectrum of numpy.fft.rfftn: a flat
// []complex128 of g.HalfLen() = N·N·(N/2+1) values indexed by
// g.KIndex(i, j, k) = (i·N+j)·(N/2+1)+k, k ∈ [0, N/2]; the other half
// follows from Hermitian symmetry F(−k) = F(k)*.
package grid

import (
	"fmt"
	"math"
)

// Geometry is a cubic periodic grid of N cells per side (N even, N ≥ 2)
// over a box of side L (Mpc/h). Origin is the position (Mpc/h) of the corner
// of cell (0,0,0): cell (i,j,k) covers [Origin+i·H, Origin+(i+1)·H) on x
// (likewise y with j, z with k), H = L/N, and its centre is at +H/2.
type Geometry struct {
	N      int
	L      float64
	Origin [3]float64
}

// Validate reports an error unless N is even and at least 2 and L is finite
// and positive.
func (g Geometry) Validate() error {
	if g.N < 2 || g.N%2 != 0 {
		return fmt.Errorf("grid: N = %d, want an even number ≥ 2", g.N)
	}
	if !(g.L > 0) || math.IsInf(g.L, 0) {
		return fmt.Errorf("grid: box side L = %g, want a finite positive length", g.L)
	}
	return nil
}

// H returns the cell size L/N (Mpc/h).
func (g Geometry) H() float64 { return g.L / float64(g.N) }

// Len returns N³, the number of cells of a real field.
func (g Geometry) Len() int { return g.N * g.N * g.N }

// HalfLen returns N·N·(N/2+1), the number of complex values of a half spectrum.
func (g Geometry) HalfLen() int { return g.N * g.N * (g.N/2 + 1) }

// Index returns the flat index (i·N+j)·N+k of cell (i,j,k) of a real field
// (x slowest). It does not wrap: i, j, k must lie in [0, N).
func (g Geometry) Index(i, j, k int) int { return (i*g.N+j)*g.N + k }

// KIndex returns the flat index (i·N+j)·(N/2+1)+k of mode (i,j,k) of a half
// spectrum, i, j ∈ [0, N), k ∈ [0, N/2]. It does not wrap.
func (g Geometry) KIndex(i, j, k int) int { return (i*g.N+j)*(g.N/2+1) + k }

// Freq returns the signed integer frequency of FFT index i ∈ [0, N): i for
// i ≤ N/2, else i−N. The Nyquist index N/2 maps to +N/2.
func (g Geometry) Freq(i int) int {
	if i <= g.N/2 {
		return i
	}
	return i - g.N
}

// Wavenumber returns 2π/L·Freq(i) (h/Mpc).
func (g Geometry) Wavenumber(i int) float64 { return 2 * math.Pi / g.L * float64(g.Freq(i)) }

// Volume returns L³ ((Mpc/h)³).
func (g Geometry) Volume() float64 { return g.L * g.L * g.L }

// wavenumbers returns Wavenumber(i) for i ∈ [0, N).
func (g Geometry) wavenumbers() []float64 {
	k := make([]float64, g.N)
	for i := range k {
		k[i] = g.Wavenumber(i)
	}
	return k
}
