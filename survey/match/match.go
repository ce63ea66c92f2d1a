// Package match cross-matches catalogues: by sky position within an angular
// radius (optionally within a redshift or velocity tolerance), by 3-d
// position within a comoving radius, or by equal key values. Each left row
// gets its nearest counterpart or all of them, with the number of
// counterparts found; results come in left-row order and do not depend on
// the number of threads.
//
// Sky separations are exact great-circle angles by Vincenty's formula on
// the sphere; candidates come from a k-d tree over unit vectors searched
// with the chord 2 sin(θ/2), so a match of n against m rows takes
// O((n + m) log m) time plus the number of pairs.
package match

import (
	"fmt"
	"math"
	"slices"

	"github.com/filigree-survey/filigree/internal/parallel"
)

var inf = math.Inf(1)

// SpeedOfLight is c in km/s (exact by the SI definition of the metre), used
// by the velocity tolerance Redshifts.DV.
const SpeedOfLight = 299792.458

// chunk is the number of left rows per parallel.For chunk: fixed, so the
// work split and hence every result is independent of the thread count.
const chunk = 2048

// Result holds the pairs found by a match, in left-row order, and the
// number of counterparts of every left row.
//
// With Options.All false there is at most one pair per left row: its
// nearest counterpart (ties to the lower right row). With All, each left
// row's pairs are in order of increasing separation, ties by right row.
type Result struct {
	Left  []int32   // left row of each pair (0-based), non-decreasing
	Right []int32   // right row of each pair (0-based)
	Sep   []float64 // separation of each pair: degrees (Sky), the coordinates' unit (Cartesian); nil for Key
	// Count is, for every left row, the number of right rows within the
	// radius and tolerance (equal keys for Key), whether or not All is set.
	Count []int32
}

// Matched returns the number of left rows with at least one counterpart.
func (r *Result) Matched() int {
	n := 0
	for _, c := range r.Count {
		if c > 0 {
			n++
		}
	}
	return n
}

// Options choose between the nearest counterpart and all of them, and an
// optional redshift tolerance.
type Options struct {
	// All returns every counterpart within the radius instead of the nearest.
	All bool
	// Z, when non-nil, also requires the redshifts of a pair to agree (Sky only).
	Z *Redshifts
}

// Redshifts is the redshift tolerance of a sky match. A pair (l, r) is kept
// only when |Left[l] − Right[r]| ≤ DZ (if DZ > 0) and
// c |Left[l] − Right[r]| / (1 + Left[l]) ≤ DV (if DV > 0, in km/s): the
// line-of-sight velocity difference in the rest frame of the left object,
// to first order in Δz. A pair with a NaN redshift never passes.
type Redshifts struct {
	Left, Right []float64 // redshifts, len of the left and right catalogues
	DZ          float64   // redshift tolerance; ≤ 0 means none
	DV          float64   // velocity tolerance in km/s; ≤ 0 means none
}

func (z *Redshifts) ok(l, r int) bool {
	if z == nil {
		return true
	}
	d := math.Abs(z.Left[l] - z.Right[r])
	if math.IsNaN(d) {
		return false
	}
	if z.DZ > 0 && !(d <= z.DZ) {
		return false
	}
	if z.DV > 0 && !(SpeedOfLight*d/(1+z.Left[l]) <= z.DV) {
		return false
	}
	return true
}

// InputError reports a bad coordinate: which catalogue ("left" or
// "right"), the 0-based row, which coordinate ("ra", "dec", or "x", "y",
// "z") and what is wrong with it.
type InputError struct {
	Side  string
	Row   int
	Coord string
	Msg   string
}

// Error returns "match: SIDE row ROW: COORD: MSG".
func (e *InputError) Error() string {
	return fmt.Sprintf("match: %s row %d: %s: %s", e.Side, e.Row, e.Coord, e.Msg)
}

// deg is one degree in radians (π/180 rounded once to float64).
const deg = math.Pi / 180

// Separation returns the great-circle angle in degrees, in [0, 180],
// between (ra1, dec1) and (ra2, dec2) in degrees, by Vincenty's formula for
// the sphere (Vincenty 1975, his inverse formula with zero flattening):
//
//	θ = atan2(√((cos δ2 sin Δα)² + (cos δ1 sin δ2 − sin δ1 cos δ2 cos Δα)²),
//	          sin δ1 sin δ2 + cos δ1 cos δ2 cos Δα).
//
// Unlike the haversine or cosine forms it keeps full relative precision
// from 0 to 180° and at the poles. Δα = ra2 − ra1 is taken in degrees and
// reduced to [−180, 180] by an exact IEEE remainder before conversion to
// radians, so pairs across RA 0/360 lose nothing to the size of 2π.
// Identical inputs give exactly 0. NaN in gives NaN.
func Separation(ra1, dec1, ra2, dec2 float64) float64 {
	s1, c1 := math.Sincos(dec1 * deg)
	s2, c2 := math.Sincos(dec2 * deg)
	return vincenty(ra2-ra1, s1, c1, s2, c2) / deg
}

