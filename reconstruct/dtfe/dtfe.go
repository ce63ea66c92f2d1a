// Package dtfe estimates a continuous density field from a set of points
// with the Delaunay Tessellation Field Estimator (Schaap & van de Weygaert
// 2000, A&A 363, L29; van de Weygaert & Schaap 2009, LNP 665, 291): each
// point's density is its mass over the volume of its contiguous Voronoi
// cell, scaled by D+1 = 4, and the field between the points is the linear
// interpolation of those densities inside every Delaunay tetrahedron. The
// package evaluates the field at the points, at arbitrary positions and on
// the cells of a reconstruct/grid geometry, in open space or in a periodic
// box.
//
// Positions are in Mpc/h and masses in the caller's mass unit (1 per point
// when no weights are given), so densities are in mass units × (h/Mpc)^3.
//
// Point queries (At) locate the tetrahedron by a walk from a nearby start.
// Grid sampling (SampleNodes, AverageCells) instead rasterises the
// tetrahedra — each one writes its linear function into the grid samples
// inside it — which costs O(tetrahedra + samples), needs no point
// location (tess.Locate is not available in periodic mode) and treats the
// open and the periodic case alike. AverageCells sub-samples each cell;
// it does not clip tetrahedra against cells.
package dtfe

import (
	"errors"
	"fmt"
	"math"

	par "github.com/filigree-survey/filigree/internal/parallel"
	"github.com/filigree-survey/filigree/reconstruct/tess"
)

// Field is a DTFE density field on a Delaunay tessellation: a density at
// every input point and the piecewise-linear interpolation of those
// densities over the tetrahedra. A Field is safe for concurrent use by
// several goroutines once New has returned.
type Field struct {
	t        *tess.Tessellation
	xyz      []float64 // coordinates, 3 per input point (shared with t)
	n        int       // number of input points
	rep      []int32   // input point → representative (tess.Rep)
	tets     []int32   // 4 vertices per tetrahedron (tess.Tets)
	nbr      []int32   // 4 neighbours per tetrahedron (tess.Neighbours)
	periodic bool
	l        float64 // periodic box side

	rho  []float64 // per input row: 4 m_i / W_rep(i)
	vrho []float64 // per input index: field value at the point, 4 M_r / W_r of its representative r
	hull []bool    // per input row: representative on the convex hull
	mass float64   // total mass

	hint hintGrid
}

// WeightError reports a weight New cannot use: one that is negative or not
// finite.
type WeightError struct {
	// Row is the index (0-based) of the point whose weight is bad.
	Row int
	// Value is the offending weight.
	Value float64
}

// Error implements the error interface.
func (e *WeightError) Error() string {
	return fmt.Sprintf("dtfe: weight of point %d = %v: expected a finite number ≥ 0", e.Row, e.Value)
}

// ErrMismatch is returned by New when the coordinates given to it are not
// those the tessellation was built from.
var ErrMismatch = errors.New("dtfe: coordinates do not match the tessellation")

// New computes the DTFE density at every input point of the tessellation t,
// whose points are xyz = (x0, y0, z0, x1, …) in Mpc/h — the same slice that
// was given to tess.New, which does not expose it — with masses weights
// (nil: mass 1 each):
//
//	rho_i = (D+1) m_i / W_i,  D = 3,
//
// where W_i is the volume of the contiguous Voronoi cell of point i, the
// summed volume of the Delaunay tetrahedra that have i as a vertex
// (Schaap & van de Weygaert 2000; tess.VoronoiVolumes).
//
// Exact duplicates, which tess merges into one vertex (tess.Rep), are
// handled by letting the merged vertex carry the summed mass M_r of its
// rows: the field value there, used by At, the grid samplers and Integral,
// is 4 M_r / W_r, so the field still integrates to the total mass; each row
// i of the group reports its own share 4 m_i / W_r in Density, and the
// shares of a group add up to the field value.
//
// Points on the convex hull have truncated cells, so their densities are
// biased high; OnHull flags them. A periodic tessellation has no hull.
//
// New panics if len(xyz) ≠ 3·t.NumPoints() or weights is neither nil nor
// of length t.NumPoints(). It returns a *WeightError for a negative or
// non-finite weight, and ErrMismatch when xyz does not give the
// tessellation's tetrahedron volumes (checked on up to 64 tetrahedra).
func New(t *tess.Tessellation, xyz []float64, weights []float64) (*Field, error) {
	n := t.NumPoints()
	if len(xyz) != 3*n {
		panic(fmt.Sprintf("dtfe: %d coordinates for %d points", len(xyz), n))
	}
	if weights != nil && len(weights) != n {
		panic(fmt.Sprintf("dtfe: %d weights for %d points", len(weights), n))
	}
	for i, w := range weights {
		if !(w >= 0) || math.IsInf(w, 0) {
			return nil, &WeightError{Row: i, Value: w}
		}
	}
	f := newField(t, xyz)
	if err := f.checkVolumes(); err != nil {
		return nil, err
	}
	wv := t.VoronoiVolumes(nil)
	// Mass of each vertex: the summed mass of the rows it represents.
	vm := make([]float64, n)
	for i, r := range f.rep {
		m := 1.0
		if weights != nil {
			m = weights[i]
		}
		vm[r] += m
		f.mass += m
	}
	f.rho = make([]float64, n)
	f.vrho = make([]float64, n)
	for i, r := range f.rep {
		w := wv[r]
		if !(w > 0) || math.IsInf(w, 0) {
			return nil, fmt.Errorf("dtfe: point %d has a contiguous Voronoi cell of volume %v: the tessellation is not valid", i, w)
		}
		m := 1.0
		if weights != nil {
			m = weights[i]
		}
		f.rho[i] = 4 * m / w
		f.vrho[i] = 4 * vm[r] / w
	}
	f.hull = make([]bool, n)
	if !f.periodic {
		onHull := make([]bool, n)
		for _, v := range t.HullFaces() {
			onHull[v] = true
		}
		for i, r := range f.rep {
			f.hull[i] = onHull[r]
		}
	}
	f.hint = newHintGrid(f)
	return f, nil
}

