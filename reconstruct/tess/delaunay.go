package tess

import (
	"errors"
	"slices"
)

// The incremental Delaunay construction (Bowyer 1981; Watson 1981).
//
// The triangulation is kept with an infinite vertex (index inf): every
// convex-hull face f is completed by an "infinite tetrahedron" f∪{inf}, so
// that every tetrahedron has exactly four neighbours and points outside the
// hull are inserted the same way as points inside it. Storage is flat, one
// record of 8 int32 per tetrahedron so that a visit touches one cache line:
// tetrahedron t has vertices r[8t:8t+4] and, for i = 0..3, the tetrahedron
// u across the face opposite vertex i is stored as the "corner" 4u+j in
// r[8t+4+i], where j is the index of the face of u shared with t (so the
// slot of corner 4u+j holds 4t+i; nbIdx maps a corner to its slot).
// Deleted tetrahedra have r[8t] = dead and sit on a free list until they
// are reused. Vertices are numbered in insertion order (see triangulate).
//
// Finite tetrahedra are positively oriented: orient3d(v0, v1, v2, v3) > 0.
// An infinite tetrahedron with inf at position i satisfies the same rule
// when inf is replaced by any point strictly outside its hull face: so for
// every tetrahedron, replacing vertex i by a point p gives a positively
// oriented tetrahedron exactly when p lies on the same side of face i as
// vertex i.

const (
	inf  = -1 // the infinite vertex
	dead = -2 // marks a deleted tetrahedron in r[8t]

	markIn  = 1 // in the cavity of the current insertion
	markOut = 2 // tested by the current insertion, not in conflict
)

// faceIdx[i] lists the vertices of the face opposite vertex i in an order
// (a, b, c) such that orient3d(a, b, c, v_i) has the sign of the
// tetrahedron's own orientation.
var faceIdx = [4][3]int{{2, 1, 3}, {0, 2, 3}, {1, 0, 3}, {0, 1, 2}}

// builder holds the state of one incremental construction.
type builder struct {
	pts  [][3]float64 // vertex coordinates, in insertion order
	ids  []int32      // vertex → index of the point in the caller's numbering
	r    []int32      // per tetrahedron t: 4 vertices r[8t:8t+4], 4 neighbour corners r[8t+4:8t+8]
	mark []uint8      // per tetrahedron: markIn, markOut, or 0 (not tested), reset after each insertion
	free []int32      // deleted tetrahedra available for reuse

	last int32  // a recently created tetrahedron: the walk starts here
	rng  uint64 // xorshift state for the walk

	cav, bnd []int32 // cavity tetrahedra and boundary corners of one insertion
	newt     []int32 // tetrahedra created by one insertion
	touch    int32   // sink for loads that only warm the cache
}

// errInternal reports a broken invariant of the construction; it is never
// expected and signals a bug, never bad input.
var errInternal = errors.New("tess: internal error: point location or cavity search failed")

// nbIdx returns the index in builder.r of the neighbour slot of corner c.
func nbIdx(c int32) int32 { return 2*c - (c & 3) + 4 }

func (b *builder) pt(v int32) *[3]float64 {
	return &b.pts[v]
}

// lexLess reports whether vertex u precedes vertex v in lexicographic (x, y,
// z) order; the input holds no duplicates so the order is strict.
func (b *builder) lexLess(u, v int32) bool {
	p, q := b.pt(u), b.pt(v)
	if p[0] != q[0] {
		return p[0] < q[0]
	}
	if p[1] != q[1] {
		return p[1] < q[1]
	}
	return p[2] < q[2]
}

// inSpherePerturbed returns the sign of insphere(v0, v1, v2, v3, p) for a
// positively oriented finite tetrahedron, never zero: exact ties are broken
// by the symbolic perturbation of O. Devillers & M. Teillaud, "Perturbations
// and vertex removal in a 3D Delaunay triangulation", SODA 2003 (also used by
// CGAL), itself an instance of Simulation of Simplicity (Edelsbrunner &
// Mücke 1990): every point is lifted by an infinitesimal amount ε^k where a
// later point in lexicographic order gets a larger perturbation. Expanding
// the perturbed determinant in powers of ε, the coefficient of the term of
// the most perturbed point is the orientation of the other four (with the
// point replaced by p); the first non-zero coefficient gives the sign, and
// the coefficient of p's own term, orient3d(v0..v3) > 0, is never zero.
// Because only the lifting is perturbed, the result is the regular
// triangulation of the true points with infinitesimal weights: it contains
// no flat tetrahedra, and it is a Delaunay tessellation of the input.
func (b *builder) inSpherePerturbed(v *[4]int32, p int32) int {
	pp := b.pt(p)
	p0, p1, p2, p3 := b.pt(v[0]), b.pt(v[1]), b.pt(v[2]), b.pt(v[3])
	if s := insphere(p0, p1, p2, p3, pp); s != 0 {
		return s
	}
	// Sort the five points, largest (most perturbed) first.
	pts := [5]int32{v[0], v[1], v[2], v[3], p}
	for i := 1; i < 5; i++ {
		for j := i; j > 0 && b.lexLess(pts[j-1], pts[j]); j-- {
			pts[j-1], pts[j] = pts[j], pts[j-1]
		}
	}
	for _, m := range pts {
		var o int
		switch m {
		case p:
			return -1
		case v[3]:
			o = orient3d(p0, p1, p2, pp)
		case v[2]:
			o = orient3d(p0, p1, pp, p3)
		case v[1]:
			o = orient3d(p0, pp, p2, p3)
		case v[0]:
			o = orient3d(pp, p1, p2, p3)
		}
		if o != 0 {
			return o
		}
	}
	return -1 // not reached: p is one of the five
}

