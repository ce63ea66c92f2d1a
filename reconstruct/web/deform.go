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
// x, y, z, Mpc/h) onto the periodic grid g as mass-weighted cloud-in-cell
// averages, Ψ(cell) = Σ m W Ψ / Σ m W (Hockney & Eastwood 1981 weights W);
// cells that receive no mass get zero. mass nil means equal masses.
func GridDisplacement(q, disp, mass []float64, g grid.Geometry) [3][]float64 {
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
	den := make([]float64, g.Len())
	grid.AssignCIC(den, g, q, m)
	var out [3][]float64
	w := make([]float64, n)
	for a := 0; a < 3; a++ {
		for i := 0; i < n; i++ {
			w[i] = m[i] * disp[3*i+a]
		}
		out[a] = make([]float64, g.Len())
		grid.AssignCIC(out[a], g, q, w)
		parallel.For(g.Len(), 1<<14, func(lo, hi int) {
			for c := lo; c < hi; c++ {
				if den[c] > 0 && !math.IsInf(den[c], 0) {
					out[a][c] /= den[c]
				} else {
					out[a][c] = 0
				}
			}
		})
	}
	return out
}
