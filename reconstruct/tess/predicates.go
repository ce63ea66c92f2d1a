package tess

import "math"

// This file holds the two geometric predicates the tessellation is built on,
// orient3d and insphere, evaluated robustly in the manner of
// J. R. Shewchuk, "Adaptive Precision Floating-Point Arithmetic and Fast
// Robust Geometric Predicates", Discrete Comput. Geom. 18, 305 (1997):
//
//  1. a floating-point filter: the determinant is evaluated in ordinary
//     float64 arithmetic together with a bound on its rounding error. When
//     the magnitude of the computed value exceeds the bound its sign is
//     certainly right and is returned at once. This is the common case.
//  2. an exact fallback: when the filter cannot decide, the determinant is
//     evaluated exactly with Shewchuk's expansion arithmetic (two-sum,
//     two-product, expansion sum, scale-expansion), and the sign of the
//     exact value is returned.
//
// Shewchuk's intermediate adaptive stages (B, C) are not ported: the exact
// stage is only reached for (nearly) degenerate configurations. The
// construction tries a cheaper "semi-static" filter first
// (orient3dStatic, insphereStatic), whose bound is a multiple of a power of
// the largest coordinate difference instead of the permanent, and falls
// back to orient3d and insphere when it cannot decide.
//
// The error bounds are Shewchuk's "errboundA" constants with ε = 2^-53, the
// unit roundoff of float64 under round-to-nearest-even:
//
//	orient3d: |det − fl(det)| ≤ (7 + 56ε) ε · P,
//	insphere: |det − fl(det)| ≤ (16 + 224ε) ε · P,
//
// where P, the permanent, is the same expression as the determinant with
// every product and difference of products replaced by the sum of the
// absolute values of its terms, computed in floating point from the rounded
// coordinate differences. Shewchuk (1997, section 4.3 and the comments of
// predicates.c) derives these bounds by following the relative error of each
// operation — the input differences a−d (one rounding), the products, the
// 2×2 minors, and so on up the expression tree — and bounding the sum of the
// error terms by a multiple of P; the (7 + 56ε) and (16 + 224ε) factors are
// the resulting counts of roundings, with the rounding of P itself included.
// The bounds hold as long as no intermediate overflows or underflows, which
// is the case for coordinates between about 1e-60 and 1e60 in magnitude
// (far beyond any comoving distance in Mpc/h).

const (
	epsilon        = 1.0 / (1 << 53) // unit roundoff of float64
	o3dErrBoundA   = (7 + 56*epsilon) * epsilon
	ispErrBoundA   = (16 + 224*epsilon) * epsilon
	exactArenaSize = 512
)

// Orient3D returns the sign of the determinant
//
//	| bx−ax  by−ay  bz−az |
//	| cx−ax  cy−ay  cz−az |
//	| dx−ax  dy−ay  dz−az |
//
// evaluated exactly: +1 when d lies on the side of the plane through a, b, c
// from which a, b, c appear clockwise (the tetrahedron abcd is positively
// oriented, right-handed), −1 on the other side and 0 when the four points
// are coplanar. The value is six times the signed volume of abcd.
func Orient3D(a, b, c, d [3]float64) int {
	return orient3d(&a, &b, &c, &d)
}

// InSphere returns the exact sign of the insphere determinant of a, b, c, d
// and e: when abcd is positively oriented (Orient3D(a, b, c, d) > 0) it is
// +1 for e strictly inside the sphere through a, b, c, d, −1 strictly
// outside, and 0 on the sphere. The sign flips when abcd is negatively
// oriented.
func InSphere(a, b, c, d, e [3]float64) int {
	return insphere(&a, &b, &c, &d, &e)
}

