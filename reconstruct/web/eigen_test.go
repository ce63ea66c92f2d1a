package web

import (
	"math"
	"math/rand/v2"
	"testing"

	"gonum.org/v1/gonum/mat"
)

// randomRotation returns a uniformly random 3×3 rotation matrix (row-major)
// from a normalised random quaternion (Shoemake 1992, Graphics Gems III).
func randomRotation(rng *rand.Rand) [9]float64 {
	var q [4]float64
	var n float64
	for i := range q {
		q[i] = rng.NormFloat64()
		n += q[i] * q[i]
	}
	n = math.Sqrt(n)
	w, x, y, z := q[0]/n, q[1]/n, q[2]/n, q[3]/n
	return [9]float64{
		1 - 2*(y*y+z*z), 2 * (x*y - w*z), 2 * (x*z + w*y),
		2 * (x*y + w*z), 1 - 2*(x*x+z*z), 2 * (y*z - w*x),
		2 * (x*z - w*y), 2 * (y*z + w*x), 1 - 2*(x*x+y*y),
	}
}

// rotated returns R·diag(d)·Rᵀ as (a11, a22, a33, a12, a13, a23).
func rotated(r [9]float64, d [3]float64) [6]float64 {
	var a [3][3]float64
	for i := 0; i < 3; i++ {
		for j := 0; j < 3; j++ {
			for k := 0; k < 3; k++ {
				a[i][j] += r[3*i+k] * d[k] * r[3*j+k]
			}
		}
	}
	return [6]float64{a[0][0], a[1][1], a[2][2], 0.5 * (a[0][1] + a[1][0]), 0.5 * (a[0][2] + a[2][0]), 0.5 * (a[1][2] + a[2][1])}
}

// TestEigen3Gonum compares Eigen3 with gonum.org/v1/gonum/mat EigenSym
// (v0.17.0, a port of LAPACK dsyev) on random symmetric matrices and on the
// hard cases of the trigonometric method: diagonal matrices, exactly and
// nearly equal pairs, all equal, tiny off-diagonals and large dynamic
// range. The tolerance is 1e-12·‖A‖_F on every eigenvalue.
func TestEigen3Gonum(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	var cases [][6]float64
	add := func(a [6]float64) { cases = append(cases, a) }
	for range 20000 { // generic: independent Gaussian entries
		var a [6]float64
		for i := range a {
			a[i] = rng.NormFloat64()
		}
		add(a)
	}
	for range 2000 { // diagonal
		add([6]float64{rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64(), 0, 0, 0})
	}
	for range 5000 { // rotated spectra with exact or near degeneracies
		x, y := rng.NormFloat64(), rng.NormFloat64()
		eps := math.Pow(10, -16*rng.Float64())
		for _, d := range [][3]float64{
			{x, x, y}, {y, x, x}, {x, x, x}, {x, x * (1 + eps), y},
			{x, y, y * (1 + eps)}, {x, x + eps, x - eps},
		} {
			add(rotated(randomRotation(rng), d))
		}
	}
	for range 3000 { // tiny off-diagonals
		s := math.Pow(10, -20*rng.Float64())
		add([6]float64{rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64(), s * rng.NormFloat64(), s * rng.NormFloat64(), s * rng.NormFloat64()})
		x := rng.NormFloat64()
		add([6]float64{x, x, x, s * rng.NormFloat64(), s * rng.NormFloat64(), s * rng.NormFloat64()})
	}
	for range 3000 { // large dynamic range, both in entries and in eigenvalues
		big := math.Pow(10, 12*rng.Float64())
		add(rotated(randomRotation(rng), [3]float64{big * rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64() / big}))
		add([6]float64{big, 1, 1 / big, rng.NormFloat64(), rng.NormFloat64() / big, rng.NormFloat64()})
	}

	var es mat.EigenSym
	worst := 0.0
	for n, a := range cases {
		s := mat.NewSymDense(3, []float64{a[0], a[3], a[4], a[3], a[1], a[5], a[4], a[5], a[2]})
		if !es.Factorize(s, false) {
			t.Fatalf("case %d: gonum EigenSym failed", n)
		}
		want := es.Values(nil) // ascending
		l1, l2, l3 := Eigen3(a[0], a[1], a[2], a[3], a[4], a[5])
		norm := math.Sqrt(a[0]*a[0] + a[1]*a[1] + a[2]*a[2] + 2*(a[3]*a[3]+a[4]*a[4]+a[5]*a[5]))
		if !(l1 >= l2 && l2 >= l3) {
			t.Fatalf("case %d %v: not descending: %v %v %v", n, a, l1, l2, l3)
		}
		for i, got := range []float64{l1, l2, l3} {
			err := math.Abs(got-want[2-i]) / norm
			worst = max(worst, err)
			if !(err <= 1e-12) {
				t.Fatalf("case %d %v: eigenvalue %d = %.17g, gonum %.17g (error %.3g‖A‖)", n, a, i+1, got, want[2-i], err)
			}
		}
	}
	t.Logf("%d matrices, worst error %.3g·‖A‖_F", len(cases), worst)
}

// Edge cases stated in Eigen3's doc comment.
func TestEigen3Edges(t *testing.T) {
	if l1, l2, l3 := Eigen3(0, 0, 0, 0, 0, 0); l1 != 0 || l2 != 0 || l3 != 0 {
		t.Errorf("zero matrix: %v %v %v", l1, l2, l3)
	}
	for _, bad := range []float64{math.NaN(), math.Inf(1), math.Inf(-1)} {
		for pos := range 12 { // full and diagonal matrices
			a := [6]float64{1, 2, 3, 0, 0.5 * float64(pos/6), 0}
			a[pos%6] = bad
			if l1, l2, l3 := Eigen3(a[0], a[1], a[2], a[3], a[4], a[5]); !math.IsNaN(l1) || !math.IsNaN(l2) || !math.IsNaN(l3) {
				t.Errorf("entry %d = %v: got %v %v %v, want NaNs", pos, bad, l1, l2, l3)
			}
		}
	}
	// Extreme magnitudes, where unscaled squares would overflow or
	// underflow (gonum's Dsyev itself panics on these): Eigen3 scales by
	// powers of two, so Eigen3(2^e·A) = 2^e·Eigen3(A) bit for bit.
	a := [6]float64{1, 2, -1, 0.5, 0.1, 0.3}
	w1, w2, w3 := Eigen3(a[0], a[1], a[2], a[3], a[4], a[5])
	for _, e := range []int{1000, -1000, -1070} {
		s := math.Ldexp(1, e)
		l1, l2, l3 := Eigen3(s*a[0], s*a[1], s*a[2], s*a[3], s*a[4], s*a[5])
		if e > -1050 && (l1 != s*w1 || l2 != s*w2 || l3 != s*w3) {
			t.Errorf("scale 2^%d: %v %v %v, want %v %v %v", e, l1, l2, l3, s*w1, s*w2, s*w3)
		}
		if math.IsNaN(l1+l2+l3) || math.IsInf(l1+l2+l3, 0) || !(l1 >= l2 && l2 >= l3) {
			t.Errorf("scale 2^%d: %v %v %v", e, l1, l2, l3)
		}
	}
	// Exact diagonal path keeps the values bit for bit.
	if l1, l2, l3 := Eigen3(-1, 3, 0.5, 0, 0, 0); l1 != 3 || l2 != 0.5 || l3 != -1 {
		t.Errorf("diagonal: %v %v %v", l1, l2, l3)
	}
}
