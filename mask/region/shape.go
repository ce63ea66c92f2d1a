package region

import (
	"errors"
	"fmt"
	"math"
)

// Kind is the kind of a Shape.
type Kind uint8

// The shape kinds.
const (
	Cap     Kind = iota + 1 // spherical cap: RA, Dec, Radius
	Box                     // RA/Dec box: RAMin, RAMax, DecMin, DecMax
	Polygon                 // great-circle polygon: Vertices
)

// String returns the keyword of k in the region format.
func (k Kind) String() string {
	switch k {
	case Cap:
		return "cap"
	case Box:
		return "box"
	case Polygon:
		return "polygon"
	}
	return fmt.Sprintf("Kind(%d)", uint8(k))
}

// BoundaryTolerance is how far outside a shape's edge, in degrees, a point
// may lie and still be counted as on the edge, and so inside the shape:
// 1e-9° (3.6 µas), well above the rounding of the tests (about 1e-14°) and
// far below any astrometric precision.
const BoundaryTolerance = 1e-9

// MaxPolygonVertices is the largest number of vertices a polygon may have.
// It bounds the cost of the self-crossing check, which compares every pair
// of edges.
const MaxPolygonVertices = 1000

// tolRad is BoundaryTolerance in radians.
const tolRad = BoundaryTolerance * deg

// Shape is one statement of a region: a cap, a box or a polygon, included or
// excluded. Angles are in degrees. Only the fields of its Kind are used.
type Shape struct {
	Kind Kind
	// Exclude marks a hole: the shape is cut out of the footprint.
	Exclude bool
	// Completeness is the completeness of an included shape, in (0, 1];
	// zero means 1. It must be zero for excluded shapes.
	Completeness float64

	// RA, Dec are the centre of a cap and Radius its angular radius,
	// 0 < Radius ≤ 180.
	RA, Dec, Radius float64

	// RAMin, RAMax, DecMin, DecMax bound a box. RA values are in [0, 360];
	// RAMin > RAMax wraps through RA 0; RAMin = 0, RAMax = 360 is a full
	// band. DecMin < DecMax, both in [−90, 90].
	RAMin, RAMax, DecMin, DecMax float64

	// Vertices are a polygon's vertices as RA, Dec pairs (flat: RA of the
	// first vertex, its Dec, RA of the second, …), counter-clockwise seen
	// from outside the sphere (the interior is on the left of each edge).
	Vertices []float64

	// Line is the line of the statement in its file, or 0.
	Line int

	c compiled
}

// compiled holds what the tests of a shape need, derived from its fields.
type compiled struct {
	comp   float64 // completeness, 1 by default; 0 for excluded shapes
	centre vec     // bounding-cap centre
	bound  float64 // bounding-cap radius in radians (π: whole sky)
	cosB   float64 // cos bound
	sinB   float64 // sin bound
	cosR   float64 // cap: cos Radius
	sinR   float64 // cap: sin Radius
	area   float64 // exact area in steradians

	// cap
	capChord2 float64 // squared chord of Radius + tolerance; > 4: whole sky

	// box
	raMin, raWidth float64 // degrees; raWidth ≥ 360 for a full band
	decLo, decHi   float64 // degrees
	merA, merN     [2]vec  // meridian edges: start points and normals
	merSpan        float64 // radians

	// polygon
	v     []vec     // vertices
	n     []vec     // unit edge normals v[i] × v[i+1]
	span  []float64 // edge lengths in radians
	ref   [4]vec    // reference points R₀, −R₀, R₁, −R₁
	refIn [4]bool   // whether they are inside
}

// compile checks s and fills s.c. The error says what is wrong; the parser
// adds the position.
func (s *Shape) compile() error {
	for _, f := range []float64{s.Completeness, s.RA, s.Dec, s.Radius, s.RAMin, s.RAMax, s.DecMin, s.DecMax} {
		if math.IsNaN(f) || math.IsInf(f, 0) {
			return errors.New("values must be finite numbers")
		}
	}
	s.c = compiled{}
	switch {
	case s.Exclude && s.Completeness != 0:
		return errors.New("completeness is only allowed on include shapes")
	case s.Exclude:
		s.c.comp = 0
	case s.Completeness == 0:
		s.c.comp = 1
	case s.Completeness > 0 && s.Completeness <= 1:
		s.c.comp = s.Completeness
	default:
		return fmt.Errorf("completeness must be in (0, 1], got %v", s.Completeness)
	}
	var err error
	switch s.Kind {
	case Cap:
		err = s.compileCap()
	case Box:
		err = s.compileBox()
	case Polygon:
		err = s.compilePolygon()
	default:
		err = fmt.Errorf("unknown shape kind %d", s.Kind)
	}
	s.c.sinB, s.c.cosB = math.Sincos(s.c.bound)
	return err
}

