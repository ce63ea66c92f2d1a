package randoms

import (
	"math"
	"math/bits"
	"math/rand/v2"
)

// Base-face ring and longitude indices of the HEALPix scheme (Górski et
// al. 2005, Fig. 4): face f's northmost corner lies on ring jrll[f]·Nside
// and its centre at longitude jpll[f]·π/4.
var (
	jrll = [12]float64{2, 2, 2, 2, 3, 3, 3, 3, 4, 4, 4, 4}
	jpll = [12]float64{1, 3, 5, 7, 0, 2, 4, 6, 1, 3, 5, 7}
)

// compact gathers the even bits of v into its low half (the inverse of
// interleaving).
func compact(v uint64) uint64 {
	v &= 0x5555555555555555
	v = (v ^ (v >> 1)) & 0x3333333333333333
	v = (v ^ (v >> 2)) & 0x0f0f0f0f0f0f0f0f
	v = (v ^ (v >> 4)) & 0x00ff00ff00ff00ff
	v = (v ^ (v >> 8)) & 0x0000ffff0000ffff
	v = (v ^ (v >> 16)) & 0x00000000ffffffff
	return v
}

// uniformInPixel returns a direction drawn uniformly within NESTED pixel p
// at nside, as longitude phi in radians in [0, 2π) and z = cos(colatitude)
// = sin(Dec). The pixel is split into its base face f and integer face
// coordinates (ix, iy) from the bits of p; a point (x, y) uniform in the
// pixel's square of face coordinates is mapped to the sphere by the HEALPix
// projection, which is equal-area (Górski et al. 2005, Section 4;
// Calabretta & Roukema 2007), so the point is uniform on the pixel. No
// rejection is needed.
func uniformInPixel(rng *rand.Rand, nside int, p int64) (phi, z float64) {
	order := uint(bits.TrailingZeros(uint(nside)))
	face := int(p >> (2 * order))
	sub := uint64(p) & (1<<(2*order) - 1)
	ix, iy := compact(sub), compact(sub>>1)
	n := float64(nside)
	x := (float64(ix) + rng.Float64()) / n
	y := (float64(iy) + rng.Float64()) / n
	// Ring coordinate jr in units of Nside: 0 at the north pole, 4 at the
	// south; nr the ring's number of pixels per quarter, relative.
	jr := jrll[face] - x - y
	var nr float64
	switch {
	case jr < 1:
		nr = jr
		z = 1 - nr*nr/3
	case jr > 3:
		nr = 4 - jr
		z = nr*nr/3 - 1
	default:
		nr = 1
		z = (2 - jr) * 2 / 3
	}
	t := jpll[face]*nr + x - y
	if t < 0 {
		t += 8
	}
	if t >= 8 {
		t -= 8
	}
	if nr > 1e-15 {
		phi = math.Pi / 4 * t / nr
	}
	return phi, z
}
