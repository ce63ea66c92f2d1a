package web

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/internal/parallel"
	"github.com/filigree-survey/filigree/reconstruct/grid"
)

// Deformation classifies a displacement field in Lagrangian space (Zel'dovich
// 1970; Doroshkevich 1970): for a displacement Ψ(q) on the periodic grid g
// (components psi[0..2] at the cell centres, Mpc/h), smoothed with a
// Gaussian of radius R, it returns the eigenvalues of the deformation
// tensor D_ij = −∂Ψ_i/∂q_j, in Fields.L1 ≥ L2 ≥ L3, and its trace −∇·Ψ
// (the linear density contrast of the Zel'dovich approximation) in
// Fields.Delta. The web code of a cell is again the number of eigenvalues
// above a threshold: 3 for a region collapsing along all axes.
//
// D is computed as the Hessian of the potential Φ with ∇²Φ = −∇·Ψ, i.e.
// the deformation of the irrotational part of Ψ (Helmholtz). That is exact
// for displacements that are gradients, as optimal-transport maps are
// (Brenier 1991) and Zel'dovich displacements are; a curl part, which
// linear theory does not have, is dropped.
func Deformation(psi [3][]float64, g grid.Geometry, R float64) (*Fields, error) {
	if err := g.Validate(); err != nil {
		return nil, fmt.Errorf("web: %w", err)
	}
	for a := 0; a < 3; a++ {
		if len(psi[a]) != g.Len() {
			return nil, fmt.Errorf("web: displacement component %d has %d cells, want %d", a, len(psi[a]), g.Len())
		}
		if bad := firstNonFinite(psi[a]); bad >= 0 {
			return nil, fmt.Errorf("web: displacement component %d is not finite at cell %d", a, bad)
		}
	}
	fft, err := grid.NewFFT(g.N)
	if err != nil {
		return nil, fmt.Errorf("web: %w", err)
	}
	div := make([]complex128, g.HalfLen())
	comp := make([]complex128, g.HalfLen())
	for a := 0; a < 3; a++ {
		fft.Forward(comp, psi[a])
		// −∇·Ψ → −i k_a Ψ_a,k summed; the Nyquist plane of axis a is
		// dropped, as for any odd derivative of a real field.
		grid.Gradient(comp, comp, g, a)
		parallel.For(len(div), 1<<14, func(lo, hi int) {
			for i := lo; i < hi; i++ {
				div[i] -= comp[i]
			}
		})
	}
	theta := make([]float64, g.Len())
	fft.Inverse(theta, div)
	return Tidal(theta, g, R)
}

// GridDisplacement puts displacements known at Lagrangian positions q (flat
// x, y, z, Mpc/h) onto the periodic grid g as mass-weighted averages. With
// R > 0 it is a normalised convolution (Knutsson & Westin 1993): the
// cloud-in-cell assignments (Hockney & Eastwood 1981) of m·Ψ and of m are
// both smoothed with a Gaussian of radius R and divided, Ψ(cell) =
// G_R * Σ m W Ψ / G_R * Σ m W, so every cell gets the weighted mean of the
// particles around it, however sparse they are against the grid; cells
// where the smoothed mass is below 10⁻⁶ of its mean get zero. With R = 0
// each cell gets the plain cloud-in-cell mean Σ m W Ψ / Σ m W, and cells
// that receive no mass get zero (which biases any later smoothing towards
// zero when particles are sparser than the grid). mass nil means equal
// masses.
func GridDisplacement(q, disp, mass []float64, g grid.Geometry, R float64) ([3][]float64, error) {
	n := len(q) / 3
	if len(disp) != 3*n || (mass != nil && len(mass) != n) {
		panic("web: GridDisplacement: length mismatch")
	}
	m := mass
	if m == nil {
		m = make([]float64, n)
		for i := range m {
			m[i] = 1
		}
	}
	var fft *grid.FFT
	var dk []complex128
	smooth := func(f []float64) {}
	if R > 0 {
		var err error
		if fft, err = grid.NewFFT(g.N); err != nil {
			return [3][]float64{}, fmt.Errorf("web: %w", err)
		}
		dk = make([]complex128, g.HalfLen())
		smooth = func(f []float64) {
			fft.Forward(dk, f)
			grid.SmoothGaussian(dk, g, R)
			fft.Inverse(f, dk)
		}
	}
	den := make([]float64, g.Len())
	grid.AssignCIC(den, g, q, m)
	smooth(den)
	floor := 0.0
	if R > 0 {
		tot := 0.0
		for _, v := range den {
			tot += v
		}
		floor = 1e-6 * tot / float64(len(den))
	}
	var out [3][]float64
	w := make([]float64, n)
	for a := 0; a < 3; a++ {
		for i := 0; i < n; i++ {
			w[i] = m[i] * disp[3*i+a]
		}
		out[a] = make([]float64, g.Len())
		grid.AssignCIC(out[a], g, q, w)
		smooth(out[a])
		parallel.For(g.Len(), 1<<14, func(lo, hi int) {
			for c := lo; c < hi; c++ {
				if den[c] > floor && !math.IsInf(den[c], 0) {
					out[a][c] /= den[c]
				} else {
					out[a][c] = 0
				}
			}
		})
	}
	return out, nil
}
