package healpix

import (
	"errors"
	"fmt"
	"math"
	"slices"
)

// Range is the half-open interval [Start, End) of pixel numbers.
type Range struct {
	Start, End int64
}

// Pixels expands sorted, disjoint ranges into the list of their pixel
// numbers. The result has as many elements as the ranges cover, which can be
// very large at high Nside.
func Pixels(r []Range) []int64 {
	var n int64
	for _, x := range r {
		n += x.End - x.Start
	}
	out := make([]int64, 0, n)
	for _, x := range r {
		for p := x.Start; p < x.End; p++ {
			out = append(out, p)
		}
	}
	return out
}

// inclusiveOversampling is log2 of the factor by which a pixel is subdivided
// when deciding whether it overlaps a shape in inclusive mode; healpy's
// default (fact=4) is the same.
const inclusiveOversampling = 2

// QueryDisc returns the pixels at nside of the disc of angular radius radius
// (radians) around the direction centre (need not be normalised), as sorted,
// disjoint ranges in the NESTED ordering if nest is true and in the RING
// ordering otherwise.
//
// With inclusive false the result is exactly the pixels whose centres lie
// within radius of centre (angular distance ≤ radius), as in healpy
// query_disc(inclusive=False).
//
// With inclusive true the result contains every pixel that overlaps the disc,
// and possibly some that do not: a pixel is returned if its centre is within
// the disc or if one of its 16 sub-pixels at 4·nside has its centre within
// radius + MaxPixRad(4·nside) of centre. At Nside 2^28 the sub-pixels are
// at 2·nside, and at Nside 2^29 a pixel is returned if its own centre is
// within radius + MaxPixRad(nside). This is the rule of healpy
// query_disc(inclusive=True, fact=4, nest=True); the RING result is the same
// set renumbered, whereas healpy's RING ordering uses a slightly different
// superset (the two differ by a few boundary pixels).
//
// The pixels are found by descending the NESTED hierarchy from the 12 base
// pixels, keeping whole sub-trees whose pixels are all inside, so the cost
// grows with the length of the disc's boundary in pixels, not with its
// area. A radius ≥ π gives the whole sphere and a negative radius nothing.
// QueryDisc returns an error if nside is invalid, centre is zero or not
// finite, or radius is NaN.
func QueryDisc(nside int, centre [3]float64, radius float64, inclusive, nest bool) ([]Range, error) {
	if err := CheckNside(nside); err != nil {
		return nil, err
	}
	c, err := unit(centre)
	if err != nil {
		return nil, fmt.Errorf("healpix: disc centre: %w", err)
	}
	if math.IsNaN(radius) {
		return nil, errors.New("healpix: disc radius is NaN")
	}
	if radius < 0 {
		return nil, nil
	}
	if radius >= math.Pi {
		return []Range{{0, NPix(nside)}}, nil
	}
	return runQuery(nside, [][3]float64{c}, []float64{radius}, inclusive, nest), nil
}

// QueryPolygon returns the pixels at nside of the convex spherical polygon
// whose vertices, in order (either sense), are the directions in vertices
// (need not be normalised); the edges are the great-circle arcs between
// consecutive vertices, closing back to the first. The result is sorted,
// disjoint ranges in the NESTED ordering if nest is true and in the RING
// ordering otherwise.
//
// With inclusive false the result is exactly the pixels whose centres lie
// inside the polygon, as in healpy query_polygon(inclusive=False). With
// inclusive true it contains every pixel that overlaps the polygon and
// possibly some that do not, by the same sub-pixel rule as QueryDisc, the
// polygon being treated as the intersection of the hemispheres bounded by
// its edges and of its smallest enclosing circle (as healpy does).
//
// QueryPolygon returns an error if nside is invalid, there are fewer than
// three vertices, a vertex is zero or not finite, three consecutive vertices
// are (nearly) on one great circle, or the polygon is not convex.
func QueryPolygon(nside int, vertices [][3]float64, inclusive, nest bool) ([]Range, error) {
	if err := CheckNside(nside); err != nil {
		return nil, err
	}
	nv := len(vertices)
	if nv < 3 {
		return nil, fmt.Errorf("healpix: polygon has %d vertices, need at least 3", nv)
	}
	vv := make([][3]float64, nv)
	for i, v := range vertices {
		u, err := unit(v)
		if err != nil {
			return nil, fmt.Errorf("healpix: polygon vertex %d: %w", i, err)
		}
		vv[i] = u
	}
	normals := make([][3]float64, nv, nv+1)
	radii := make([]float64, nv, nv+1)
	flip := 0.0
	for i := range vv {
		n := cross(vv[i], vv[(i+1)%nv])
		if dot(n, n) == 0 {
			return nil, fmt.Errorf("healpix: polygon vertices %d and %d coincide or are antipodal", i, (i+1)%nv)
		}
		n = norm(n)
		h := dot(n, vv[(i+2)%nv])
		if math.Abs(h) <= 1e-10 {
			return nil, fmt.Errorf("healpix: polygon corner at vertex %d is degenerate", (i+1)%nv)
		}
		if i == 0 {
			flip = 1
			if h < 0 {
				flip = -1
			}
		} else if flip*h <= 0 {
			return nil, errors.New("healpix: polygon is not convex")
		}
		normals[i] = [3]float64{flip * n[0], flip * n[1], flip * n[2]}
		radii[i] = halfPi
	}
	if inclusive {
		c, cosr := enclosingCircle(vv)
		normals = append(normals, c)
		radii = append(radii, math.Acos(min(1, max(-1, cosr))))
	}
	return runQuery(nside, normals, radii, inclusive, nest), nil
}

