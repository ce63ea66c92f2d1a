// Package zeldovich is filigree's fast reconstruction baseline: the
// Lagrangian displacement estimated from a smoothed density field in the
// Zel'dovich approximation by FFT (Eisenstein, Seo, Sirko & Spergel 2007,
// ApJ 664, 675).
//
// In the Zel'dovich approximation the density contrast of a tracer with
// linear bias b is δ_g = −b ∇·Ψ to first order (Zel'dovich 1970), so the
// displacement of the matter is estimated as the irrotational field with
//
//	∇·Ψ = −S_R * δ_g / b,   Ψ_k = i k S(kR) δ_g,k / (b k²),
//
// where S(kR) = exp(−k²R²/2) is a Gaussian smoothing that suppresses the
// non-linear small scales where the approximation fails (Eisenstein et al.
// 2007 used R ≈ 10–20 Mpc/h for galaxy surveys). A galaxy at Eulerian x came
// from q = x − Ψ(x). The estimate is linear theory: it recovers large-scale
// displacements, not the motion inside collapsed structures.
package zeldovich

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/reconstruct/grid"
)

// Field is the estimated displacement on a periodic grid: Psi[a] holds
// component a (Mpc/h) at the cell centres.
type Field struct {
	G   grid.Geometry
	Psi [3][]float64
	// R and Bias are the smoothing radius (Mpc/h) and bias used.
	R, Bias float64
}

// Displacement estimates the displacement field from a density contrast
// grid delta (len N³, values at cell centres; the grid is treated as
// periodic, so a survey should be padded with mean density around it),
// smoothing radius r (Mpc/h, ≥ 0) and linear bias b > 0. delta is not
// changed. The k = 0 mode and the Nyquist planes of the differentiated
// axis are set to zero.
func Displacement(delta []float64, g grid.Geometry, r, b float64) (*Field, error) {
	if err := g.Validate(); err != nil {
		return nil, err
	}
	if len(delta) != g.Len() {
		return nil, fmt.Errorf("zeldovich: density grid of length %d for N = %d", len(delta), g.N)
	}
	if !(b > 0) || math.IsInf(b, 0) {
		return nil, fmt.Errorf("zeldovich: bias %v: want a positive number", b)
	}
	if !(r >= 0) || math.IsInf(r, 0) {
		return nil, fmt.Errorf("zeldovich: smoothing radius %v Mpc/h: want ≥ 0", r)
	}
	fft, err := grid.NewFFT(g.N)
	if err != nil {
		return nil, err
	}
	work := append([]float64(nil), delta...)
	dk := make([]complex128, g.HalfLen())
	fft.Forward(dk, work)
	grid.SmoothGaussian(dk, g, r)
	f := &Field{G: g, R: r, Bias: b}
	tmp := make([]complex128, g.HalfLen())
	nyq := math.Pi / g.H()
	for a := 0; a < 3; a++ {
		g.EachMode(func(kx, ky, kz float64, idx int) {
			k := [3]float64{kx, ky, kz}
			k2 := kx*kx + ky*ky + kz*kz
			if k2 == 0 || k[a] == nyq {
				tmp[idx] = 0
				return
			}
			tmp[idx] = complex(0, k[a]/(b*k2)) * dk[idx]
		})
		f.Psi[a] = make([]float64, g.Len())
		fft.Inverse(f.Psi[a], tmp)
	}
	return f, nil
}

// At sets disp (len 3n) to the displacement at the positions pos (flat x,
// y, z, Mpc/h, len 3n) by periodic trilinear interpolation.
func (f *Field) At(disp, pos []float64) {
	n := len(pos) / 3
	if len(disp) != 3*n {
		panic("zeldovich: At: length mismatch")
	}
	comp := make([]float64, n)
	for a := 0; a < 3; a++ {
		grid.InterpolateTrilinear(comp, f.Psi[a], f.G, pos)
		for i, v := range comp {
			disp[3*i+a] = v
		}
	}
}
