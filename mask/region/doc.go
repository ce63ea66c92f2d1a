// Package region reads and evaluates simple sky footprints written in
// filigree's own plain-text region format: spherical caps, RA/Dec boxes and
// great-circle polygons, each included in the footprint or cut out of it,
// with an optional completeness per included shape.
//
// # Format
//
// A region file is UTF-8 text, one statement per line. A '#' starts a
// comment that runs to the end of the line; blank lines are ignored. A
// statement is a verb, a shape and its fields, separated by blanks:
//
//	# a field of 1.5° radius, 90 % complete, with a bright-star hole
//	include cap centre=150,2.2 radius=1.5 completeness=0.9
//	exclude cap centre=150.4,2.0 radius=0.1
//
//	# a stripe across RA 0: ra=MIN,MAX with MIN > MAX wraps through 360
//	include box ra=350,10 dec=-5,5
//
//	# a polygon: bare RA,Dec pairs are its vertices, in order
//	include polygon 20,-10 40,-10 40,10 30,0 20,10 completeness=0.8
//
// The verb is include or exclude. Fields are name=value; a value with two
// numbers is written RA,Dec or MIN,MAX with a comma and no blank. All
// angles are in degrees. The fields are:
//
//   - cap: centre=RA,Dec (Dec in [−90, 90]; center= is accepted too) and
//     radius=R, 0 < R ≤ 180 (radius=180 is the whole sky).
//   - box: ra=MIN,MAX and dec=MIN,MAX with MIN < MAX for Dec. RA values are
//     in [0, 360]; MIN < MAX selects MIN ≤ RA ≤ MAX, MIN > MAX the wrapping
//     range RA ≥ MIN or RA ≤ MAX; ra=0,360 is a full band in RA.
//   - polygon: at least 3 and at most MaxPolygonVertices vertices RA,Dec,
//     joined in order by the shorter great-circle arc (so consecutive
//     vertices must be neither equal nor antipodal), the last joined back
//     to the first. The interior is on the left of every edge walking from
//     vertex to vertex, seen from outside the sphere: that is, vertices go
//     counter-clockwise on an ordinary plot of Dec against RA with RA
//     increasing to the right. Listing the same vertices clockwise selects
//     the complement (nearly the whole sky), which Area makes obvious.
//     Polygons may be non-convex but must not cross themselves: edges that
//     cross, or that come within 1e-9 rad of the middle of another edge,
//     are reported as errors.
//   - completeness=C, 0 < C ≤ 1, is allowed on include statements only; it
//     defaults to 1.
//
// Numbers are read by strconv.ParseFloat (decimal or hexadecimal
// floating-point literals) and must be finite. Every
// field is required once, except completeness; unknown or repeated fields
// are errors. Parse errors are *survey.InputError values that give the
// file, the line, and in the message the 1-based column (in bytes) of the
// offending token and what was expected there.
//
// # Semantics
//
// A point is in the footprint when at least one include shape contains it
// and no exclude shape does; a region without include statements is empty.
// Its completeness is the largest completeness of the include shapes that
// contain it (so the order of statements never matters), and 0 outside the
// footprint.
//
// Polygon membership counts the edges crossed by the arc from an interior
// reference point to the point (even: same side); when that arc grazes a
// vertex, where the count is ill-conditioned, it is redone from a second
// reference point. Every shape has a bounding cap (Region.BoundingCap)
// that skips the detailed test for far points.
//
// Shapes are closed: a point on a shape's edge belongs to the shape. To
// absorb rounding, membership tests accept points up to BoundaryTolerance
// (1e-9°, 3.6 µas) outside an edge. So a point exactly on the edge of an
// include shape is in the footprint, and a point exactly on the edge of an
// exclude shape (a hole) is not.
//
// # Areas
//
// Area and EffectiveArea (completeness-weighted area) are in square
// degrees. When no two shapes have overlapping bounding caps, they are
// sums of exact shape areas: 2π(1 − cos θ) sr for a cap of radius θ,
// (α₂ − α₁)(sin δ₂ − sin δ₁) sr for a box, and 2π − Σ turning angles for a
// polygon (Gauss–Bonnet; Girard's angle excess for triangles). Otherwise
// they are measured by adaptive subdivision of an exactly equal-area grid in
// (RA, sin Dec): a cell that no shape edge comes within the cell's
// circumradius of is wholly in or out and is counted exactly; cells still
// cut by an edge at the finest level are counted by their centre, and their
// total area is a strict bound on the error, reported by Measure.
package region
