package region

import (
	"fmt"
	"math"
	"sync"

	"github.com/filigree-survey/filigree/internal/parallel"
)

// Region is a sky footprint: the union of its include shapes minus the
// union of its exclude shapes, with a completeness per point (see the
// package documentation). A Region is safe for concurrent use.
type Region struct {
	// Name is the file name the region was read from, or "".
	Name string

	shapes []Shape

	once sync.Once
	m    Measure
}

// New returns the region made of shapes, in order, or an error naming the
// first invalid shape (by its 1-based index and Line, when set). The shapes
// are copied.
func New(shapes ...Shape) (*Region, error) {
	r := &Region{shapes: make([]Shape, len(shapes))}
	for i := range shapes {
		s := shapes[i]
		s.Vertices = append([]float64(nil), s.Vertices...)
		if err := s.compile(); err != nil {
			if s.Line > 0 {
				return nil, fmt.Errorf("region: shape %d (line %d): %v", i+1, s.Line, err)
			}
			return nil, fmt.Errorf("region: shape %d: %v", i+1, err)
		}
		r.shapes[i] = s
	}
	return r, nil
}

// Shapes returns a copy of the region's shapes, in the order given. The
// Vertices slices are shared with the region and must not be modified.
func (r *Region) Shapes() []Shape { return append([]Shape(nil), r.shapes...) }

// BoundingCap returns the centre (RA, Dec in degrees) and radius (degrees)
// of a cap that contains shape i of the region, with the boundary
// tolerance; the radius is 180 when no smaller cap is known (a polygon
// spanning more than a hemisphere, a box wider than 180° in RA reaching
// both hemispheres). It panics if i is out of range.
func (r *Region) BoundingCap(i int) (ra, dec, radius float64) {
	c := &r.shapes[i].c
	ra = normRA(math.Atan2(c.centre[1], c.centre[0]) / deg)
	dec = math.Asin(math.Max(-1, math.Min(1, c.centre[2]))) / deg
	return ra, dec, c.bound / deg
}

// Contains reports whether the point at ra, dec (degrees) is in the
// footprint: in some include shape and in no exclude shape, shapes being
// closed with the BoundaryTolerance. Any finite ra is reduced modulo 360;
// dec outside [−90, 90] or NaN values are never contained.
func (r *Region) Contains(ra, dec float64) bool {
	return r.Completeness(ra, dec) > 0
}

// Completeness returns the completeness at ra, dec (degrees): the largest
// completeness of the include shapes that contain the point, or 0 when the
// point is outside the footprint (in no include shape, in an exclude shape,
// or not a valid position).
func (r *Region) Completeness(ra, dec float64) float64 {
	if !(dec >= -90 && dec <= 90) || math.IsNaN(ra) || math.IsInf(ra, 0) {
		return 0
	}
	ra = normRA(ra)
	p := unitVec(ra, dec)
	best := 0.0
	for i := range r.shapes {
		s := &r.shapes[i]
		if !s.Exclude && s.c.comp <= best {
			continue // cannot raise the completeness
		}
		if s.c.bound < math.Pi && chord2(p, s.c.centre) > boundChord2(s.c.bound) {
			continue
		}
		if s.contains(p, ra, dec) {
			if s.Exclude {
				return 0
			}
			best = s.c.comp
		}
	}
	return best
}

// boundChord2 returns the squared chord of an angle t in radians.
func boundChord2(t float64) float64 {
	h := 2 * math.Sin(t/2)
	return h * h * (1 + 1e-12)
}

// manyChunk is the number of points a goroutine of CompletenessMany takes
// at a time.
const manyChunk = 1 << 12

// CompletenessMany sets dst[i] to Completeness(ra[i], dec[i]). Large inputs
// are split over GOMAXPROCS goroutines; each value is computed
// independently, so the results do not depend on the number of threads. It
// panics if the three lengths differ.
func (r *Region) CompletenessMany(dst, ra, dec []float64) {
	if len(dst) != len(ra) || len(dst) != len(dec) {
		panic("region: CompletenessMany: slice lengths differ")
	}
	parallel.For(len(dst), manyChunk, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			dst[i] = r.Completeness(ra[i], dec[i])
		}
	})
}
