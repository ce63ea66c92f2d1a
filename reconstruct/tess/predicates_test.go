package tess

import (
	"math"
	"math/big"
	"math/rand/v2"
	"testing"
)

// The reference for the predicates is exact rational arithmetic
// (math/big.Rat, Go standard library): every float64 is a rational number,
// so the determinants are evaluated without rounding.

func ratDiff(p, q [3]float64) [3]*big.Rat {
	var r [3]*big.Rat
	for k := 0; k < 3; k++ {
		a := new(big.Rat).SetFloat64(p[k])
		b := new(big.Rat).SetFloat64(q[k])
		r[k] = a.Sub(a, b)
	}
	return r
}

func ratDet3(u, v, w [3]*big.Rat) *big.Rat {
	m := func(a, b, c, d *big.Rat) *big.Rat {
		x := new(big.Rat).Mul(a, d)
		return x.Sub(x, new(big.Rat).Mul(b, c))
	}
	d := new(big.Rat).Mul(u[0], m(v[1], v[2], w[1], w[2]))
	d.Sub(d, new(big.Rat).Mul(u[1], m(v[0], v[2], w[0], w[2])))
	return d.Add(d, new(big.Rat).Mul(u[2], m(v[0], v[1], w[0], w[1])))
}

func bigOrient(a, b, c, d [3]float64) int {
	return ratDet3(ratDiff(b, a), ratDiff(c, a), ratDiff(d, a)).Sign()
}

func bigInSphere(a, b, c, d, e [3]float64) int {
	var r [4][3]*big.Rat
	var l [4]*big.Rat
	for i, p := range [4][3]float64{a, b, c, d} {
		r[i] = ratDiff(p, e)
		l[i] = new(big.Rat)
		for k := 0; k < 3; k++ {
			l[i].Add(l[i], new(big.Rat).Mul(r[i][k], r[i][k]))
		}
	}
	// det of rows (r_i, l_i), expanded along the lift column.
	det := new(big.Rat)
	det.Sub(det, new(big.Rat).Mul(l[0], ratDet3(r[1], r[2], r[3])))
	det.Add(det, new(big.Rat).Mul(l[1], ratDet3(r[0], r[2], r[3])))
	det.Sub(det, new(big.Rat).Mul(l[2], ratDet3(r[0], r[1], r[3])))
	det.Add(det, new(big.Rat).Mul(l[3], ratDet3(r[0], r[1], r[2])))
	return -det.Sign()
}

func TestPredicateSigns(t *testing.T) {
	o := [3]float64{0, 0, 0}
	x, y, z := [3]float64{1, 0, 0}, [3]float64{0, 1, 0}, [3]float64{0, 0, 1}
	// A right-handed unit tetrahedron is positively oriented (definition).
	if got := Orient3D(o, x, y, z); got != 1 {
		t.Errorf("Orient3D(o, x, y, z) = %d, want 1", got)
	}
	if got := Orient3D(o, y, x, z); got != -1 {
		t.Errorf("Orient3D(o, y, x, z) = %d, want -1", got)
	}
	if got := Orient3D(o, x, y, [3]float64{0.3, 0.7, 0}); got != 0 {
		t.Errorf("coplanar Orient3D = %d, want 0", got)
	}
	// Its circumsphere has centre (1/2, 1/2, 1/2) and radius √3/2: the
	// centroid is inside, (1, 1, 1) is on it, (2, 2, 2) outside.
	for _, c := range []struct {
		e    [3]float64
		want int
	}{{[3]float64{0.25, 0.25, 0.25}, 1}, {[3]float64{1, 1, 1}, 0}, {[3]float64{2, 2, 2}, -1}} {
		if got := InSphere(o, x, y, z, c.e); got != c.want {
			t.Errorf("InSphere(unit tet, %v) = %d, want %d", c.e, got, c.want)
		}
		if got := InSphere(o, y, x, z, c.e); got != -c.want {
			t.Errorf("InSphere(flipped tet, %v) = %d, want %d", c.e, got, -c.want)
		}
	}
}