// orientWith returns the orientation of tetrahedron t with vertex i replaced
// by point p; t's other three vertices must be finite.
func (b *builder) orientWith(t int32, i int, p int32) int {
	var q [4]*[3]float64
	for k := 0; k < 4; k++ {
		if k == i {
			q[k] = b.pt(p)
		} else {
			q[k] = b.pt(b.r[8*t+int32(k)])
		}
	}
	if o := orient3dStatic(q[0], q[1], q[2], q[3]); o != 0 {
		return o
	}
	return orient3d(q[0], q[1], q[2], q[3])
}

// infPos returns the position of the infinite vertex in t, or −1.
func (b *builder) infPos(t int32) int {
	for k := 0; k < 4; k++ {
		if b.r[8*t+int32(k)] == inf {
			return k
		}
	}
	return -1
}

// conflict reports whether the (perturbed) circumsphere of t contains p.
// For an infinite tetrahedron the "sphere" is the open half-space beyond
// its hull face; when p lies exactly in the plane of that face it is in
// conflict exactly when it is inside the circle of the face, which is the
// intersection of the plane with the circumsphere of the finite neighbour
// across the face: so the neighbour's (perturbed) test decides, and the two
// tetrahedra always enter or leave the cavity together.
func (b *builder) conflict(t int32, p int32) bool {
	v := (*[4]int32)(b.r[8*t : 8*t+4])
	if v[0]|v[1]|v[2]|v[3] >= 0 { // finite: inf is the only negative vertex
		pts := b.pts
		if s := insphereStatic(&pts[v[0]], &pts[v[1]], &pts[v[2]], &pts[v[3]], &pts[p]); s != 0 {
			return s > 0
		}
		return b.inSpherePerturbed(v, p) > 0
	}
	i := int(b.pos(t, inf))
	o := b.orientWith(t, i, p)
	if o != 0 {
		return o > 0
	}
	u := b.r[8*t+4+int32(i)] >> 2
	return b.inSpherePerturbed((*[4]int32)(b.r[8*u:8*u+4]), p) > 0
}

// conflictIn is conflict(t, p) with the filtered test of a finite
// tetrahedron written out for the cavity search; r is b.r, pts is b.pts
// and pp the coordinates of p.
func (b *builder) conflictIn(r []int32, t int32, pts [][3]float64, pp *[3]float64, p int32) bool {
	w := (*[4]int32)(r[8*t : 8*t+4])
	if w[0]|w[1]|w[2]|w[3] >= 0 {
		if s := insphereStatic(&pts[w[0]], &pts[w[1]], &pts[w[2]], &pts[w[3]], pp); s != 0 {
			return s > 0
		}
		return b.inSpherePerturbed(w, p) > 0
	}
	return b.conflict(t, p)
}

func (b *builder) rand4() int {
	b.rng ^= b.rng << 13
	b.rng ^= b.rng >> 7
	b.rng ^= b.rng << 17
	return int(b.rng >> 62)
}

// locate returns a tetrahedron whose circumsphere contains p: the finite
// tetrahedron containing p, or an infinite one whose hull face p sees. It
// walks from b.last by visibility (Devillers, Pion & Teillaud, "Walking in a
// triangulation", 2002), choosing the first face to test at random: this
// stochastic walk terminates with probability one, and its predicates are
// exact, so it ends in a tetrahedron that really contains p.
func (b *builder) locate(p int32) int32 {
	t := b.last
	if i := b.infPos(t); i >= 0 {
		if b.orientWith(t, i, p) > 0 {
			return t
		}
		t = b.r[8*t+4+int32(i)] >> 2
	}
	prev := int32(-1)
	// A walk visits each tetrahedron at most a few times; the bound only
	// guards against a broken invariant.
	for steps := 0; steps < len(b.r)+64; steps++ {
		r := b.rand4()
		moved := false
		for k := 0; k < 4; k++ {
			i := (r + k) & 3
			u := b.r[8*t+4+int32(i)] >> 2
			if u == prev {
				continue
			}
			if b.orientWith(t, i, p) < 0 {
				prev, t = t, u
				moved = true
				break
			}
		}
		if !moved {
			return t
		}
		if b.infPos(t) >= 0 {
			return t
		}
	}
	return -1
}

