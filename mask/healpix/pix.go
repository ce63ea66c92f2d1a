package healpix

import (
	"math"
)

// Base-face layout (Górski et al. 2005, Fig. 4): jrll is the ring index, in
// units of Nside, of the southernmost corner of each of the 12 base pixels
// counted from the north pole, and jpll the longitude of that corner in
// units of π/4.
var (
	jrll = [12]int64{2, 2, 2, 2, 3, 3, 3, 3, 4, 4, 4, 4}
	jpll = [12]int64{1, 3, 5, 7, 0, 2, 4, 6, 1, 3, 5, 7}
)

// Ang2PixRing returns the RING-ordered pixel at nside containing the
// direction with colatitude theta in [0, π] and longitude phi (any finite
// value; it is taken modulo 2π), both in radians. It returns -1 if theta is
// outside [0, π] or either angle is not finite. It panics if nside is not a
// valid Nside.
func Ang2PixRing(nside int, theta, phi float64) int64 {
	o := Order(nside)
	z, sth, haveSth, ok := thetaLoc(theta, phi)
	if !ok {
		return -1
	}
	return loc2ring(o, z, phi, sth, haveSth)
}

// Ang2PixNest returns the NESTED-ordered pixel at nside containing the
// direction with colatitude theta in [0, π] and longitude phi (any finite
// value; it is taken modulo 2π), both in radians. It returns -1 if theta is
// outside [0, π] or either angle is not finite. It panics if nside is not a
// valid Nside.
func Ang2PixNest(nside int, theta, phi float64) int64 {
	o := Order(nside)
	z, sth, haveSth, ok := thetaLoc(theta, phi)
	if !ok {
		return -1
	}
	return loc2nest(o, z, phi, sth, haveSth)
}

// RADec2PixNest returns the NESTED-ordered pixel at nside containing the
// direction at right ascension ra and declination dec in degrees, or -1 if
// dec is outside [-90, 90] or either angle is not finite. It panics if nside
// is not a valid Nside.
func RADec2PixNest(nside int, ra, dec float64) int64 {
	theta, phi := RADec2Ang(ra, dec)
	return Ang2PixNest(nside, theta, phi)
}

// RADec2PixRing returns the RING-ordered pixel at nside containing the
// direction at right ascension ra and declination dec in degrees, or -1 if
// dec is outside [-90, 90] or either angle is not finite. It panics if nside
// is not a valid Nside.
func RADec2PixRing(nside int, ra, dec float64) int64 {
	theta, phi := RADec2Ang(ra, dec)
	return Ang2PixRing(nside, theta, phi)
}

// thetaLoc prepares z = cos θ and, within 0.01 rad of a pole, sin θ.
func thetaLoc(theta, phi float64) (z, sth float64, haveSth, ok bool) {
	if !(theta >= 0 && theta <= math.Pi) || math.IsInf(phi, 0) || math.IsNaN(phi) {
		return 0, 0, false, false
	}
	z = math.Cos(theta)
	if theta < 0.01 || theta > 3.14159-0.01 {
		return z, math.Sin(theta), true, true
	}
	return z, 0, false, true
}

// Vec2PixRing returns the RING-ordered pixel at nside containing the
// direction of v, which need not be normalised. It returns -1 for a zero or
// non-finite vector. It panics if nside is not a valid Nside.
func Vec2PixRing(nside int, v [3]float64) int64 {
	o := Order(nside)
	z, phi, sth, haveSth, ok := vecLoc(v)
	if !ok {
		return -1
	}
	return loc2ring(o, z, phi, sth, haveSth)
}

// Vec2PixNest returns the NESTED-ordered pixel at nside containing the
// direction of v, which need not be normalised. It returns -1 for a zero or
// non-finite vector. It panics if nside is not a valid Nside.
func Vec2PixNest(nside int, v [3]float64) int64 {
	o := Order(nside)
	z, phi, sth, haveSth, ok := vecLoc(v)
	if !ok {
		return -1
	}
	return loc2nest(o, z, phi, sth, haveSth)
}