// orient3d is Orient3D on pointers to the coordinates.
func orient3d(a, b, c, d *[3]float64) int {
	// Shewchuk's orient3d computes det[a−d; b−d; c−d], which is the
	// negative of det[b−a; c−a; d−a].
	adx, bdx, cdx := a[0]-d[0], b[0]-d[0], c[0]-d[0]
	ady, bdy, cdy := a[1]-d[1], b[1]-d[1], c[1]-d[1]
	adz, bdz, cdz := a[2]-d[2], b[2]-d[2], c[2]-d[2]

	bdxcdy, cdxbdy := bdx*cdy, cdx*bdy
	cdxady, adxcdy := cdx*ady, adx*cdy
	adxbdy, bdxady := adx*bdy, bdx*ady

	det := adz*(bdxcdy-cdxbdy) + bdz*(cdxady-adxcdy) + cdz*(adxbdy-bdxady)
	perm := (math.Abs(bdxcdy)+math.Abs(cdxbdy))*math.Abs(adz) +
		(math.Abs(cdxady)+math.Abs(adxcdy))*math.Abs(bdz) +
		(math.Abs(adxbdy)+math.Abs(bdxady))*math.Abs(cdz)
	bound := o3dErrBoundA * perm
	if det > bound {
		return -1
	}
	if -det > bound {
		return 1
	}
	return orient3dExact(a, b, c, d)
}

// insphere is InSphere on pointers to the coordinates.
func insphere(a, b, c, d, e *[3]float64) int {
	aex, bex, cex, dex := a[0]-e[0], b[0]-e[0], c[0]-e[0], d[0]-e[0]
	aey, bey, cey, dey := a[1]-e[1], b[1]-e[1], c[1]-e[1], d[1]-e[1]
	aez, bez, cez, dez := a[2]-e[2], b[2]-e[2], c[2]-e[2], d[2]-e[2]

	aexbey, bexaey := aex*bey, bex*aey
	bexcey, cexbey := bex*cey, cex*bey
	cexdey, dexcey := cex*dey, dex*cey
	dexaey, aexdey := dex*aey, aex*dey
	aexcey, cexaey := aex*cey, cex*aey
	bexdey, dexbey := bex*dey, dex*bey
	ab := aexbey - bexaey
	bc := bexcey - cexbey
	cd := cexdey - dexcey
	da := dexaey - aexdey
	ac := aexcey - cexaey
	bd := bexdey - dexbey

	abc := aez*bc - bez*ac + cez*ab
	bcd := bez*cd - cez*bd + dez*bc
	cda := cez*da + dez*ac + aez*cd
	dab := dez*ab + aez*bd + bez*da

	alift := aex*aex + aey*aey + aez*aez
	blift := bex*bex + bey*bey + bez*bez
	clift := cex*cex + cey*cey + cez*cez
	dlift := dex*dex + dey*dey + dez*dez

	det := (dlift*abc - clift*dab) + (blift*cda - alift*bcd)

	aezp, bezp, cezp, dezp := math.Abs(aez), math.Abs(bez), math.Abs(cez), math.Abs(dez)
	aexbeyp, bexaeyp := math.Abs(aexbey), math.Abs(bexaey)
	bexceyp, cexbeyp := math.Abs(bexcey), math.Abs(cexbey)
	cexdeyp, dexceyp := math.Abs(cexdey), math.Abs(dexcey)
	dexaeyp, aexdeyp := math.Abs(dexaey), math.Abs(aexdey)
	aexceyp, cexaeyp := math.Abs(aexcey), math.Abs(cexaey)
	bexdeyp, dexbeyp := math.Abs(bexdey), math.Abs(dexbey)
	perm := ((cexdeyp+dexceyp)*bezp+(dexbeyp+bexdeyp)*cezp+(bexceyp+cexbeyp)*dezp)*alift +
		((dexaeyp+aexdeyp)*cezp+(aexceyp+cexaeyp)*dezp+(cexdeyp+dexceyp)*aezp)*blift +
		((aexbeyp+bexaeyp)*dezp+(bexdeyp+dexbeyp)*aezp+(dexaeyp+aexdeyp)*bezp)*clift +
		((bexceyp+cexbeyp)*aezp+(cexaeyp+aexceyp)*bezp+(aexbeyp+bexaeyp)*cezp)*dlift
	bound := ispErrBoundA * perm
	// Shewchuk's insphere is positive for e inside when his orient3d of
	// abcd is positive, i.e. when our Orient3D is negative: flip the sign.
	if det > bound {
		return -1
	}
	if -det > bound {
		return 1
	}
	return insphereExact(a, b, c, d, e)
}

// absBits returns the bits of |x|. For x not NaN, the bits of absolute
// values are ordered as the values, so the largest magnitude is found with
// integer maxima, which compile to conditional moves (a NaN gives bits
// above +Inf, which the range checks of the filters reject).
func absBits(x float64) uint64 { return math.Float64bits(x) &^ (1 << 63) }

