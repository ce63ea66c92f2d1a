package edge

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/internal/parallel"

	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/mask/healpix"
)

// DefaultNside is the grid Nside NewVolume uses when given 0: pixels of
// 0.11°; for exact shapes (sub-pixels at Nside 1024) Boundary.AngularError
// is then 0.18° and Volume.ErrorBound 3.9 Mpc/h at 1000 Mpc/h.
const DefaultNside = 512

// Boundary is the angular boundary of a footprint on a Grid: the centres of
// the Mixed pixels, of the Full pixels with an Empty neighbour and of the
// Empty pixels with a Full neighbour.
//
// Error bound: when the grid's classification is right (always for an
// Exact grid), every boundary point of the footprint lies in the closure of
// a boundary pixel (inside a Mixed pixel, or on the border between a Full
// and an Empty one), and every boundary pixel's closure holds a boundary
// point; a centre is within ρ = healpix.MaxPixRad(Nside) of every point of
// its pixel. So the angle from any direction to the nearest boundary centre
// differs from its angle to the true boundary by at most ρ. For sampled
// (non-Exact) grids a sliver narrower than a sub-pixel can be missed,
// adding up to healpix.MaxPixRad(SubNside); AngularError returns the sum.
type Boundary struct {
	grid *Grid
	tree *kdTree
	n    int
}

// NewBoundary collects the boundary pixels of g.
func NewBoundary(g *Grid) *Boundary {
	var pts []float64
	for p := range g.State {
		if isBoundary(g, int64(p)) {
			v := healpix.Pix2VecNest(g.Nside, int64(p))
			pts = append(pts, v[0], v[1], v[2])
		}
	}
	return &Boundary{grid: g, tree: newKDTree(pts), n: len(pts) / 3}
}

// isBoundary reports whether grid pixel p is a boundary pixel.
func isBoundary(g *Grid, p int64) bool {
	s := g.State[p]
	if s == Mixed {
		return true
	}
	other := Empty
	if s == Empty {
		other = Full
	}
	for _, q := range healpix.Neighbours(g.Nside, p, true) {
		if q >= 0 && g.State[q] == other {
			return true
		}
	}
	return false
}

// Len returns the number of boundary pixels.
func (b *Boundary) Len() int { return b.n }

// AngularError returns the bound in radians on the error of Angle (see
// Boundary): MaxPixRad(Nside), plus MaxPixRad(SubNside) when the grid is
// not Exact.
func (b *Boundary) AngularError() float64 {
	e := healpix.MaxPixRad(b.grid.Nside)
	if !b.grid.Exact {
		e += healpix.MaxPixRad(b.grid.SubNside)
	}
	return e
}

// Angle returns the angle in radians between the unit vector v and the
// nearest boundary pixel centre, +Inf when the boundary is empty (a
// footprint covering the whole sky or nothing).
func (b *Boundary) Angle(v [3]float64) float64 {
	d2 := b.tree.nearest(v)
	if math.IsInf(d2, 1) {
		return d2
	}
	// Chord c = 2 sin(θ/2).
	return 2 * math.Asin(min(1, math.Sqrt(d2)/2))
}

// AngleWithin returns the angle in radians from the unit vector v to a
// boundary pixel centre whose chord distance from v is at most tol (≥ 0)
// above the nearest centre's, or +Inf when no centre is nearer than limit
// (radians). Searching
// with a tolerance and a limit is much faster than Angle when many centres
// are almost equally near (a direction near the middle of a round
// footprint). For angles up to 90° the result is at most √2 tol above
// Angle's.
func (b *Boundary) AngleWithin(v [3]float64, tol, limit float64) float64 {
	chordLimit := math.Inf(1)
	if limit < math.Pi {
		chordLimit = 2 * math.Sin(max(limit, 0)/2)
	}
	d2 := b.tree.nearestApprox(v, tol, chordLimit)
	if math.IsInf(d2, 1) {
		return d2
	}
	return 2 * math.Asin(min(1, math.Sqrt(d2)/2))
}

// UnitVector returns the unit vector toward right ascension ra and
// declination dec in degrees, in equatorial Cartesian axes (x toward RA 0,
// Dec 0; y toward RA 90°, Dec 0; z toward the north pole).
func UnitVector(ra, dec float64) [3]float64 {
	sr, cr := math.Sincos(ra * (math.Pi / 180))
	sd, cd := math.Sincos(dec * (math.Pi / 180))
	return [3]float64{cd * cr, cd * sr, sd}
}