func checkRADec(ra, dec float64) error {
	if !(ra >= 0 && ra <= 360) {
		return fmt.Errorf("RA must be in [0, 360], got %v", ra)
	}
	if !(dec >= -90 && dec <= 90) {
		return fmt.Errorf("Dec must be in [-90, 90], got %v", dec)
	}
	return nil
}

func (s *Shape) compileCap() error {
	if err := checkRADec(s.RA, s.Dec); err != nil {
		return err
	}
	if !(s.Radius > 0 && s.Radius <= 180) {
		return fmt.Errorf("radius must be in (0, 180], got %v", s.Radius)
	}
	r := s.Radius * deg
	s.c.sinR, s.c.cosR = math.Sincos(r)
	s.c.centre = unitVec(s.RA, s.Dec)
	s.c.area = capArea(r)
	if r+tolRad >= math.Pi {
		s.c.capChord2 = 5
		s.c.bound = math.Pi
	} else {
		h := 2 * math.Sin((r+tolRad)/2)
		s.c.capChord2 = h * h
		s.c.bound = r + tolRad
	}
	return nil
}

func (s *Shape) compileBox() error {
	if err := checkRADec(s.RAMin, s.DecMin); err != nil {
		return err
	}
	if err := checkRADec(s.RAMax, s.DecMax); err != nil {
		return err
	}
	if !(s.DecMin < s.DecMax) {
		return fmt.Errorf("box needs Dec min < max, got %v, %v", s.DecMin, s.DecMax)
	}
	if s.RAMin == s.RAMax {
		return fmt.Errorf("box has zero RA width (%v, %v)", s.RAMin, s.RAMax)
	}
	c := &s.c
	c.decLo, c.decHi = s.DecMin, s.DecMax
	width := s.RAMax - s.RAMin
	if width < 0 {
		width += 360
	}
	c.raMin, c.raWidth = s.RAMin, width
	if s.RAMin == 0 && s.RAMax == 360 {
		c.raMin, c.raWidth = 0, 360
	}
	c.area = c.raWidth * deg * (math.Sin(s.DecMax*deg) - math.Sin(s.DecMin*deg))
	// Meridian edges run north from DecMin to DecMax; about the normal
	// (sin α, −cos α, 0) that is counter-clockwise.
	c.merSpan = (s.DecMax - s.DecMin) * deg
	for k, a := range [2]float64{c.raMin, c.raMin + c.raWidth} {
		sa, ca := math.Sincos(a * deg)
		c.merA[k] = unitVec(a, s.DecMin)
		c.merN[k] = vec{sa, -ca, 0}
	}
	switch {
	case c.raWidth <= 180:
		mid := c.raMin + c.raWidth/2
		c.centre = unitVec(mid, (s.DecMin+s.DecMax)/2)
		for _, a := range [2]float64{c.raMin, c.raMin + c.raWidth} {
			for _, d := range [2]float64{s.DecMin, s.DecMax} {
				c.bound = math.Max(c.bound, angle(c.centre, unitVec(a, d)))
			}
		}
	case s.DecMin >= 0:
		c.centre = vec{0, 0, 1}
		c.bound = (90 - s.DecMin) * deg
	case s.DecMax <= 0:
		c.centre = vec{0, 0, -1}
		c.bound = (90 + s.DecMax) * deg
	default:
		c.centre = vec{0, 0, 1}
		c.bound = math.Pi
	}
	c.bound = math.Min(c.bound+2*tolRad, math.Pi)
	return nil
}