// o3dStaticBound is the error bound of orient3dStatic relative to M³, M
// the largest magnitude of the nine coordinate differences: each of the
// three terms of the permanent of orient3d is (|·|+|·|)·|·| ≤ 2M³, so
// P ≤ 6M³, and the factor 7 covers the roundings of P and of M³ (see
// ispStaticBound).
const o3dStaticBound = o3dErrBoundA * 7

// orient3dStatic returns orient3d(a, b, c, d) when a cheap floating-point
// filter certifies it, and 0 when it cannot decide. It evaluates the
// determinant exactly as orient3d does, with the error bound
// o3dStaticBound·M³ instead of one computed from the permanent, and gives
// up when M is outside [1e-50, 1e50].
func orient3dStatic(a, b, c, d *[3]float64) int {
	adx, bdx, cdx := a[0]-d[0], b[0]-d[0], c[0]-d[0]
	ady, bdy, cdy := a[1]-d[1], b[1]-d[1], c[1]-d[1]
	adz, bdz, cdz := a[2]-d[2], b[2]-d[2], c[2]-d[2]
	m := math.Float64frombits(max(
		max(absBits(adx), absBits(bdx), absBits(cdx)),
		max(absBits(ady), absBits(bdy), absBits(cdy)),
		max(absBits(adz), absBits(bdz), absBits(cdz))))
	det := adz*(bdx*cdy-cdx*bdy) + bdz*(cdx*ady-adx*cdy) + cdz*(adx*bdy-bdx*ady)
	if !(m >= 1e-50 && m <= 1e50) {
		return 0
	}
	bound := o3dStaticBound * (m * m * m)
	if det > bound {
		return -1
	}
	if -det > bound {
		return 1
	}
	return 0
}

// ispStaticBound is the error bound of insphereStatic relative to M⁵,
// where M is the largest magnitude of the twelve coordinate differences.
// With every |difference| ≤ M, each 2×2 product sum in the permanent of
// insphere is at most 2M², each of the four bracketed sums at most
// 3·2M²·M = 6M³, and each lift at most 3M², so P ≤ 72M⁵ (and the
// floating-point P is at most that, inflated by a few roundings; the
// factor 73 covers them and the rounding of M⁵). Hence ispErrBoundA·73·M⁵
// bounds the error of the computed determinant whenever Shewchuk's bound
// does. This is a "semi-static" filter in the sense of Meyer & Pion,
// "FPG: A code generator for fast and certified geometric predicates",
// Real Numbers and Computers 2008: it skips computing the permanent.
const ispStaticBound = ispErrBoundA * 73

// insphereStatic returns the sign of insphere(a, b, c, d, e) when a cheap
// floating-point filter certifies it, and 0 when it cannot decide (then
// the caller uses insphere). It evaluates the determinant exactly as
// insphere does, with the error bound ispStaticBound·M⁵ instead of one
// computed from the permanent, and gives up when M is outside [1e-50,
// 1e50], where M⁵ could underflow or overflow.
func insphereStatic(a, b, c, d, e *[3]float64) int {
	aex, bex, cex, dex := a[0]-e[0], b[0]-e[0], c[0]-e[0], d[0]-e[0]
	aey, bey, cey, dey := a[1]-e[1], b[1]-e[1], c[1]-e[1], d[1]-e[1]
	aez, bez, cez, dez := a[2]-e[2], b[2]-e[2], c[2]-e[2], d[2]-e[2]

	m := math.Float64frombits(max(
		max(max(absBits(aex), absBits(bex)), max(absBits(cex), absBits(dex))),
		max(max(absBits(aey), absBits(bey)), max(absBits(cey), absBits(dey))),
		max(max(absBits(aez), absBits(bez)), max(absBits(cez), absBits(dez)))))

	ab := aex*bey - bex*aey
	bc := bex*cey - cex*bey
	cd := cex*dey - dex*cey
	da := dex*aey - aex*dey
	ac := aex*cey - cex*aey
	bd := bex*dey - dex*bey

	abc := aez*bc - bez*ac + cez*ab
	bcd := bez*cd - cez*bd + dez*bc
	cda := cez*da + dez*ac + aez*cd
	dab := dez*ab + aez*bd + bez*da

	alift := aex*aex + aey*aey + aez*aez
	blift := bex*bex + bey*bey + bez*bez
	clift := cex*cex + cey*cey + cez*cez
	dlift := dex*dex + dey*dey + dez*dez

	det := (dlift*abc - clift*dab) + (blift*cda - alift*bcd)
	if !(m >= 1e-50 && m <= 1e50) {
		return 0
	}
	m2 := m * m
	bound := ispStaticBound * (m2 * m2 * m)
	if det > bound {
		return -1
	}
	if -det > bound {
		return 1
	}
	return 0
}