// newField fills the geometric part of a Field.
func newField(t *tess.Tessellation, xyz []float64) *Field {
	f := &Field{t: t, xyz: xyz, n: t.NumPoints(), rep: t.Rep(), tets: t.Tets(), nbr: t.Neighbours()}
	f.periodic, f.l = t.Periodic()
	return f
}

// fromVertexValues returns a Field whose field values at the points are
// vals (one per input point; duplicates take their representative's
// value), for testing the interpolation on prescribed vertex values.
func fromVertexValues(t *tess.Tessellation, xyz, vals []float64) *Field {
	f := newField(t, xyz)
	f.vrho = make([]float64, f.n)
	f.rho = make([]float64, f.n)
	for i, r := range f.rep {
		f.vrho[i] = vals[r]
		f.rho[i] = vals[r]
	}
	f.hull = make([]bool, f.n)
	f.hint = newHintGrid(f)
	return f
}

// checkVolumes compares the volumes of up to 64 tetrahedra computed from
// f.xyz with the tessellation's own.
func (f *Field) checkVolumes() error {
	nt := len(f.tets) / 4
	step := max(1, nt/64)
	for k := 0; k < nt; k += step {
		q := f.corners(int32(k), [3]float64{})
		v := orient(q[0], q[1], q[2], q[3]) / 6
		w := f.t.TetVolume(k)
		if !(math.Abs(v-w) <= 1e-9*math.Abs(w)) {
			return fmt.Errorf("%w: tetrahedron %d has volume %v from the coordinates given, %v in the tessellation", ErrMismatch, k, v, w)
		}
	}
	return nil
}

// Density returns the DTFE density 4 m_i / W_i of every input row, in mass
// units × (h/Mpc)^3 (see New for duplicates). The slice is shared: do not
// modify it.
func (f *Field) Density() []float64 { return f.rho }

// OnHull reports whether input point i lies on the convex hull of the
// points, where its contiguous Voronoi cell is truncated and its density
// biased high. It is always false in periodic mode. It panics if i is out
// of range.
func (f *Field) OnHull(i int) bool { return f.hull[i] }

// Hull returns, for every input row, whether the point lies on the convex
// hull (see OnHull). The slice is shared: do not modify it.
func (f *Field) Hull() []bool { return f.hull }

// TotalMass returns the summed mass of the points (their number when New
// was given no weights).
func (f *Field) TotalMass() float64 { return f.mass }

// Integral returns the integral of the interpolated field over the convex
// hull (in periodic mode, over the box): the sum over tetrahedra of the
// volume times the mean of the field at the four corners, the exact
// integral of a linear function over a tetrahedron. Each vertex then
// contributes its field value times a quarter of its contiguous Voronoi
// volume, 4 M_r/W_r · W_r/4 = M_r, so the result equals the total mass up
// to rounding (Schaap & van de Weygaert 2000). The sum is taken in fixed
// chunks, so it does not depend on the number of threads.
func (f *Field) Integral() float64 {
	vol := f.t.Volumes(nil)
	nt := len(vol)
	const chunk = 1 << 14
	part := make([]float64, (nt+chunk-1)/chunk)
	par.For(nt, chunk, func(lo, hi int) {
		s := 0.0
		for k := lo; k < hi; k++ {
			v := f.tets[4*k : 4*k+4]
			s += vol[k] * (f.vrho[v[0]] + f.vrho[v[1]] + f.vrho[v[2]] + f.vrho[v[3]])
		}
		part[lo/chunk] = s / 4
	})
	sum := 0.0
	for _, s := range part {
		sum += s
	}
	return sum
}