func (s *Shape) compilePolygon() error {
	if len(s.Vertices)%2 != 0 {
		return errors.New("polygon vertices must be RA, Dec pairs")
	}
	nv := len(s.Vertices) / 2
	if nv < 3 {
		return fmt.Errorf("polygon needs at least 3 vertices, got %d", nv)
	}
	if nv > MaxPolygonVertices {
		return fmt.Errorf("polygon has %d vertices, more than the limit %d", nv, MaxPolygonVertices)
	}
	c := &s.c
	c.v = make([]vec, nv)
	for i := range c.v {
		ra, dec := s.Vertices[2*i], s.Vertices[2*i+1]
		if math.IsNaN(ra) || math.IsNaN(dec) || math.IsInf(ra, 0) || math.IsInf(dec, 0) {
			return errors.New("values must be finite numbers")
		}
		if err := checkRADec(ra, dec); err != nil {
			return fmt.Errorf("vertex %d: %v", i+1, err)
		}
		c.v[i] = unitVec(ra, dec)
	}
	c.n = make([]vec, nv)
	c.span = make([]float64, nv)
	for i := range c.v {
		a, b := c.v[i], c.v[(i+1)%nv]
		x := cross(a, b)
		if norm(x) < 1e-12 {
			return fmt.Errorf("polygon vertices %d and %d are equal or antipodal, so the edge between them is undefined", i+1, (i+1)%nv+1)
		}
		c.n[i] = normalize(x)
		c.span[i] = angle(a, b)
	}
	// Edges must not cross (pairs sharing a vertex are not compared).
	for i := 0; i < nv; i++ {
		for j := i + 2; j < nv; j++ {
			if i == 0 && j == nv-1 {
				continue
			}
			if simpleCrossing(c.v[i], c.v[(i+1)%nv], c.v[j], c.v[(j+1)%nv]) {
				return fmt.Errorf("polygon edges %d–%d and %d–%d cross", i+1, (i+1)%nv+1, j+1, (j+1)%nv+1)
			}
		}
	}
	// Area of the region on the left, by Gauss–Bonnet: 2π − Σ turning
	// angles, a turn to the left (seen from outside) counting positive.
	turn := 0.0
	for i := range c.v {
		in := cross(c.n[(i+nv-1)%nv], c.v[i]) // direction of travel arriving at v[i]
		out := cross(c.n[i], c.v[i])          // leaving v[i]
		turn += math.Atan2(dot(c.v[i], cross(in, out)), dot(in, out))
	}
	c.area = 2*math.Pi - turn
	if !(c.area > 0 && c.area < 4*math.Pi) {
		return fmt.Errorf("polygon has no interior (area %v sr)", c.area)
	}
	// Two independent reference pairs, from edges 0 and 1, so that a
	// point whose test arc grazes a vertex can be retried with the other.
	for k := 0; k < 2; k++ {
		if err := s.referencePair(k); err != nil {
			return err
		}
	}

	// Bounding cap: around the vertices' mean direction when they fit
	// within a hemisphere and the interior is the side holding the centre.
	var sum vec
	for _, x := range c.v {
		sum = add(sum, x)
	}
	c.centre = vec{0, 0, 1}
	c.bound = math.Pi
	if norm(sum) > 1e-9 {
		ctr := normalize(sum)
		rad := 0.0
		for _, x := range c.v {
			rad = math.Max(rad, angle(ctr, x))
		}
		if rad < math.Pi/2-1e-9 && c.area < 4*math.Pi-capArea(rad) {
			c.centre = ctr
			c.bound = rad + 2*tolRad
		}
	}
	return nil
}

// referencePair sets c.ref[2k], c.ref[2k+1] to a point R just left of the
// middle of edge k, closer to it than to any other edge and so inside by
// the orientation rule, and its antipode −R, whose status follows from R's
// by the crossing parity along R → W → −R with W ⟂ R.
func (s *Shape) referencePair(k int) error {
	c := &s.c
	nv := len(c.v)
	m := normalize(add(c.v[k], c.v[(k+1)%nv]))
	dmin := math.Pi
	for i := 0; i < nv; i++ {
		if i != k {
			dmin = math.Min(dmin, arcDistance(m, c.v[i], c.n[i], c.span[i]))
		}
	}
	if dmin < 1e-9 {
		return errors.New("polygon edges come too close to each other (within 1e-9 rad)")
	}
	delta := math.Min(1e-3, dmin/2)
	r := add(scale(m, math.Cos(delta)), scale(c.n[k], math.Sin(delta)))
	mr := scale(r, -1)
	for _, e := range [3]vec{{1, 0, 0}, {0, 1, 0}, {0, 0, 1}} {
		x := cross(r, e)
		if norm(x) < 0.1 {
			continue
		}
		w := normalize(x)
		p1, d1 := s.parity(r, w)
		p2, d2 := s.parity(w, mr)
		if d1 || d2 {
			continue
		}
		c.ref[2*k], c.ref[2*k+1] = r, mr
		c.refIn[2*k], c.refIn[2*k+1] = true, p1 == p2 // R inside; flips at each odd leg
		return nil
	}
	return errors.New("polygon is numerically degenerate (no clean reference path)")
}