// vincenty is Separation with the RA difference dra in degrees and the
// declinations' sines and cosines given, returning radians.
func vincenty(dra, s1, c1, s2, c2 float64) float64 {
	if dra > 180 || dra < -180 {
		dra = math.Remainder(dra, 360)
	}
	sdl, cdl := math.Sincos(dra * deg)
	num1 := c2 * sdl
	num2 := c1*s2 - s1*c2*cdl
	den := s1*s2 + c1*c2*cdl
	return math.Atan2(math.Hypot(num1, num2), den)
}

// chordSlack is added to the chord 2 sin(θ/2) before the k-d tree search,
// so that the candidates surely include every pair whose computed Vincenty
// separation is within θ: unit vectors from math.Sincos are within a few
// units of 2^−53 of the exact ones, so computed and exact chords differ by
// under 1e-15, and the Vincenty angle is good to about 1e-16 rad; 1e-12 is
// ample and costs nothing measurable. Acceptance is by the separation alone.
const chordSlack = 1e-12

// Sky matches every left position (leftRA, leftDec) with the right positions
// within radiusDeg of it on the sky. All angles are degrees; Dec must be in
// [−90, 90] and RA finite (any value: it enters only through sin and cos).
// A pair is within the radius when its Vincenty separation (see Separation)
// is ≤ radiusDeg, so a radius of 0 matches only positions whose separation
// is exactly 0 (the same RA and Dec, up to whole turns of RA). A radius of
// 180 or more matches everything.
//
// It returns an *InputError for a bad coordinate, and an error for a radius
// that is negative or not finite or a catalogue of 2^31 rows or more. It
// panics if the slices of one side (or of opt.Z) differ in length.
func Sky(leftRA, leftDec, rightRA, rightDec []float64, radiusDeg float64, opt Options) (*Result, error) {
	if len(leftRA) != len(leftDec) || len(rightRA) != len(rightDec) {
		panic("match: Sky: RA and Dec lengths differ")
	}
	if opt.Z != nil && (len(opt.Z.Left) != len(leftRA) || len(opt.Z.Right) != len(rightRA)) {
		panic("match: Sky: redshift and position lengths differ")
	}
	if !(radiusDeg >= 0) || math.IsInf(radiusDeg, 0) {
		return nil, fmt.Errorf("match: radius %v degrees: must be finite and ≥ 0", radiusDeg)
	}
	if err := checkLen(len(leftRA), len(rightRA)); err != nil {
		return nil, err
	}
	for _, side := range []struct {
		name    string
		ra, dec []float64
	}{{"left", leftRA, leftDec}, {"right", rightRA, rightDec}} {
		for i := range side.ra {
			if math.IsNaN(side.ra[i]) || math.IsInf(side.ra[i], 0) {
				return nil, &InputError{side.name, i, "ra", fmt.Sprintf("%v is not finite", side.ra[i])}
			}
			if !(side.dec[i] >= -90 && side.dec[i] <= 90) {
				return nil, &InputError{side.name, i, "dec", fmt.Sprintf("%v is outside [−90, 90]", side.dec[i])}
			}
		}
	}

	m := len(rightRA)
	pts := make([]float64, 3*m)
	sin := make([]float64, m)
	cos := make([]float64, m)
	parallel.For(m, 1<<14, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			sa, ca := math.Sincos(rightRA[i] * deg)
			sin[i], cos[i] = math.Sincos(rightDec[i] * deg)
			pts[3*i], pts[3*i+1], pts[3*i+2] = cos[i]*ca, cos[i]*sa, sin[i]
		}
	})
	t := newTree(pts)

	nl := len(leftRA)
	lpts := make([]float64, 3*nl)
	lcos := make([]float64, nl)
	parallel.For(nl, 1<<14, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			sa, ca := math.Sincos(leftRA[i] * deg)
			sd, cd := math.Sincos(leftDec[i] * deg)
			lpts[3*i], lpts[3*i+1], lpts[3*i+2], lcos[i] = cd*ca, cd*sa, sd, cd
		}
	})
	order := mortonOrder(nl, func(i int) (x, y, z float64) { return lpts[3*i], lpts[3*i+1], lpts[3*i+2] })
	// Gather the unit vectors into matching order, so the tree walks read
	// them sequentially: a tight gather overlaps its cache misses, the
	// walks could not. RA and cos Dec are read by row only for candidates.
	q := make([]float64, 3*nl)
	parallel.For(nl, 1<<14, func(lo, hi int) {
		for k := lo; k < hi; k++ {
			i := order[k]
			q[3*k], q[3*k+1], q[3*k+2] = lpts[3*i], lpts[3*i+1], lpts[3*i+2]
		}
	})
	lpts = nil

	rc := chordSlack
	if radiusDeg >= 180 {
		rc += 2
	} else {
		rc += 2 * math.Sin(radiusDeg*deg/2)
	}
	rc2 := rc * rc
	return run(nl, order, opt.All, func(k, i int, buf []int32, emit func(j int32, sep float64)) []int32 {
		qk := q[3*k : 3*k+3]
		buf = t.within([3]float64{qk[0], qk[1], qk[2]}, rc2, buf[:0])
		for _, p := range buf {
			j := t.idx[p]
			if !opt.Z.ok(i, int(j)) {
				continue
			}
			s := vincenty(rightRA[j]-leftRA[i], qk[2], lcos[i], sin[j], cos[j]) / deg
			if s <= radiusDeg {
				emit(j, s)
			}
		}
		return buf
	}), nil
}

