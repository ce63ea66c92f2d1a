package web

import (
	"math"
	"testing"

	"github.com/filigree-survey/filigree/reconstruct/grid"
)

// Analytic tidal fields of Gaussian overdensities (spherical, cylindrical,
// planar). All three use 1 Mpc/h cells, an intrinsic width s = 3 cells and
// smoothing R = 2 cells: a Gaussian smoothed by a normalised Gaussian stays
// Gaussian with s'² = s² + R² and amplitude A·(s/s')^D in D dimensions.
// With s ≥ 3 cells the sampled Gaussian's spectrum at the Nyquist
// frequency is below exp(−(π·3)²/2) ≈ 1e-19 and the box is ≥ 10 s' wide,
// so aliasing and truncation are negligible and the spectral derivatives
// are exact to float64 rounding: what is left is the float32 storage of the
// fields (relative 6e-8, seen as errors up to 1.5e-7·A). Tolerance:
// 1e-6·A everywhere.
//
// On a periodic grid ∇²φ = δ − ⟨δ⟩: the mean m = ⟨δ⟩ (taken from the
// grid) acts as a uniform negative background, whose tidal field at a
// point of full cubic (square, for the cylinder) symmetry is −m/D on each
// of the D non-uniform axes.

const (
	shapeA   = 3.0 // amplitude; centre codes are knot/filament/sheet at λ_th = DefaultThreshold
	shapeS   = 3.0 // intrinsic width (Mpc/h)
	shapeR   = 2.0 // smoothing radius (Mpc/h)
	shapeTol = 1e-6 * shapeA
)

// centredGeometry returns a grid of 1 Mpc/h cells whose cell N/2 has its
// centre at the origin, so cell i's centre is at x = i − N/2.
func centredGeometry(n int) grid.Geometry {
	o := -float64(n)/2 - 0.5
	return grid.Geometry{N: n, L: float64(n), Origin: [3]float64{o, o, o}}
}

// gaussianShape fills a grid with A·exp(−r²/2s²), r² summed over the first
// dims axes (x; x, y; or x, y, z), and returns it with its mean.
func gaussianShape(g grid.Geometry, dims int) ([]float64, float64) {
	n := g.N
	d := make([]float64, g.Len())
	var sum float64
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			for k := 0; k < n; k++ {
				c := [3]float64{float64(i - n/2), float64(j - n/2), float64(k - n/2)}
				var r2 float64
				for a := 0; a < dims; a++ {
					r2 += c[a] * c[a]
				}
				v := shapeA * math.Exp(-r2/(2*shapeS*shapeS))
				d[g.Index(i, j, k)] = v
				sum += v
			}
		}
	}
	return d, sum / float64(len(d))
}

// TestShapeCentres checks the eigenvalues and codes at the centre of a
// spherical Gaussian (knot: all three (δ_R(0) − m)/3, by isotropy and
// tr T = δ_R − m), a Gaussian cylinder along z (filament: (δ_R(0) − m)/2
// twice and 0, by symmetry about the axis and uniformity along it) and a
// Gaussian slab (sheet: δ_R(0) − m, 0, 0, since ∂_x²φ = δ_R − m in 1D).
func TestShapeCentres(t *testing.T) {
	sp2 := shapeS*shapeS + shapeR*shapeR
	for _, tc := range []struct {
		name string
		dims int
		n    int
		code uint8
	}{
		{"sphere", 3, 64, Knot},
		{"cylinder", 2, 64, Filament},
		{"slab", 1, 64, Sheet},
	} {
		g := centredGeometry(tc.n)
		delta, m := gaussianShape(g, tc.dims)
		f, err := Tidal(delta, g, shapeR)
		if err != nil {
			t.Fatal(err)
		}
		d0 := shapeA * math.Pow(shapeS*shapeS/sp2, float64(tc.dims)/2) // δ_R at the centre
		var want [3]float64
		for a := 0; a < tc.dims; a++ {
			want[a] = (d0 - m) / float64(tc.dims)
		}
		c := g.Index(tc.n/2, tc.n/2, tc.n/2)
		got := [3]float64{float64(f.L1[c]), float64(f.L2[c]), float64(f.L3[c])}
		for a := range got {
			if math.Abs(got[a]-want[a]) > shapeTol {
				t.Errorf("%s: λ%d at the centre %.8g, want %.8g", tc.name, a+1, got[a], want[a])
			}
		}
		if math.Abs(float64(f.Delta[c])-d0) > shapeTol {
			t.Errorf("%s: δ_R at the centre %.8g, want A(s/s')^%d = %.8g", tc.name, f.Delta[c], tc.dims, d0)
		}
		if code := f.Classify(DefaultThreshold)[c]; code != tc.code {
			t.Errorf("%s: centre code %d, want %d", tc.name, code, tc.code)
		}
	}
}

// G4 = Σ' (m+in)^−4 over the nonzero Gaussian integers, the first
// non-vanishing lattice sum of the square lattice:
// Γ(1/4)⁸/(960π²) (from memory: Hurwitz's value of the lemniscatic G4;
// scipy 1.10.1 gamma gives 3.151212002153897, and a direct numpy 1.24.2
// sum over |m|, |n| ≤ 3000 gives 3.15121197, the truncation error).
const squareLatticeG4 = 3.151212002153897