func vecLoc(v [3]float64) (z, phi, sth float64, haveSth, ok bool) {
	l := math.Sqrt(dot(v, v))
	if !(l > 0) || math.IsInf(l, 0) {
		return 0, 0, 0, false, false
	}
	il := 1 / l
	phi = 0
	if v[0] != 0 || v[1] != 0 {
		phi = math.Atan2(v[1], v[0])
	}
	z = v[2] * il
	if math.Abs(z) > 0.99 {
		return z, phi, math.Sqrt(v[0]*v[0]+v[1]*v[1]) * il, true, true
	}
	return z, phi, 0, false, true
}

// phiColumn maps phi to tt = phi/(π/2) reduced to [0, 4).
func phiColumn(phi float64) float64 {
	v := phi * invHalfPi
	if v >= 0 {
		if v < 4 {
			return v
		}
		return math.Mod(v, 4)
	}
	t := math.Mod(v, 4) + 4
	if t == 4 {
		return 0
	}
	return t
}

// polarDist returns Nside·sqrt(3(1-|z|)), the scaled distance to the nearest
// pole used in the polar caps (Górski et al. 2005, Eq. 19), computed from
// sin θ when it is available so that it keeps full relative precision.
func polarDist(nside float64, za, sth float64, haveSth bool) float64 {
	if za < 0.99 || !haveSth {
		return nside * math.Sqrt(3*(1-za))
	}
	// 1-|z| = sin²θ/(1+|z|)
	return nside * sth / math.Sqrt((1+za)/3)
}

// loc2ring implements Górski et al. 2005, Eqs. 18-20 for the RING scheme.
func loc2ring(order int, z, phi, sth float64, haveSth bool) int64 {
	nside := int64(1) << order
	za := math.Abs(z)
	tt := phiColumn(phi)
	if za <= twoThirds {
		nl4 := 4 * nside
		t1 := float64(nside) * (0.5 + tt)
		t2 := float64(nside) * z * 0.75
		jp := int64(t1 - t2) // ascending edge line
		jm := int64(t1 + t2) // descending edge line
		ir := nside + 1 + jp - jm
		kshift := 1 - (ir & 1)
		t := jp + jm - nside + kshift + 1 + nl4 + nl4
		ip := (t >> 1) & (nl4 - 1)
		return 2*nside*(nside-1) + (ir-1)*nl4 + ip
	}
	tp := tt - math.Floor(tt)
	tmp := polarDist(float64(nside), za, sth, haveSth)
	jp := int64(tp * tmp)
	jm := int64((1 - tp) * tmp)
	ir := jp + jm + 1 // ring counted from the nearest pole
	ip := int64(tt * float64(ir))
	if ip >= 4*ir {
		ip = 4*ir - 1
	}
	if z > 0 {
		return 2*ir*(ir-1) + ip
	}
	return 12*nside*nside - 2*ir*(ir+1) + ip
}

// loc2nest implements Górski et al. 2005, Eqs. 18-20 for the NESTED scheme,
// locating the base face and the (x, y) position inside it.
func loc2nest(order int, z, phi, sth float64, haveSth bool) int64 {
	nside := int64(1) << order
	za := math.Abs(z)
	tt := phiColumn(phi)
	if za <= twoThirds {
		t1 := float64(nside) * (0.5 + tt)
		t2 := float64(nside) * (z * 0.75)
		jp := int64(t1 - t2)
		jm := int64(t1 + t2)
		ifp := jp >> order
		ifm := jm >> order
		var face int64
		switch {
		case ifp == ifm:
			face = ifp | 4
		case ifp < ifm:
			face = ifp
		default:
			face = ifm + 8
		}
		ix := jm & (nside - 1)
		iy := nside - (jp & (nside - 1)) - 1
		return xyf2nest(order, ix, iy, face)
	}
	ntt := int64(tt)
	if ntt > 3 {
		ntt = 3
	}
	tp := tt - float64(ntt)
	tmp := polarDist(float64(nside), za, sth, haveSth)
	jp := min(int64(tp*tmp), nside-1)
	jm := min(int64((1-tp)*tmp), nside-1)
	if z >= 0 {
		return xyf2nest(order, nside-jm-1, nside-jp-1, ntt)
	}
	return xyf2nest(order, jp, jm, ntt+8)
}