// XYZ returns the equatorial Cartesian positions of points at right
// ascension ra and declination dec in degrees and distance r (any unit,
// which the positions share): x toward RA 0, Dec 0; y toward RA 90°, Dec 0;
// z toward the north celestial pole. The result holds 3 values per point,
// for Cartesian. It panics if the lengths differ.
func XYZ(ra, dec, r []float64) []float64 {
	if len(ra) != len(dec) || len(ra) != len(r) {
		panic("match: XYZ: lengths differ")
	}
	out := make([]float64, 3*len(ra))
	parallel.For(len(ra), 1<<14, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			sa, ca := math.Sincos(ra[i] * deg)
			sd, cd := math.Sincos(dec[i] * deg)
			out[3*i], out[3*i+1], out[3*i+2] = r[i]*cd*ca, r[i]*cd*sa, r[i]*sd
		}
	})
	return out
}

// Cartesian matches 3-d positions: left and right hold x, y, z per point
// (see XYZ), and a pair matches when its Euclidean distance
// √(Δx² + Δy² + Δz²), computed in float64 in that order, is ≤ radius (same
// unit as the positions). Separations are in that unit; a radius of 0
// matches identical positions only. opt.Z must be nil.
//
// It returns an *InputError for a non-finite coordinate and an error for a
// negative or non-finite radius or a catalogue of 2^31 rows or more. It
// panics if a slice's length is not a multiple of 3 or opt.Z is set.
func Cartesian(left, right []float64, radius float64, opt Options) (*Result, error) {
	if len(left)%3 != 0 || len(right)%3 != 0 {
		panic("match: Cartesian: coordinate slice length not a multiple of 3")
	}
	if opt.Z != nil {
		panic("match: Cartesian: a redshift tolerance applies to sky matches only")
	}
	if !(radius >= 0) || math.IsInf(radius, 0) {
		return nil, fmt.Errorf("match: radius %v: must be finite and ≥ 0", radius)
	}
	if err := checkLen(len(left)/3, len(right)/3); err != nil {
		return nil, err
	}
	for _, side := range []struct {
		name string
		x    []float64
	}{{"left", left}, {"right", right}} {
		for i, v := range side.x {
			if math.IsNaN(v) || math.IsInf(v, 0) {
				return nil, &InputError{side.name, i / 3, []string{"x", "y", "z"}[i%3], fmt.Sprintf("%v is not finite", v)}
			}
		}
	}
	t := newTree(append([]float64(nil), right...))
	order := mortonOrder(len(left)/3, scaled(left))
	// The relative slack covers the rounding of radius² against the
	// rounding of the square root; acceptance is by the distance itself.
	r2 := radius * radius * (1 + 1e-12)
	return run(len(left)/3, order, opt.All, func(_, i int, buf []int32, emit func(j int32, sep float64)) []int32 {
		q := [3]float64{left[3*i], left[3*i+1], left[3*i+2]}
		buf = t.within(q, r2, buf[:0])
		for _, p := range buf {
			j := t.idx[p]
			dx, dy, dz := right[3*j]-q[0], right[3*j+1]-q[1], right[3*j+2]-q[2]
			if s := math.Sqrt(dx*dx + dy*dy + dz*dz); s <= radius {
				emit(j, s)
			}
		}
		return buf
	}), nil
}