// newTet returns a slot for a new tetrahedron.
func (b *builder) newTet() int32 {
	if n := len(b.free); n > 0 {
		t := b.free[n-1]
		b.free = b.free[:n-1]
		return t
	}
	t := int32(len(b.r) / 8)
	if len(b.r) == cap(b.r) {
		// grow by a quarter, not the doubling of append: the array is
		// the bulk of the memory
		b.r = slices.Grow(b.r, len(b.r)/4+64)
		b.mark = slices.Grow(b.mark, len(b.r)/32+8)
	}
	b.r = append(b.r, 0, 0, 0, 0, 0, 0, 0, 0)
	b.mark = append(b.mark, 0)
	return t
}

// pos returns the position of vertex v in tetrahedron t.
func (b *builder) pos(t, v int32) int32 {
	r := (*[4]int32)(b.r[8*t : 8*t+4])
	// written as conditional assignments, which compile to conditional
	// moves: the position is unpredictable, a branch would often miss
	k := int32(3)
	if r[2] == v {
		k = 2
	}
	if r[1] == v {
		k = 1
	}
	if r[0] == v {
		k = 0
	}
	return k
}

// insert adds vertex p to the triangulation.
func (b *builder) insert(p int32) error {
	t := b.locate(p)
	if t < 0 || !b.conflict(t, p) {
		return errInternal
	}
	cav, bnd := append(b.cav[:0], t), b.bnd[:0]
	r, mark, pts := b.r, b.mark, b.pts
	pp := &pts[p]
	mark[t] = markIn
	touch := int32(0)
	for k := 0; k < len(cav); k++ {
		c := cav[k]
		nb := (*[4]int32)(r[8*c+4 : 8*c+8])
		// Load the four neighbour records together, so that their cache
		// misses overlap instead of coming one after another.
		touch += r[nb[0]&^3*2] + r[nb[1]&^3*2] + r[nb[2]&^3*2] + r[nb[3]&^3*2]
		for i := int32(0); i < 4; i++ {
			u := nb[i] >> 2
			m := mark[u]
			if m == markIn {
				continue
			}
			if m == markOut || !b.conflictIn(r, u, pts, pp, p) {
				mark[u] = markOut
				bnd = append(bnd, 4*c+i)
				continue
			}
			mark[u] = markIn
			cav = append(cav, u)
		}
	}
	b.cav, b.bnd = cav, bnd
	b.touch += touch
	// Star the cavity boundary from p: one new tetrahedron per boundary
	// face (c, i), which is c with vertex i replaced by p. Its slot i in c is
	// overwritten with −(new+1), so the boundary faces can be recognised
	// while the new tetrahedra are linked to each other below.
	b.newt = b.newt[:0]
	for _, bc := range b.bnd {
		c, i := bc>>2, bc&3
		n := b.newTet()
		b.newt = append(b.newt, n)
		copy(b.r[8*n:8*n+4], b.r[8*c:8*c+4])
		b.r[8*n+i] = p
		o := b.r[8*c+4+i]
		b.r[8*n+4+i] = o
		b.r[nbIdx(o)] = 4*n + i
		for k := int32(0); k < 4; k++ {
			if k != i {
				b.r[8*n+4+k] = -1
			}
		}
		b.mark[n] = 0
		b.r[8*c+4+i] = -(n + 1)
	}
	// The face of new tetrahedron n opposite k holds p and the edge ab of
	// the two vertices other than i, k. Its neighbour is the new
	// tetrahedron on the next boundary face around ab: rotate around ab
	// through the cavity, starting from c across its face k.
	for idx, bc := range b.bnd {
		c, i := bc>>2, bc&3
		n := b.newt[idx]
		for k := int32(0); k < 4; k++ {
			if k == i || b.r[8*n+4+k] >= 0 {
				continue
			}
			// cur's face opposite qx holds a, b and z.
			cur, qx, z := c, k, b.r[8*c+i]
			for {
				s := b.r[8*cur+4+qx]
				if s < 0 {
					m := -s - 1 // built from cur with qx → p
					pz := b.pos(cur, z)
					b.r[8*n+4+k] = 4*m + pz
					b.r[8*m+4+pz] = 4*n + k
					break
				}
				c1, j1 := s>>2, s&3
				qx, z, cur = b.pos(c1, z), b.r[8*c1+j1], c1
			}
		}
	}
	for idx, bc := range b.bnd {
		b.mark[b.r[8*b.newt[idx]+4+(bc&3)]>>2] = 0 // the tested neighbour outside
	}
	for _, c := range b.cav {
		b.mark[c] = 0
		b.r[8*c] = dead
		b.free = append(b.free, c)
	}
	b.last = b.newt[0]
	for _, n := range b.newt {
		if b.infPos(n) < 0 {
			b.last = n
			break
		}
	}
	return nil
}