// ConeDistance returns the Euclidean distance from a point at distance r
// from the observer, at angle theta (radians) from the nearest direction
// outside a cone of directions, to that cone's outside: r sin θ for
// θ < π/2, else r (the apex is nearest).
func ConeDistance(r, theta float64) float64 {
	if theta >= math.Pi/2 {
		return r
	}
	return r * math.Sin(theta)
}

// Volume is the surveyed volume: the directions where a footprint's
// completeness is above 0, between comoving distances RMin and RMax in
// Mpc/h.
type Volume struct {
	// Footprint is the survey's sky coverage.
	Footprint footprint.Footprint
	// RMin and RMax are the near and far radial limits in Mpc/h.
	RMin, RMax float64
	// Grid is the classification behind Boundary.
	Grid *Grid
	// Boundary is the footprint's angular boundary.
	Boundary *Boundary
}

// NewVolume returns the volume of fp between rMin and rMax (Mpc/h,
// 0 ≤ rMin < rMax), with its boundary on a grid at nside (0 selects
// DefaultNside). It returns an error for bad limits or an invalid nside.
func NewVolume(fp footprint.Footprint, rMin, rMax float64, nside int) (*Volume, error) {
	if !(rMin >= 0 && rMax > rMin) || math.IsInf(rMax, 0) {
		return nil, fmt.Errorf("edge: radial limits [%v, %v] Mpc/h, expected 0 ≤ rMin < rMax < ∞", rMin, rMax)
	}
	if nside == 0 {
		nside = DefaultNside
	}
	g, err := NewGrid(fp, nside)
	if err != nil {
		return nil, err
	}
	return &Volume{Footprint: fp, RMin: rMin, RMax: rMax, Grid: g, Boundary: NewBoundary(g)}, nil
}

// searchTol returns the chord tolerance of the approximate nearest-point
// search of Distances: a quarter of MaxPixRad(Nside).
func (v *Volume) searchTol() float64 { return healpix.MaxPixRad(v.Grid.Nside) / 4 }

// ErrorBound returns the bound in Mpc/h on the error of Distances for a
// galaxy at distance r: r (Boundary.AngularError + √2 t), with |r sin θ −
// r sin θ'| ≤ r |θ − θ'|, and t = MaxPixRad(Nside)/4 the chord tolerance of
// the approximate nearest-point search Distances uses (a chord error t is an
// angle error of at most t / cos(θ/2) ≤ √2 t for θ ≤ 90°, and beyond 90° the
// distance to the cone is r whatever θ). The radial terms are exact.
func (v *Volume) ErrorBound(r float64) float64 {
	return r * (v.Boundary.AngularError() + math.Sqrt2*v.searchTol())
}

// Distances sets dst[i] to the comoving distance in Mpc/h from the galaxy
// at right ascension ra[i], declination dec[i] (degrees) and line-of-sight
// comoving distance r[i] (Mpc/h) to the nearest boundary of the volume:
// min(r sin θ, r − RMin, RMax − r), θ the angle to the nearest boundary
// point (r when θ ≥ 90°; the angular term is dropped when the footprint has
// no boundary). That is the exact distance to the volume's outside, the
// union of the outside of the footprint's cone and the two radial regions,
// up to the error of θ (see ErrorBound). Galaxies outside the volume
// (completeness 0, r outside [RMin, RMax], or NaN inputs) get 0. The work
// is spread over runtime.GOMAXPROCS(0) goroutines, each value computed on
// its own, so the result does not depend on their number. It panics if the
// slices differ in length.
func (v *Volume) Distances(dst, ra, dec, r []float64) {
	if len(ra) != len(dst) || len(dec) != len(dst) || len(r) != len(dst) {
		panic("edge: Distances slice lengths differ")
	}
	tol := v.searchTol()
	parallel.For(len(dst), 1<<12, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			ri := r[i]
			if !(ri >= v.RMin && ri <= v.RMax) || !(v.Footprint.Completeness(ra[i], dec[i]) > 0) {
				dst[i] = 0
				continue
			}
			d := min(ri-v.RMin, v.RMax-ri)
			// Only boundary points nearer than the angle θ_lim with
			// r sin θ_lim = d can lower d: search within it.
			limit := math.Inf(1)
			if d < ri {
				limit = math.Asin(d / ri)
			}
			if th := v.Boundary.AngleWithin(UnitVector(ra[i], dec[i]), tol, limit); !math.IsInf(th, 1) {
				d = min(d, ConeDistance(ri, th))
			}
			dst[i] = d
		}
	})
}