// scaled returns pos(i) mapping the bounding box of the points in xyz
// (3 per point) onto [−1, 1]³, for mortonOrder.
func scaled(xyz []float64) func(i int) (x, y, z float64) {
	var lo, hi [3]float64
	for a := range 3 {
		lo[a], hi[a] = inf, -inf
	}
	for i, v := range xyz {
		lo[i%3], hi[i%3] = min(lo[i%3], v), max(hi[i%3], v)
	}
	var s [3]float64
	for a := range 3 {
		if hi[a] > lo[a] {
			s[a] = 2 / (hi[a] - lo[a])
		}
	}
	return func(i int) (x, y, z float64) {
		return (xyz[3*i]-lo[0])*s[0] - 1, (xyz[3*i+1]-lo[1])*s[1] - 1, (xyz[3*i+2]-lo[2])*s[2] - 1
	}
}

func checkLen(nl, nr int) error {
	if nl > math.MaxInt32 || nr > math.MaxInt32 {
		return fmt.Errorf("match: catalogues of %d and %d rows: at most %d rows each", nl, nr, math.MaxInt32)
	}
	return nil
}

// candidate is one counterpart of a left row.
type candidate struct {
	j   int32
	sep float64
}

func less(a, b candidate) bool { return a.sep < b.sep || (a.sep == b.sep && a.j < b.j) }

// run drives a match over n left rows, taken in the given order (a
// permutation of the rows) in fixed chunks of it. find calls emit for every
// counterpart of left row i = order[k] (in any order) and may reuse buf. The nearest
// is kept by (separation, right row), or all are kept and sorted that way;
// everything is stored by left row, so neither the order nor the thread
// count changes the result.
func run(n int, order []int32, all bool, find func(k, i int, buf []int32, emit func(j int32, sep float64)) []int32) *Result {
	count := make([]int32, n)
	var best []int32
	var bestSep []float64
	if !all {
		best = make([]int32, n)
		bestSep = make([]float64, n)
	}
	type part struct {
		left, right []int32
		sep         []float64
	}
	parts := make([]part, (n+chunk-1)/chunk)
	parallel.For(n, chunk, func(lo, hi int) {
		var pt part
		buf := make([]int32, 0, 64)
		var cands []candidate
		var b candidate
		var cnt int32
		emit := func(j int32, sep float64) {
			c := candidate{j, sep}
			if all {
				cands = append(cands, c)
			} else if cnt == 0 || less(c, b) {
				b = c
			}
			cnt++
		}
		for k := lo; k < hi; k++ {
			i := int(order[k])
			cands, cnt = cands[:0], 0
			buf = find(k, i, buf, emit)
			count[i] = cnt
			if cnt == 0 {
				continue
			}
			if !all {
				best[i], bestSep[i] = b.j, b.sep
				continue
			}
			slices.SortFunc(cands, func(a, b candidate) int {
				switch {
				case less(a, b):
					return -1
				case less(b, a):
					return 1
				}
				return 0
			})
			for _, c := range cands {
				pt.left = append(pt.left, int32(i))
				pt.right = append(pt.right, c.j)
				pt.sep = append(pt.sep, c.sep)
			}
		}
		parts[lo/chunk] = pt
	})
	r := &Result{Count: count}
	if !all {
		m := r.Matched()
		r.Left, r.Right, r.Sep = make([]int32, 0, m), make([]int32, 0, m), make([]float64, 0, m)
		for i, c := range count {
			if c > 0 {
				r.Left = append(r.Left, int32(i))
				r.Right = append(r.Right, best[i])
				r.Sep = append(r.Sep, bestSep[i])
			}
		}
		return r
	}
	// Every left row's pairs are contiguous in one part: place them at the
	// row's offset in left-row order.
	off := make([]int, n+1)
	for i, c := range count {
		off[i+1] = off[i] + int(c)
	}
	total := off[n]
	r.Left, r.Right, r.Sep = make([]int32, total), make([]int32, total), make([]float64, total)
	parallel.For(len(parts), 1, func(lo, hi int) {
		for _, p := range parts[lo:hi] {
			at := 0
			for q := range p.left {
				if q == 0 || p.left[q] != p.left[q-1] {
					at = off[p.left[q]]
				}
				r.Left[at], r.Right[at], r.Sep[at] = p.left[q], p.right[q], p.sep[q]
				at++
			}
		}
	})
	return r
}
