package region

import "math"

// vec is a point on the unit sphere, or a direction, in equatorial
// Cartesian coordinates: x toward (RA 0°, Dec 0°), y toward (RA 90°,
// Dec 0°), z toward the north celestial pole.
type vec [3]float64

const deg = math.Pi / 180

// unitVec returns the unit vector at ra, dec in degrees.
func unitVec(ra, dec float64) vec {
	sa, ca := math.Sincos(ra * deg)
	sd, cd := math.Sincos(dec * deg)
	return vec{cd * ca, cd * sa, sd}
}

func dot(a, b vec) float64 { return a[0]*b[0] + a[1]*b[1] + a[2]*b[2] }

func cross(a, b vec) vec {
	return vec{a[1]*b[2] - a[2]*b[1], a[2]*b[0] - a[0]*b[2], a[0]*b[1] - a[1]*b[0]}
}

func norm(a vec) float64 { return math.Sqrt(dot(a, a)) }

func scale(a vec, s float64) vec { return vec{a[0] * s, a[1] * s, a[2] * s} }

func add(a, b vec) vec { return vec{a[0] + b[0], a[1] + b[1], a[2] + b[2]} }

// normalize returns a/|a|; a must not be zero.
func normalize(a vec) vec { return scale(a, 1/norm(a)) }

// angle returns the angle between unit vectors a and b in radians, in
// [0, π], accurate for small and large angles alike.
func angle(a, b vec) float64 { return math.Atan2(norm(cross(a, b)), dot(a, b)) }

// chord2 returns |a − b|², the squared chord between a and b.
func chord2(a, b vec) float64 {
	d0, d1, d2 := a[0]-b[0], a[1]-b[1], a[2]-b[2]
	return d0*d0 + d1*d1 + d2*d2
}

// simpleCrossing reports whether the arcs ab and cd (each shorter than π)
// cross at a point interior to both. Touching or collinear arcs, and arcs
// sharing a vertex, do not count. This is the sign test of the S2 geometry
// library (Google, Apache 2.0), written from its description: the arcs
// cross when c and d are strictly on opposite sides of the great circle ab,
// a and b strictly on opposite sides of cd, and the orientations agree so
// that the crossing is not at the antipodal intersection.
func simpleCrossing(a, b, c, d vec) bool {
	ab := cross(a, b)
	acb := -dot(ab, c)
	bda := dot(ab, d)
	if acb*bda <= 0 {
		return false
	}
	cd := cross(c, d)
	cbd := -dot(cd, b)
	dac := dot(cd, a)
	return acb*cbd > 0 && acb*dac > 0
}

// arcDistance returns the angular distance in radians from p to the arc that
// starts at a and runs counter-clockwise about the unit normal n (the arc's
// great circle is the set x·n = 0) through an angle of span radians.
func arcDistance(p, a, n vec, span float64) float64 {
	h := dot(p, n)
	q := add(p, scale(n, -h))
	qn := norm(q)
	if qn < 1e-300 {
		return math.Pi / 2 // p is a pole of the circle
	}
	// Angle of q about n measured from a, in [0, 2π).
	t := math.Atan2(dot(n, cross(a, q)), dot(a, q))
	if t < 0 {
		t += 2 * math.Pi
	}
	if t <= span {
		return math.Atan2(math.Abs(h), qn)
	}
	// Nearest endpoint.
	b := rotate(a, n, span)
	return math.Min(angle(p, a), angle(p, b))
}

// rotate returns a (perpendicular to the unit vector n) rotated by t
// radians counter-clockwise about n.
func rotate(a, n vec, t float64) vec {
	s, c := math.Sincos(t)
	return add(scale(a, c), scale(cross(n, a), s))
}

// capArea returns the area in steradians of a spherical cap of angular
// radius r radians: 2π(1 − cos r) = 4π sin²(r/2).
func capArea(r float64) float64 {
	s := math.Sin(r / 2)
	return 4 * math.Pi * s * s
}

// normRA returns ra reduced to [0, 360).
func normRA(ra float64) float64 {
	ra = math.Mod(ra, 360)
	if ra < 0 {
		ra += 360
	}
	if ra >= 360 {
		ra = 0
	}
	return ra
}