// grazeTol is the relative size below which a vertex counts as lying on the
// great circle of a test arc in parity.
const grazeTol = 1e-12

// parity reports whether the arc from a to b (shorter than π) crosses the
// polygon's edges an odd number of times, and whether some vertex lies so
// close to the great circle through a and b that the count may be wrong.
func (s *Shape) parity(a, b vec) (odd, degenerate bool) {
	v := s.c.v
	ab := cross(a, b)
	lim := grazeTol * norm(ab)
	for i := range v {
		if x := dot(ab, v[i]); math.Abs(x) <= lim {
			degenerate = true
		}
		if simpleCrossing(a, b, v[i], v[(i+1)%len(v)]) {
			odd = !odd
		}
	}
	return odd, degenerate
}

// contains reports whether the shape contains p (at ra in [0, 360), dec).
func (s *Shape) contains(p vec, ra, dec float64) bool {
	c := &s.c
	switch s.Kind {
	case Cap:
		return chord2(p, c.centre) <= c.capChord2
	case Box:
		if dec < c.decLo-BoundaryTolerance || dec > c.decHi+BoundaryTolerance {
			return false
		}
		if (dec >= 90-BoundaryTolerance && c.decHi >= 90-BoundaryTolerance) ||
			(dec <= -90+BoundaryTolerance && c.decLo <= -90+BoundaryTolerance) {
			return true // the pole is a corner of the box
		}
		if c.raWidth >= 360 {
			return true
		}
		d := ra - c.raMin
		if d < 0 {
			d += 360
		}
		return d <= c.raWidth+BoundaryTolerance || d >= 360-BoundaryTolerance
	case Polygon:
		if c.bound < math.Pi && angle(p, c.centre) > c.bound {
			return false
		}
		st := math.Sin(tolRad)
		for i := range c.v {
			if math.Abs(dot(p, c.n[i])) <= st && arcDistance(p, c.v[i], c.n[i], c.span[i]) <= tolRad {
				return true // on an edge
			}
		}
		var in bool
		for pair := 0; pair < 2; pair++ {
			k := 2 * pair
			if dot(p, c.ref[k]) < 0 {
				k++
			}
			odd, degenerate := s.parity(c.ref[k], p)
			in = c.refIn[k] != odd
			if !degenerate {
				break
			}
		}
		return in
	}
	return false
}

// edgeNear reports whether the shape's boundary may come within rad radians
// of p (at dec degrees); sinR, cosR are sin and cos of rad. It may answer
// true for an edge slightly farther (margins of 1e-12), never false for a
// nearer one.
func (s *Shape) edgeNear(p vec, dec, rad, sinR, cosR float64) bool {
	const margin = 1e-12
	if rad >= math.Pi/2 {
		return true
	}
	c := &s.c
	switch s.Kind {
	case Cap:
		if c.bound >= math.Pi {
			return false // the whole sky has no edge
		}
		// |angle(p, centre) − Radius| ≤ rad ⟺ p·centre in
		// [cos(Radius + rad), cos(Radius − rad)].
		x := dot(p, c.centre)
		lo := -1.0
		if s.Radius*deg+rad < math.Pi {
			lo = c.cosR*cosR - c.sinR*sinR
		}
		hi := 1.0
		if s.Radius*deg > rad {
			hi = c.cosR*cosR + c.sinR*sinR
		}
		return x >= lo-margin && x <= hi+margin
	case Box:
		if math.Min(math.Abs(dec-c.decLo), math.Abs(dec-c.decHi))*deg <= rad+margin {
			return true
		}
		if c.raWidth < 360 {
			for k := range c.merA {
				if math.Abs(dot(p, c.merN[k])) <= sinR+margin && arcDistance(p, c.merA[k], c.merN[k], c.merSpan) <= rad+margin {
					return true
				}
			}
		}
		return false
	case Polygon:
		for i := range c.v {
			if math.Abs(dot(p, c.n[i])) <= sinR+margin && arcDistance(p, c.v[i], c.n[i], c.span[i]) <= rad+margin {
				return true
			}
		}
		return false
	}
	return true
}