// spread interleaves the low 32 bits of v with zeros: bit i moves to 2i.
func spread(v uint64) uint64 {
	v &= 0xFFFFFFFF
	v = (v | v<<16) & 0x0000FFFF0000FFFF
	v = (v | v<<8) & 0x00FF00FF00FF00FF
	v = (v | v<<4) & 0x0F0F0F0F0F0F0F0F
	v = (v | v<<2) & 0x3333333333333333
	v = (v | v<<1) & 0x5555555555555555
	return v
}

// compact is the inverse of spread: it gathers the even bits of v.
func compact(v uint64) uint64 {
	v &= 0x5555555555555555
	v = (v | v>>1) & 0x3333333333333333
	v = (v | v>>2) & 0x0F0F0F0F0F0F0F0F
	v = (v | v>>4) & 0x00FF00FF00FF00FF
	v = (v | v>>8) & 0x0000FFFF0000FFFF
	v = (v | v>>16) & 0x00000000FFFFFFFF
	return v
}

// xyf2nest returns the NESTED pixel at (ix, iy) of base face face: the face
// number followed by the bits of ix and iy interleaved (Górski et al. 2005,
// Section 4.1).
func xyf2nest(order int, ix, iy, face int64) int64 {
	return face<<(2*order) + int64(spread(uint64(ix))) + int64(spread(uint64(iy))<<1)
}

func nest2xyf(order int, pix int64) (ix, iy, face int64) {
	face = pix >> (2 * order)
	p := uint64(pix & (int64(1)<<(2*order) - 1))
	return int64(compact(p)), int64(compact(p >> 1)), face
}

// isqrt returns floor(sqrt(x)) for x >= 0, exactly for all int64 x.
func isqrt(x int64) int64 {
	r := int64(math.Sqrt(float64(x)))
	for r*r > x {
		r--
	}
	for (r+1)*(r+1) <= x {
		r++
	}
	return r
}

func ring2xyf(order int, pix int64) (ix, iy, face int64) {
	nside := int64(1) << order
	npix := 12 * nside * nside
	ncap := 2 * nside * (nside - 1)
	nl2 := 2 * nside
	var iring, iphi, kshift, nr int64
	switch {
	case pix < ncap: // north polar cap
		iring = (1 + isqrt(1+2*pix)) >> 1
		iphi = (pix + 1) - 2*iring*(iring-1)
		nr = iring
		face = (iphi - 1) / nr
	case pix < npix-ncap: // equatorial belt
		ip := pix - ncap
		tmp := ip >> (order + 2)
		iring = tmp + nside
		iphi = ip - tmp*4*nside + 1
		kshift = (iring + nside) & 1
		nr = nside
		ire := tmp + 1
		irm := nl2 + 2 - ire
		ifm := (iphi - (ire >> 1) + nside - 1) >> order
		ifp := (iphi - (irm >> 1) + nside - 1) >> order
		switch {
		case ifp == ifm:
			face = ifp | 4
		case ifp < ifm:
			face = ifp
		default:
			face = ifm + 8
		}
	default: // south polar cap
		ip := npix - pix
		iring = (1 + isqrt(2*ip-1)) >> 1
		iphi = 4*iring + 1 - (ip - 2*iring*(iring-1))
		nr = iring
		iring = 2*nl2 - iring
		face = (iphi-1)/nr + 8
	}
	irt := iring - (2+(face>>2))*nside + 1
	ipt := 2*iphi - jpll[face]*nr - kshift - 1
	if ipt >= nl2 {
		ipt -= 8 * nside
	}
	return (ipt - irt) >> 1, (-ipt - irt) >> 1, face
}