// Expansion arithmetic (Shewchuk 1997, sections 2.3–2.8). An expansion is a
// slice of float64 components, nonoverlapping and ordered by increasing
// magnitude, whose exact sum is the value represented; zero components are
// eliminated, and zero itself is the one-component expansion {0}.

// twoSum returns x = fl(a+b) and the roundoff y with a+b = x+y exactly.
func twoSum(a, b float64) (x, y float64) {
	x = a + b
	bv := x - a
	av := x - bv
	return x, (a - av) + (b - bv)
}

// fastTwoSum is twoSum for |a| ≥ |b|.
func fastTwoSum(a, b float64) (x, y float64) {
	x = a + b
	return x, b - (x - a)
}

// twoDiff returns x = fl(a−b) and the roundoff y with a−b = x+y exactly.
func twoDiff(a, b float64) (x, y float64) {
	x = a - b
	bv := a - x
	av := x + bv
	return x, (a - av) + (bv - b)
}

// twoProduct returns x = fl(a·b) and the roundoff y with a·b = x+y exactly;
// the fused multiply-add computes the roundoff exactly (it rounds once).
func twoProduct(a, b float64) (x, y float64) {
	x = a * b
	return x, math.FMA(a, b, -x)
}

// arena hands out scratch slices for one exact evaluation; a fresh chunk is
// started when the current one is full so earlier slices stay valid.
type arena struct{ cur []float64 }

func (ar *arena) alloc(n int) []float64 {
	if cap(ar.cur)-len(ar.cur) < n {
		ar.cur = make([]float64, 0, max(4*exactArenaSize, 2*n))
	}
	s := ar.cur[len(ar.cur) : len(ar.cur)+n]
	ar.cur = ar.cur[:len(ar.cur)+n]
	return s
}

// diffExp returns a−b as an expansion.
func (ar *arena) diffExp(a, b float64) []float64 {
	x, y := twoDiff(a, b)
	if y == 0 {
		h := ar.alloc(1)
		h[0] = x
		return h
	}
	h := ar.alloc(2)
	h[0], h[1] = y, x
	return h
}

// sum returns e+f (Shewchuk's fast_expansion_sum_zeroelim).
func (ar *arena) sum(e, f []float64) []float64 {
	h := ar.alloc(len(e) + len(f))
	ei, fi, hi := 0, 0, 0
	enow, fnow := e[0], f[0]
	var q float64
	if (fnow > enow) == (fnow > -enow) {
		q = enow
		ei++
	} else {
		q = fnow
		fi++
	}
	if ei < len(e) && fi < len(f) {
		enow, fnow = e[ei], f[fi]
		var hh float64
		if (fnow > enow) == (fnow > -enow) {
			q, hh = fastTwoSum(enow, q)
			ei++
		} else {
			q, hh = fastTwoSum(fnow, q)
			fi++
		}
		if hh != 0 {
			h[hi] = hh
			hi++
		}
		for ei < len(e) && fi < len(f) {
			enow, fnow = e[ei], f[fi]
			if (fnow > enow) == (fnow > -enow) {
				q, hh = twoSum(q, enow)
				ei++
			} else {
				q, hh = twoSum(q, fnow)
				fi++
			}
			if hh != 0 {
				h[hi] = hh
				hi++
			}
		}
	}
	for ; ei < len(e); ei++ {
		var hh float64
		q, hh = twoSum(q, e[ei])
		if hh != 0 {
			h[hi] = hh
			hi++
		}
	}
	for ; fi < len(f); fi++ {
		var hh float64
		q, hh = twoSum(q, f[fi])
		if hh != 0 {
			h[hi] = hh
			hi++
		}
	}
	if q != 0 || hi == 0 {
		h[hi] = q
		hi++
	}
	return h[:hi]
}