func unit(v [3]float64) ([3]float64, error) {
	l := math.Sqrt(dot(v, v))
	if !(l > 0) || math.IsInf(l, 0) {
		return v, fmt.Errorf("vector %v is zero or not finite", v)
	}
	return [3]float64{v[0] / l, v[1] / l, v[2] / l}, nil
}

// enclosingCircle returns the centre and the cosine of the radius of the
// smallest circle containing the unit vectors p, by the incremental
// algorithm of Welzl (1991) adapted to the sphere: a point outside the
// current circle must lie on the boundary of the circle of the points seen
// so far, which is then spanned by two or three of them.
func enclosingCircle(p [][3]float64) ([3]float64, float64) {
	c := norm(add(p[0], p[1]))
	cr := dot(p[0], c)
	for i := 2; i < len(p); i++ {
		if dot(p[i], c) < cr {
			c, cr = circleWith1(p, i)
		}
	}
	return c, cr
}

// circleWith1 is the smallest circle of p[:q+1] with p[q] on its boundary.
func circleWith1(p [][3]float64, q int) ([3]float64, float64) {
	c := norm(add(p[0], p[q]))
	cr := dot(p[0], c)
	for i := 1; i < q; i++ {
		if dot(p[i], c) < cr {
			c, cr = circleWith2(p, i, q)
		}
	}
	return c, cr
}

// circleWith2 is the smallest circle of p[:q1+1] and p[q2] with p[q1] and
// p[q2] on its boundary.
func circleWith2(p [][3]float64, q1, q2 int) ([3]float64, float64) {
	c := norm(add(p[q1], p[q2]))
	cr := dot(p[q1], c)
	for i := 0; i < q1; i++ {
		if dot(p[i], c) < cr {
			c = norm(cross(sub(p[q1], p[i]), sub(p[q2], p[i])))
			cr = dot(p[i], c)
			if cr < 0 {
				c = [3]float64{-c[0], -c[1], -c[2]}
				cr = -cr
			}
		}
	}
	return c, cr
}

func add(a, b [3]float64) [3]float64 { return [3]float64{a[0] + b[0], a[1] + b[1], a[2] + b[2]} }
func sub(a, b [3]float64) [3]float64 { return [3]float64{a[0] - b[0], a[1] - b[1], a[2] - b[2]} }

// query is the hierarchical search for the pixels inside the intersection
// of discs (centre[i], radius[i]).
type query struct {
	order, omax int
	centres     [][3]float64
	// lim[o][i] holds, for discs i at order o, the cosines of radius+dr,
	// radius and radius-dr, with dr = MaxPixRad at order o. A pixel whose
	// centre is farther than radius+dr from a centre cannot touch that
	// disc; one nearer than radius-dr lies wholly inside it.
	lim       [][][3]float64
	inclusive bool
	out       []Range
}

func runQuery(nside int, centres [][3]float64, radii []float64, inclusive, nest bool) []Range {
	order := Order(nside)
	omax := order
	if inclusive {
		omax = min(order+inclusiveOversampling, MaxOrder)
	}
	q := &query{order: order, omax: omax, centres: centres, inclusive: inclusive}
	q.lim = make([][][3]float64, omax+1)
	for o := 0; o <= omax; o++ {
		dr := MaxPixRad(1 << o)
		q.lim[o] = make([][3]float64, len(radii))
		for i, r := range radii {
			l := &q.lim[o][i]
			l[0] = -1
			if r+dr <= math.Pi {
				l[0] = math.Cos(r + dr)
			}
			l[1] = math.Cos(r)
			l[2] = 2 // no centre is within radius-dr < 0 of a disc
			if r-dr >= 0 {
				l[2] = math.Cos(r - dr)
			}
		}
	}
	for f := int64(0); f < 12; f++ {
		q.visit(0, f)
	}
	if nest {
		return q.out
	}
	return nestToRingRanges(order, q.out)
}