// wrap returns the periodic image of the displacement d nearest to zero.
func (f *Field) wrap(d float64) float64 {
	if !f.periodic {
		return d
	}
	return d - f.l*math.Round(d/f.l)
}

// corners returns the corners of tetrahedron c relative to p. In periodic
// mode the corners are unwrapped to the images nearest the first one (as
// tess.TetVolume does), and the tetrahedron is moved to its image nearest
// p.
func (f *Field) corners(c int32, p [3]float64) (q [4][3]float64) {
	v := f.tets[4*c : 4*c+4]
	a := f.xyz[3*v[0] : 3*v[0]+3]
	for k := 0; k < 3; k++ {
		q[0][k] = f.wrap(a[k] - p[k])
	}
	for j := 1; j < 4; j++ {
		b := f.xyz[3*v[j] : 3*v[j]+3]
		for k := 0; k < 3; k++ {
			q[j][k] = q[0][k] + f.wrap(b[k]-a[k])
		}
	}
	return q
}

// orient returns (b−a)·((c−a)×(d−a)), six times the signed volume of the
// tetrahedron abcd, positive for the orientation of tess.Tets.
func orient(a, b, c, d [3]float64) float64 {
	bx, by, bz := b[0]-a[0], b[1]-a[1], b[2]-a[2]
	cx, cy, cz := c[0]-a[0], c[1]-a[1], c[2]-a[2]
	dx, dy, dz := d[0]-a[0], d[1]-a[1], d[2]-a[2]
	return bx*(cy*dz-cz*dy) - by*(cx*dz-cz*dx) + bz*(cx*dy-cy*dx)
}

// At returns the interpolated DTFE density at x (Mpc/h): inside the
// tetrahedron containing x, rho(x) = rho_0 + ∇rho·(x − x_0), the linear
// function through the field values at its four corners (van de Weygaert
// & Schaap 2009), which is continuous across faces. ok is false, and rho
// NaN, when x is outside the convex hull or not finite; in periodic mode x
// is taken modulo the box and ok is true for every finite x.
//
// The tetrahedron is found by a walk (Devillers, Pion & Teillaud 2002,
// "remembering stochastic walk") from a tetrahedron near x taken from a
// coarse index built by New, with floating-point orientation tests; should
// the walk not end, the exact tess.Locate (or, in periodic mode, a scan of
// all tetrahedra) is used. A point within rounding of a face may be
// assigned to either side: the field is continuous there.
func (f *Field) At(x [3]float64) (rho float64, ok bool) {
	for _, v := range x {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return math.NaN(), false
		}
	}
	c, lam, st := f.walk(f.hint.start(x), x)
	switch st {
	case walkOutside:
		return math.NaN(), false
	case walkFailed:
		c, lam, ok = f.locateSlow(x)
		if !ok {
			return math.NaN(), false
		}
	}
	return f.interp(c, lam), true
}

// interp returns the field at barycentric coordinates lam of tetrahedron c.
func (f *Field) interp(c int32, lam [4]float64) float64 {
	v := f.tets[4*c : 4*c+4]
	return lam[0]*f.vrho[v[0]] + lam[1]*f.vrho[v[1]] + lam[2]*f.vrho[v[2]] + lam[3]*f.vrho[v[3]]
}

// barycentric returns the orientations of tetrahedron c with each corner in
// turn replaced by p, and their sum; they are the barycentric coordinates
// of p times six times the volume.
func (f *Field) barycentric(c int32, p [3]float64) (o [4]float64, sum float64) {
	q := f.corners(c, p)
	var z [3]float64
	o[0] = orient(z, q[1], q[2], q[3])
	o[1] = orient(q[0], z, q[2], q[3])
	o[2] = orient(q[0], q[1], z, q[3])
	o[3] = orient(q[0], q[1], q[2], z)
	return o, o[0] + o[1] + o[2] + o[3]
}

type walkStatus int

const (
	walkInside walkStatus = iota
	walkOutside
	walkFailed
)

// walk moves from tetrahedron c towards p across any face that has p on
// its outer side, the face tried first rotating with the step so that
// degenerate configurations cannot trap it in a cycle for long (Devillers,
// Pion & Teillaud 2002). It stops in the tetrahedron containing p, at a
// hull face with p outside (the hull is convex, so p is then outside the
// hull), or after a number of steps far above the O(N^(1/3)) a walk takes.
func (f *Field) walk(c int32, p [3]float64) (int32, [4]float64, walkStatus) {
	prev := int32(-1)
	limit := 64 + 8*int(math.Cbrt(float64(len(f.tets)/4)))
	for step := 0; step < limit; step++ {
		o, sum := f.barycentric(c, p)
		exit := -1
		for k := 0; k < 4; k++ {
			i := (step + k) & 3
			if u := f.nbr[4*c+int32(i)]; o[i] < 0 && (u != prev || u < 0) {
				exit = i
				break
			}
		}
		if exit < 0 {
			if !(sum > 0) {
				return c, o, walkFailed
			}
			for i := range o {
				o[i] /= sum
			}
			return c, o, walkInside
		}
		u := f.nbr[4*c+int32(exit)]
		if u < 0 {
			return c, o, walkOutside
		}
		prev, c = c, u
	}
	return c, [4]float64{}, walkFailed
}