// neg returns −e.
func (ar *arena) neg(e []float64) []float64 {
	h := ar.alloc(len(e))
	for i, v := range e {
		h[i] = -v
	}
	return h
}

// scale returns b·e (Shewchuk's scale_expansion_zeroelim).
func (ar *arena) scale(e []float64, b float64) []float64 {
	h := ar.alloc(2 * len(e))
	hi := 0
	q, hh := twoProduct(e[0], b)
	if hh != 0 {
		h[hi] = hh
		hi++
	}
	for _, enow := range e[1:] {
		p1, p0 := twoProduct(enow, b)
		s, hh := twoSum(q, p0)
		if hh != 0 {
			h[hi] = hh
			hi++
		}
		q, hh = fastTwoSum(p1, s)
		if hh != 0 {
			h[hi] = hh
			hi++
		}
	}
	if q != 0 || hi == 0 {
		h[hi] = q
		hi++
	}
	return h[:hi]
}

// mul returns e·f as the sum of the scalings of e by each component of f.
func (ar *arena) mul(e, f []float64) []float64 {
	if len(e) < len(f) {
		e, f = f, e
	}
	p := ar.scale(e, f[0])
	for _, b := range f[1:] {
		p = ar.sum(p, ar.scale(e, b))
	}
	return p
}

// det2 returns a·d − b·c.
func (ar *arena) det2(a, b, c, d []float64) []float64 {
	return ar.sum(ar.mul(a, d), ar.neg(ar.mul(b, c)))
}

// det3 returns the determinant of the rows u, v, w.
func (ar *arena) det3(u, v, w *[3][]float64) []float64 {
	m0 := ar.det2(v[1], v[2], w[1], w[2])
	m1 := ar.det2(v[0], v[2], w[0], w[2])
	m2 := ar.det2(v[0], v[1], w[0], w[1])
	return ar.sum(ar.sum(ar.mul(u[0], m0), ar.neg(ar.mul(u[1], m1))), ar.mul(u[2], m2))
}

// sign returns the sign of an expansion: that of its largest component.
func sign(e []float64) int {
	switch v := e[len(e)-1]; {
	case v > 0:
		return 1
	case v < 0:
		return -1
	}
	return 0
}

// orient3dExact returns the sign of det[b−a; c−a; d−a] exactly.
func orient3dExact(a, b, c, d *[3]float64) int {
	var backing [exactArenaSize]float64
	ar := arena{cur: backing[:0]}
	var u, v, w [3][]float64
	for k := 0; k < 3; k++ {
		u[k] = ar.diffExp(b[k], a[k])
		v[k] = ar.diffExp(c[k], a[k])
		w[k] = ar.diffExp(d[k], a[k])
	}
	return sign(ar.det3(&u, &v, &w))
}

// insphereExact returns the exact sign of the insphere determinant with the
// convention of InSphere: −det of the rows (p−e, |p−e|²) for p = a, b, c, d.
func insphereExact(a, b, c, d, e *[3]float64) int {
	var backing [exactArenaSize]float64
	ar := arena{cur: backing[:0]}
	var r [4][3][]float64
	var lift [4][]float64
	for i, p := range [4]*[3]float64{a, b, c, d} {
		for k := 0; k < 3; k++ {
			r[i][k] = ar.diffExp(p[k], e[k])
		}
		l := ar.mul(r[i][0], r[i][0])
		l = ar.sum(l, ar.mul(r[i][1], r[i][1]))
		lift[i] = ar.sum(l, ar.mul(r[i][2], r[i][2]))
	}
	// Expansion of the 4×4 determinant along the lift column:
	// det = −l_a·M_bcd + l_b·M_acd − l_c·M_abd + l_d·M_abc.
	mbcd := ar.det3(&r[1], &r[2], &r[3])
	macd := ar.det3(&r[0], &r[2], &r[3])
	mabd := ar.det3(&r[0], &r[1], &r[3])
	mabc := ar.det3(&r[0], &r[1], &r[2])
	det := ar.sum(ar.mul(lift[1], macd), ar.neg(ar.mul(lift[0], mbcd)))
	det = ar.sum(det, ar.neg(ar.mul(lift[2], mabd)))
	det = ar.sum(det, ar.mul(lift[3], mabc))
	return -sign(det)
}