// TestPredicatesExactDegenerate builds configurations whose determinants
// are exactly zero, or non-zero by one unit in the last place, where the
// floating-point value is wrong or undecided and only the exact stage can
// answer; the expected signs come from math/big.
func TestPredicatesExactDegenerate(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	zeros, tested := 0, 0
	for it := 0; it < 3000; it++ {
		// Four points on a plane through a big offset, with coordinates
		// nudged by a few ulps.
		off := [3]float64{1e3 * rng.Float64(), 1e3 * rng.Float64(), 1e3 * rng.Float64()}
		var p [5][3]float64
		u := [3]float64{rng.Float64(), rng.Float64(), rng.Float64()}
		v := [3]float64{rng.Float64(), rng.Float64(), rng.Float64()}
		for i := range p {
			s, r := float64(rng.IntN(9)), float64(rng.IntN(9))
			for k := 0; k < 3; k++ {
				p[i][k] = off[k] + s*u[k]/8 + r*v[k]/8
			}
			if k := rng.IntN(3); rng.IntN(3) == 0 && p[i][k] != 0 {
				p[i][k] = math.Nextafter(p[i][k], math.Inf(rng.IntN(2)*2-1))
			}
		}
		want := bigOrient(p[0], p[1], p[2], p[3])
		if got := Orient3D(p[0], p[1], p[2], p[3]); got != want {
			t.Fatalf("Orient3D(%v) = %d, math/big says %d", p[:4], got, want)
		}
		if want == 0 {
			zeros++
		}
		// Co-spherical points: integer points on a sphere of radius 5 about
		// an integer centre (3,4,0)-type Pythagorean quadruples.
		sph := [][3]float64{{5, 0, 0}, {0, 5, 0}, {0, 0, 5}, {-5, 0, 0}, {3, 4, 0}, {0, -3, 4}, {4, 0, -3}, {-3, -4, 0}, {0, 0, -5}, {3, 0, 4}}
		c := [3]float64{float64(rng.IntN(100)), float64(rng.IntN(100)), float64(rng.IntN(100))}
		var q [5][3]float64
		for i := range q {
			s := sph[rng.IntN(len(sph))]
			for k := 0; k < 3; k++ {
				q[i][k] = (c[k] + s[k]) / 8 // exact: division by a power of two
			}
		}
		if rng.IntN(2) == 0 && q[4][0] != 0 {
			// one ulp off the sphere (a zero coordinate would step into
			// the subnormal range, outside the predicates' stated domain)
			q[4][0] = math.Nextafter(q[4][0], math.Inf(1))
		}
		want = bigInSphere(q[0], q[1], q[2], q[3], q[4])
		if got := InSphere(q[0], q[1], q[2], q[3], q[4]); got != want {
			t.Fatalf("InSphere(%v) = %d, math/big says %d", q, got, want)
		}
		tested++
	}
	if zeros < 100 {
		t.Errorf("only %d exactly coplanar cases out of %d: the test is not exercising the exact stage", zeros, tested)
	}
}

// TestPredicatesRandom compares with math/big on random points, including
// points nearly coplanar or co-spherical.
func TestPredicatesRandom(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	for it := 0; it < 5000; it++ {
		var p [5][3]float64
		for i := range p {
			for k := 0; k < 3; k++ {
				p[i][k] = rng.NormFloat64() * math.Pow(10, float64(rng.IntN(7)-3))
			}
		}
		if it%2 == 1 {
			// p4 almost on the plane of p0, p1, p2.
			a, b := rng.Float64(), rng.Float64()
			for k := 0; k < 3; k++ {
				p[3][k] = p[0][k] + a*(p[1][k]-p[0][k]) + b*(p[2][k]-p[0][k])
			}
		}
		if got, want := Orient3D(p[0], p[1], p[2], p[3]), bigOrient(p[0], p[1], p[2], p[3]); got != want {
			t.Fatalf("Orient3D(%v) = %d, math/big says %d", p[:4], got, want)
		}
		if got, want := InSphere(p[0], p[1], p[2], p[3], p[4]), bigInSphere(p[0], p[1], p[2], p[3], p[4]); got != want {
			t.Fatalf("InSphere(%v) = %d, math/big says %d", p, got, want)
		}
	}
}

// TestStaticFilters checks that the semi-static filters, whenever they
// decide, agree with exact rational arithmetic (math/big), on random
// points, on points rounded to a coarse grid (many exact ties) and on
// nearly degenerate configurations.
func TestStaticFilters(t *testing.T) {
	rng := rand.New(rand.NewPCG(21, 22))
	decided := 0
	for it := 0; it < 20000; it++ {
		var p [5][3]float64
		for i := range p {
			for k := 0; k < 3; k++ {
				switch it % 3 {
				case 0:
					p[i][k] = rng.Float64()*200 - 100
				case 1:
					p[i][k] = float64(rng.IntN(4))
				default:
					p[i][k] = 1 + rng.Float64()*1e-12
				}
			}
		}
		if s := orient3dStatic(&p[0], &p[1], &p[2], &p[3]); s != 0 {
			decided++
			if want := bigOrient(p[0], p[1], p[2], p[3]); s != want {
				t.Fatalf("orient3dStatic%v = %d, exact %d", p[:4], s, want)
			}
		}
		if s := insphereStatic(&p[0], &p[1], &p[2], &p[3], &p[4]); s != 0 {
			decided++
			if want := bigInSphere(p[0], p[1], p[2], p[3], p[4]); s != want {
				t.Fatalf("insphereStatic%v = %d, exact %d", p, s, want)
			}
		}
	}
	if decided < 10000 {
		t.Errorf("the filters decided only %d of 40000 cases", decided)
	}
}