func xyf2ring(order int, ix, iy, face int64) int64 {
	nside := int64(1) << order
	nl4 := 4 * nside
	jr := jrll[face]*nside - ix - iy - 1
	var nr, kshift, before int64
	switch {
	case jr < nside:
		nr = jr
		before = 2 * nr * (nr - 1)
	case jr > 3*nside:
		nr = nl4 - jr
		before = 12*nside*nside - 2*(nr+1)*nr
	default:
		nr = nside
		before = 2*nside*(nside-1) + (jr-nside)*nl4
		kshift = (jr - nside) & 1
	}
	jp := (jpll[face]*nr + ix - iy + 1 + kshift) / 2
	if jp > nl4 {
		jp -= nl4
	} else if jp < 1 {
		jp += nl4
	}
	return before + jp - 1
}

// Nest2Ring returns the RING-ordered number of the NESTED pixel pix at
// nside. It returns -1 if pix is outside [0, NPix(nside)). It panics if nside
// is not a valid Nside.
func Nest2Ring(nside int, pix int64) int64 {
	o := Order(nside)
	if pix < 0 || pix >= 12*int64(nside)*int64(nside) {
		return -1
	}
	ix, iy, f := nest2xyf(o, pix)
	return xyf2ring(o, ix, iy, f)
}

// Ring2Nest returns the NESTED-ordered number of the RING pixel pix at
// nside. It returns -1 if pix is outside [0, NPix(nside)). It panics if nside
// is not a valid Nside.
func Ring2Nest(nside int, pix int64) int64 {
	o := Order(nside)
	if pix < 0 || pix >= 12*int64(nside)*int64(nside) {
		return -1
	}
	ix, iy, f := ring2xyf(o, pix)
	return xyf2nest(o, ix, iy, f)
}

// pixLoc is the centre of a pixel: z = cos θ, phi, and sin θ when it was
// computed directly (within z = ±0.99 of the poles).
type pixLoc struct {
	z, phi, sth float64
	haveSth     bool
}

func (l pixLoc) theta() float64 {
	if l.haveSth {
		return math.Atan2(l.sth, l.z)
	}
	return math.Acos(l.z)
}

func (l pixLoc) vec() [3]float64 {
	s := l.sth
	if !l.haveSth {
		s = math.Sqrt((1 - l.z) * (1 + l.z))
	}
	return [3]float64{s * math.Cos(l.phi), s * math.Sin(l.phi), l.z}
}

// ring2loc returns the centre of RING pixel pix (Górski et al. 2005,
// Eqs. 4-9).
func ring2loc(order int, pix int64) pixLoc {
	nside := int64(1) << order
	npix := 12 * nside * nside
	ncap := 2 * nside * (nside - 1)
	fact2 := 4 / float64(npix)
	fact1 := float64(nside<<1) * fact2
	var l pixLoc
	switch {
	case pix < ncap:
		iring := (1 + isqrt(1+2*pix)) >> 1
		iphi := (pix + 1) - 2*iring*(iring-1)
		tmp := float64(iring*iring) * fact2
		l.z = 1 - tmp
		if l.z > 0.99 {
			l.sth = math.Sqrt(tmp * (2 - tmp))
			l.haveSth = true
		}
		l.phi = (float64(iphi) - 0.5) * halfPi / float64(iring)
	case pix < npix-ncap:
		nl4 := 4 * nside
		ip := pix - ncap
		tmp := ip >> (order + 2)
		iring := tmp + nside
		iphi := ip - nl4*tmp + 1
		fodd := 0.5
		if (iring+nside)&1 != 0 {
			fodd = 1
		}
		l.z = float64(2*nside-iring) * fact1
		l.phi = (float64(iphi) - fodd) * math.Pi * 0.75 * fact1
	default:
		ip := npix - pix
		iring := (1 + isqrt(2*ip-1)) >> 1
		iphi := 4*iring + 1 - (ip - 2*iring*(iring-1))
		tmp := float64(iring*iring) * fact2
		l.z = tmp - 1
		if l.z < -0.99 {
			l.sth = math.Sqrt(tmp * (2 - tmp))
			l.haveSth = true
		}
		l.phi = (float64(iphi) - 0.5) * halfPi / float64(iring)
	}
	return l
}