// squareLatticeG8 = Σ' (m+in)^−8 = 3·G4²/7 (from memory: the Weierstrass
// recursion for the lemniscatic case g3 = 0; a direct numpy 1.24.2 sum over
// |m|, |n| ≤ 400 gives 4.255773035365189, equal to 16 digits).
const squareLatticeG8 = 3 * squareLatticeG4 * squareLatticeG4 / 7

// TestCylinderLine compares all six tidal components along the x axis
// through a Gaussian cylinder δ = A'·exp(−ρ²/2s'²) (uniform in z) with the
// closed form. In 2D, ∇²φ = δ and Gauss's theorem (Binney & Tremaine 2008,
// §2.2) give φ'(ρ) = M(<ρ)/(2πρ) = A's'²(1 − e^{−ρ²/2s'²})/ρ, so with
// g(ρ) = φ'/ρ = A's'²(1 − e^{−ρ²/2s'²})/ρ² (→ A'/2 on the axis)
//
//	T_xx = φ'' = δ − g,   T_yy = φ'/ρ = g   on the x axis,
//
// all other components zero. The periodic images plus the uniform
// background −m (m = 2πA's'²/L²) add, by the Laurent expansion of the
// lattice sum of line potentials (M/2π)·Σ' ln|z − w| over w = L(m+in),
// −m/2 to T_xx and T_yy and the first anisotropic term
// −(M/2π)·G4·Re(z⁴)/(4L⁴), i.e. ∓3·G4·A's'²·x²/L⁴ on T_xx, T_yy, and
// −(M/2π)·G8·Re(z⁸)/(8L⁸), i.e. ∓7·G8·A's'²·x⁶/L⁸ (5e-4·A and 1.7e-6·A at
// x = 23 here); the next term (z¹²) is below 1e-8·A. Tolerance 2e-7·A,
// four times the float32 storage error seen (1.5e-7 for A = 3), so the
// check fails if either lattice term is dropped.
func TestCylinderLine(t *testing.T) {
	n := 128
	g := centredGeometry(n)
	delta, m := gaussianShape(g, 2)
	d32, mean, comp, err := tidalComponents(delta, g, shapeR)
	if err != nil {
		t.Fatal(err)
	}
	if math.Abs(mean-m) > 1e-12 {
		t.Fatalf("mean %g, grid sum gives %g", mean, m)
	}
	sp2 := shapeS*shapeS + shapeR*shapeR
	ap := shapeA * shapeS * shapeS / sp2 // A' = A s²/s'²
	L4 := math.Pow(g.L, 4)
	worst := 0.0
	for i := n / 2; i < n/2+24; i++ { // x = 0 … 23 Mpc/h ≈ 6.4 s'
		x := float64(i - n/2)
		e := math.Exp(-x * x / (2 * sp2))
		gg := ap / 2
		if x != 0 {
			gg = ap * sp2 * (-math.Expm1(-x * x / (2 * sp2))) / (x * x)
		}
		x2 := x * x
		quart := 3*squareLatticeG4*ap*sp2*x2/L4 + 7*squareLatticeG8*ap*sp2*x2*x2*x2/(L4*L4)
		want := map[string]float64{
			"xx": ap*e - gg - m/2 - quart,
			"yy": gg - m/2 + quart,
			"zz": 0, "xy": 0, "xz": 0, "yz": 0,
		}
		for _, k := range []int{0, 7, 100} { // any z
			c := g.Index(i, n/2, k)
			got := map[string]float64{
				"xx": float64(comp[0][c]), "yy": float64(comp[1][c]),
				"xy": float64(comp[2][c]), "xz": float64(comp[3][c]), "yz": float64(comp[4][c]),
			}
			got["zz"] = float64(d32[c]) - mean - got["xx"] - got["yy"]
			for name, w := range want {
				err := math.Abs(got[name] - w)
				worst = max(worst, err)
				if err > 2e-7*shapeA {
					t.Errorf("x = %g, z-cell %d: T_%s = %.8g, closed form %.8g", x, k, name, got[name], w)
				}
			}
		}
	}
	t.Logf("worst |T − closed form| along the line: %.3g (A = %g)", worst, shapeA)
}

// TestSlabLine checks the eigenvalues across a Gaussian slab against the
// closed form (δ_R(x) − m, 0, 0) sorted, ∂_x²φ = δ_R − m being exact in
// one dimension.
func TestSlabLine(t *testing.T) {
	n := 64
	g := centredGeometry(n)
	delta, m := gaussianShape(g, 1)
	f, err := Tidal(delta, g, shapeR)
	if err != nil {
		t.Fatal(err)
	}
	sp2 := shapeS*shapeS + shapeR*shapeR
	for i := 0; i < n; i++ {
		x := float64(i - n/2)
		txx := shapeA*math.Sqrt(shapeS*shapeS/sp2)*math.Exp(-x*x/(2*sp2)) - m
		w1, w2, w3 := sort3(txx, 0, 0)
		c := g.Index(i, 5, 9)
		for a, pair := range [][2]float64{{float64(f.L1[c]), w1}, {float64(f.L2[c]), w2}, {float64(f.L3[c]), w3}} {
			if math.Abs(pair[0]-pair[1]) > shapeTol {
				t.Errorf("x = %g: λ%d = %.8g, closed form %.8g", x, a+1, pair[0], pair[1])
			}
		}
	}
}