// zone classifies a pixel centre: 0 outside every safety margin, 1 within
// radius+dr of all discs, 2 within the shape, 3 within radius-dr of all.
func (q *query) zone(o int, pix int64) int {
	v := nest2loc(o, pix).vec()
	zone := 3
	for i, c := range q.centres {
		d := dot(v, c)
		l := q.lim[o][i]
		for iz := 0; iz < zone; iz++ {
			if d < l[iz] {
				zone = iz
			}
		}
		if zone == 0 {
			break
		}
	}
	return zone
}

func (q *query) emit(a, b int64) {
	if n := len(q.out); n > 0 && q.out[n-1].End == a {
		q.out[n-1].End = b
		return
	}
	q.out = append(q.out, Range{a, b})
}

// visit examines NESTED pixel pix at order o and its descendants. Pixels
// are visited in increasing order so that the output is sorted. It reports
// whether a target-order pixel was emitted on behalf of an oversampled
// sub-pixel, in which case the remaining siblings need not be examined.
func (q *query) visit(o int, pix int64) bool {
	z := q.zone(o, pix)
	if z == 0 {
		return false
	}
	switch {
	case o < q.order:
		if z == 3 {
			s := 2 * uint(q.order-o)
			q.emit(pix<<s, (pix+1)<<s)
			return false
		}
		for i := int64(0); i < 4; i++ {
			q.visit(o+1, 4*pix+i)
		}
		return false
	case o == q.order:
		if z >= 2 {
			q.emit(pix, pix+1)
			return false
		}
		if q.inclusive {
			if o < q.omax {
				for i := int64(0); i < 4; i++ {
					if q.visit(o+1, 4*pix+i) {
						break
					}
				}
				return false
			}
			q.emit(pix, pix+1)
		}
		return false
	default: // o > q.order, only in inclusive mode
		if z >= 2 || o == q.omax {
			p := pix >> (2 * uint(o-q.order))
			q.emit(p, p+1)
			return true
		}
		for i := int64(0); i < 4; i++ {
			if q.visit(o+1, 4*pix+i) {
				return true
			}
		}
		return false
	}
}

// nestToRingRanges converts sorted NESTED ranges at order to sorted RING
// ranges. Each NESTED range is split into aligned sub-trees; a sub-tree of
// 4^k pixels is a square of 2^k × 2^k pixels of one base face, whose pixels
// on each of its 2^(k+1)-1 diagonals x+y = const share a ring and are
// consecutive in it (modulo the ring's start), so the conversion costs
// O(2^k) rather than O(4^k).
func nestToRingRanges(order int, in []Range) []Range {
	var runs []Range
	for _, r := range in {
		a := r.Start
		for a < r.End {
			// largest aligned sub-tree starting at a and within r
			k := 0
			for k < order && a&(int64(1)<<(2*uint(k+1))-1) == 0 && a+int64(1)<<(2*uint(k+1)) <= r.End {
				k++
			}
			runs = subtreeRuns(order, a, k, runs)
			a += int64(1) << (2 * uint(k))
		}
	}
	slices.SortFunc(runs, func(x, y Range) int {
		switch {
		case x.Start < y.Start:
			return -1
		case x.Start > y.Start:
			return 1
		}
		return 0
	})
	out := runs[:0]
	for _, r := range runs {
		if n := len(out); n > 0 && out[n-1].End >= r.Start {
			out[n-1].End = max(out[n-1].End, r.End)
			continue
		}
		out = append(out, r)
	}
	return out
}

// subtreeRuns appends the RING ranges of the 4^k NESTED pixels starting at a.
func subtreeRuns(order int, a int64, k int, runs []Range) []Range {
	x0, y0, f := nest2xyf(order, a)
	side := int64(1) << uint(k)
	nside := int64(1) << uint(order)
	for s := x0 + y0; s <= x0+y0+2*(side-1); s++ {
		xmin := max(x0, s-(y0+side-1))
		xmax := min(x0+side-1, s-y0)
		r1 := xyf2ring(order, xmin, s-xmin, f)
		r2 := xyf2ring(order, xmax, s-xmax, f)
		if r2-r1 == xmax-xmin {
			runs = append(runs, Range{r1, r2 + 1})
			continue
		}
		// the run wraps around the start of its ring
		first, n := ringSpan(nside, jrll[f]*nside-s-1)
		runs = append(runs, Range{r1, first + n}, Range{first, r2 + 1})
	}
	return runs
}

// ringSpan returns the first RING pixel and the pixel count of ring jr
// (1 … 4·nside-1, counted from the north pole).
func ringSpan(nside, jr int64) (first, n int64) {
	switch {
	case jr < nside:
		return 2 * jr * (jr - 1), 4 * jr
	case jr > 3*nside:
		nr := 4*nside - jr
		return 12*nside*nside - 2*nr*(nr+1), 4 * nr
	default:
		return 2*nside*(nside-1) + (jr-nside)*4*nside, 4 * nside
	}
}