// locateSlow finds the tetrahedron containing p without the walk: tess's
// exact Locate in open space, a scan of every tetrahedron (taking the one
// where p is deepest inside) in periodic mode.
func (f *Field) locateSlow(p [3]float64) (int32, [4]float64, bool) {
	if !f.periodic {
		c, err := f.t.Locate(p)
		if err != nil {
			return -1, [4]float64{}, false
		}
		o, sum := f.barycentric(int32(c), p)
		for i := range o {
			o[i] /= sum
		}
		return int32(c), o, true
	}
	best, bestMin := int32(-1), math.Inf(-1)
	var bestLam [4]float64
	for c := int32(0); c < int32(len(f.tets)/4); c++ {
		o, sum := f.barycentric(c, p)
		for i := range o {
			o[i] /= sum
		}
		m := min(o[0], o[1], o[2], o[3])
		if m > bestMin {
			best, bestMin, bestLam = c, m, o
		}
	}
	return best, bestLam, best >= 0
}

// hintGrid is a coarse cubic grid over the points' bounding box (the box
// in periodic mode) giving, for each of its cells, a tetrahedron incident
// to a point in or near that cell: the start of At's walk, so that the
// walk is a few steps long. It has about one cell per four points (at
// most 128³ cells, 8 MiB); one per point measured no faster.
type hintGrid struct {
	m   int
	lo  [3]float64
	inv [3]float64 // cells per unit length
	tet []int32
}

func newHintGrid(f *Field) hintGrid {
	var h hintGrid
	nt := len(f.tets) / 4
	if nt == 0 {
		return h
	}
	h.m = max(1, min(128, int(math.Cbrt(float64(f.n)/4))))
	hi := [3]float64{}
	if f.periodic {
		hi = [3]float64{f.l, f.l, f.l}
	} else {
		h.lo = [3]float64{math.Inf(1), math.Inf(1), math.Inf(1)}
		hi = [3]float64{math.Inf(-1), math.Inf(-1), math.Inf(-1)}
		for i := 0; i < f.n; i++ {
			for k := 0; k < 3; k++ {
				h.lo[k] = min(h.lo[k], f.xyz[3*i+k])
				hi[k] = max(hi[k], f.xyz[3*i+k])
			}
		}
	}
	for k := 0; k < 3; k++ {
		if hi[k] > h.lo[k] {
			h.inv[k] = float64(h.m) / (hi[k] - h.lo[k])
		}
	}
	// One incident tetrahedron per vertex.
	vt := make([]int32, f.n)
	for i := range vt {
		vt[i] = -1
	}
	for i, v := range f.tets {
		if vt[v] < 0 {
			vt[v] = int32(i / 4)
		}
	}
	h.tet = make([]int32, h.m*h.m*h.m)
	for i := range h.tet {
		h.tet[i] = -1
	}
	for i := 0; i < f.n; i++ {
		if vt[i] < 0 {
			continue
		}
		c := h.cell([3]float64(f.xyz[3*i : 3*i+3]))
		if h.tet[c] < 0 {
			h.tet[c] = vt[i]
		}
	}
	// Empty cells take the nearest filled cell before them in flat order
	// (after them for the leading ones): any start is correct, a near one
	// is merely faster.
	last := int32(-1)
	for i, t := range h.tet {
		if t >= 0 {
			last = t
		} else {
			h.tet[i] = last
		}
	}
	last = 0
	for i := len(h.tet) - 1; i >= 0; i-- {
		if h.tet[i] >= 0 {
			last = h.tet[i]
		} else {
			h.tet[i] = last
		}
	}
	return h
}

// cell returns the flat index of the cell holding p, clamped to the grid.
func (h *hintGrid) cell(p [3]float64) int {
	var c [3]int
	for k := 0; k < 3; k++ {
		u := (p[k] - h.lo[k]) * h.inv[k]
		c[k] = int(max(0, min(float64(h.m-1), u)))
	}
	return (c[0]*h.m+c[1])*h.m + c[2]
}

// start returns the tetrahedron to start a walk towards p from.
func (h *hintGrid) start(p [3]float64) int32 {
	if len(h.tet) == 0 {
		return 0
	}
	return h.tet[h.cell(p)]
}
