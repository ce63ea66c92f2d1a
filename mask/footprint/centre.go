package footprint

import (
	"errors"
	"math"

	"github.com/filigree-survey/filigree/internal/parallel"
	"github.com/filigree-survey/filigree/mask/healpix"
)

// centreNside is the HEALPix resolution at which Centre samples a
// footprint (pixels of 0.23°).
const centreNside = 256

// Centre returns the completeness-weighted mean direction of f (RA, Dec in
// degrees): the normalised sum of the unit vectors of the centres of the
// NESTED pixels at Nside 256, each weighted by the completeness there. For
// a footprint spread over the whole sky the mean vector is short and the
// direction ill-defined; length (0 to 1) says how concentrated the
// footprint is. It returns an error when no pixel centre lies in f.
func Centre(f Footprint) (ra, dec, length float64, err error) {
	npix := healpix.NPix(centreNside)
	const chunk = 1 << 14
	parts := make([][4]float64, (npix+chunk-1)/chunk)
	parallel.For(int(npix), chunk, func(lo, hi int) {
		var s [4]float64
		for p := lo; p < hi; p++ {
			v := healpix.Pix2VecNest(centreNside, int64(p))
			r := math.Atan2(v[1], v[0]) * 180 / math.Pi
			if r < 0 {
				r += 360
			}
			d := math.Asin(math.Max(-1, math.Min(1, v[2]))) * 180 / math.Pi
			c := f.Completeness(r, d)
			s[0] += c * v[0]
			s[1] += c * v[1]
			s[2] += c * v[2]
			s[3] += c
		}
		parts[lo/chunk] = s
	})
	var s [4]float64
	for _, p := range parts {
		for i := range s {
			s[i] += p[i]
		}
	}
	if s[3] == 0 {
		return 0, 0, 0, errors.New("footprint: no pixel centre at Nside 256 lies in the footprint")
	}
	n := math.Sqrt(s[0]*s[0] + s[1]*s[1] + s[2]*s[2])
	if n == 0 {
		return 0, 0, 0, errors.New("footprint: the footprint has no mean direction")
	}
	ra = math.Atan2(s[1], s[0]) * 180 / math.Pi
	if ra < 0 {
		ra += 360
	}
	dec = math.Asin(s[2]/n) * 180 / math.Pi
	return ra, dec, n / s[3], nil
}