// nest2loc returns the centre of NESTED pixel pix.
func nest2loc(order int, pix int64) pixLoc {
	nside := int64(1) << order
	fact2 := 4 / float64(12*nside*nside)
	fact1 := float64(nside<<1) * fact2
	ix, iy, face := nest2xyf(order, pix)
	jr := jrll[face]<<order - ix - iy - 1
	var l pixLoc
	var nr int64
	switch {
	case jr < nside:
		nr = jr
		tmp := float64(nr*nr) * fact2
		l.z = 1 - tmp
		if l.z > 0.99 {
			l.sth = math.Sqrt(tmp * (2 - tmp))
			l.haveSth = true
		}
	case jr > 3*nside:
		nr = 4*nside - jr
		tmp := float64(nr*nr) * fact2
		l.z = tmp - 1
		if l.z < -0.99 {
			l.sth = math.Sqrt(tmp * (2 - tmp))
			l.haveSth = true
		}
	default:
		nr = nside
		l.z = float64(2*nside-jr) * fact1
	}
	tmp := jpll[face]*nr + ix - iy
	if tmp < 0 {
		tmp += 8 * nr
	}
	if nr == nside {
		l.phi = 0.75 * halfPi * float64(tmp) * fact1
	} else {
		l.phi = (0.5 * halfPi * float64(tmp)) / float64(nr)
	}
	return l
}

// Pix2AngRing returns the centre of RING pixel pix at nside as colatitude
// theta in [0, π] and longitude phi in [0, 2π), in radians. It returns NaN
// for both if pix is outside [0, NPix(nside)). It panics if nside is not a
// valid Nside.
func Pix2AngRing(nside int, pix int64) (theta, phi float64) {
	o := Order(nside)
	if pix < 0 || pix >= 12*int64(nside)*int64(nside) {
		return math.NaN(), math.NaN()
	}
	l := ring2loc(o, pix)
	return l.theta(), l.phi
}

// Pix2AngNest returns the centre of NESTED pixel pix at nside as colatitude
// theta in [0, π] and longitude phi in [0, 2π), in radians. It returns NaN
// for both if pix is outside [0, NPix(nside)). It panics if nside is not a
// valid Nside.
func Pix2AngNest(nside int, pix int64) (theta, phi float64) {
	o := Order(nside)
	if pix < 0 || pix >= 12*int64(nside)*int64(nside) {
		return math.NaN(), math.NaN()
	}
	l := nest2loc(o, pix)
	return l.theta(), l.phi
}

// Pix2VecRing returns the unit vector to the centre of RING pixel pix at
// nside. It returns NaNs if pix is outside [0, NPix(nside)). It panics if
// nside is not a valid Nside.
func Pix2VecRing(nside int, pix int64) [3]float64 {
	o := Order(nside)
	if pix < 0 || pix >= 12*int64(nside)*int64(nside) {
		return [3]float64{math.NaN(), math.NaN(), math.NaN()}
	}
	return ring2loc(o, pix).vec()
}

// Pix2VecNest returns the unit vector to the centre of NESTED pixel pix at
// nside. It returns NaNs if pix is outside [0, NPix(nside)). It panics if
// nside is not a valid Nside.
func Pix2VecNest(nside int, pix int64) [3]float64 {
	o := Order(nside)
	if pix < 0 || pix >= 12*int64(nside)*int64(nside) {
		return [3]float64{math.NaN(), math.NaN(), math.NaN()}
	}
	return nest2loc(o, pix).vec()
}
