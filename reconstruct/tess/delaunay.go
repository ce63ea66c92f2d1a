package tess

import (
	"cmp"
	"errors"
	"math/bits"
	"slices"

	par "github.com/filigree-survey/filigree/internal/parallel"
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
// An insertion stores its new tetrahedra in the slots of those it removes;
// a star usually has more tetrahedra than its cavity, and the extra ones
// are appended, but when it has fewer (possible with large cavities in
// degenerate input) the slots left over get r[8t] = dead and a place on a
// free list, from which later insertions take slots first. Vertices are
// numbered in insertion order (see triangulate).
//
// Finite tetrahedra are positively oriented: orient3d(v0, v1, v2, v3) > 0.
// An infinite tetrahedron with inf at position i satisfies the same rule
// when inf is replaced by any point strictly outside its hull face: so for
// every tetrahedron, replacing vertex i by a point p gives a positively
// oriented tetrahedron exactly when p lies on the same side of face i as
// vertex i.

const (
	inf  = -1 // the infinite vertex
	dead = -2 // marks an unused slot in r[8t]

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
	free []int32      // dead slots available for reuse

	last int32  // a recently created tetrahedron: the walk starts here
	rng  uint64 // xorshift state for the walk

	cav, bnd []int32    // cavity tetrahedra and boundary corners of one insertion
	newt     []int32    // slots of the tetrahedra created by one insertion
	recs     []int32    // their records, assembled before they are stored
	edges    []edgeSlot // edge table linking the new tetrahedra (see insert)
	gen      uint32     // insertion count, the generation of edges entries
	touch    int32      // sink for loads that only warm the cache

	// For a worker of a parallel round (see insertParallel), own is the
	// worker of each slot and me this one, and fresh slots come from
	// [next, end); own is nil in the sequential phases.
	own       []uint8
	me        uint8
	next, end int32
	ownBuf    []uint8 // storage for own, kept between rounds

	nParallel, nDeferred int // points in parallel rounds, and deferred ones
}

// errInternal reports a broken invariant of the construction; it is never
// expected and signals a bug, never bad input.
var errInternal = errors.New("tess: internal error: point location or cavity search failed")

// errDefer is returned by insert in a worker of a parallel round when the
// insertion would touch a tetrahedron of the other worker (or an infinite
// one, or need more fresh slots than are left): nothing has been changed,
// and the point is inserted after the round.
var errDefer = errors.New("tess: insertion deferred")

// walkDeferred is returned by locate when a worker's walk leaves its part.
const walkDeferred = -2

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
		if b.own != nil && b.own[t] != b.me {
			return walkDeferred
		}
		if b.infPos(t) >= 0 {
			if b.own != nil {
				return walkDeferred
			}
			return t
		}
	}
	return -1
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

// edgeSlot is an entry of the edge table of one insertion: the corner of
// a new tetrahedron whose face holds the new point and the edge key.
type edgeSlot struct {
	key    uint64 // the edge's two vertices, smaller first, as uint32 halves
	corner int32  // 4n+k: new tetrahedron n, face opposite k; −1 once matched
	gen    uint32 // the insertion that wrote the entry
}

// edgeKey returns the key of the edge {a, b}, independent of the order; the
// infinite vertex (−1) is the uint32 0xFFFFFFFF, distinct from every vertex.
func edgeKey(a, b int32) uint64 {
	x, y := uint64(uint32(a)), uint64(uint32(b))
	return min(x, y)<<32 | max(x, y)
}

// otherTwo[i][k] are the two vertex positions other than i and k (i ≠ k).
var otherTwo = func() (o [4][4][2]int32) {
	for i := 0; i < 4; i++ {
		for k := 0; k < 4; k++ {
			n := 0
			for x := 0; x < 4; x++ {
				if x != i && x != k && n < 2 {
					o[i][k][n] = int32(x)
					n++
				}
			}
		}
	}
	return o
}()

// insert adds vertex p to the triangulation.
//
// It finds the cavity, the tetrahedra whose (perturbed) circumspheres
// contain p, by a search from the located tetrahedron across faces, and
// replaces it by the star of p over the cavity's boundary faces (Bowyer
// 1981; Watson 1981). The cavity is star-shaped from p, so its boundary is
// a triangulated sphere (through the infinite vertex when p is outside the
// hull) and every boundary edge ab is in exactly two boundary faces: the
// two new tetrahedra on them share the face pab, and a small hash table
// keyed by the edge links them, without walking the cavity again. The new
// tetrahedra take the cavity's slots, which are hot in the cache (see the
// comment on the storage above for the others).
func (b *builder) insert(p int32) error {
	t := b.locate(p)
	if t == walkDeferred {
		return errDefer
	}
	if t < 0 || !b.conflict(t, p) {
		return errInternal
	}
	cav, bnd := append(b.cav[:0], t), b.bnd[:0]
	r, mark, pts, own := b.r, b.mark, b.pts, b.own
	pp := &pts[p]
	mark[t] = markIn
	touch := int32(0)
	for k := 0; k < len(cav); k++ {
		c := cav[k]
		nb := (*[4]int32)(r[8*c+4 : 8*c+8])
		if own == nil {
			// Load the four neighbour records together, so that their
			// cache misses overlap instead of coming one after another
			// (not in a parallel round: the records may be another
			// worker's).
			touch += r[nb[0]&^3*2] + r[nb[1]&^3*2] + r[nb[2]&^3*2] + r[nb[3]&^3*2]
		}
		for i := int32(0); i < 4; i++ {
			u := nb[i] >> 2
			if own != nil {
				w := (*[4]int32)(r[8*u : 8*u+4])
				if own[u] != b.me || w[0]|w[1]|w[2]|w[3] < 0 {
					b.abort(cav, bnd)
					return errDefer
				}
			}
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
	b.touch += touch
	nf := len(bnd)
	if own != nil && nf-len(cav)-len(b.free) > int(b.end-b.next) {
		b.abort(cav, bnd)
		return errDefer
	}
	// The new records, built before any cavity slot is overwritten: the
	// tetrahedron on boundary face (c, i) is c with vertex i replaced by p,
	// and its neighbour across face i is c's neighbour there.
	recs := slices.Grow(b.recs[:0], 8*nf)[:8*nf]
	for j, bc := range bnd {
		c, i := bc>>2, bc&3
		src := (*[8]int32)(r[8*c : 8*c+8])
		dst := (*[8]int32)(recs[8*j : 8*j+8])
		dst[0], dst[1], dst[2], dst[3] = src[0], src[1], src[2], src[3]
		dst[i] = p
		dst[4], dst[5], dst[6], dst[7] = -1, -1, -1, -1
		dst[4+i] = src[4+i]
	}
	b.recs = recs
	// Slots: the cavity's, then free ones, then new ones at the end.
	var newt []int32
	if nf <= len(cav) {
		newt = cav[:nf]
		for _, c := range cav[nf:] {
			mark[c] = 0
			r[8*c] = dead
			b.free = append(b.free, c)
		}
	} else {
		newt = append(b.newt[:0], cav...)
		for len(newt) < nf && len(b.free) > 0 {
			c := b.free[len(b.free)-1]
			b.free = b.free[:len(b.free)-1]
			newt = append(newt, c)
		}
		if extra := nf - len(newt); extra > 0 && own != nil {
			for e := int32(0); e < int32(extra); e++ {
				newt = append(newt, b.next+e)
				mark[b.next+e] = 0
				own[b.next+e] = b.me
			}
			b.next += int32(extra)
		} else if extra > 0 {
			nt := int32(len(r) / 8)
			if len(r)+8*extra > cap(r) {
				// grow by a quarter, not the doubling of append: the
				// array is the bulk of the memory
				r = slices.Grow(r, max(len(r)/4, 8*extra)+64)
				mark = slices.Grow(mark, len(r)/32+extra+8)
			}
			r = r[:len(r)+8*extra]
			mark = mark[:len(mark)+extra]
			for e := int32(0); e < int32(extra); e++ {
				newt = append(newt, nt+e)
				mark[nt+e] = 0
			}
			b.r, b.mark = r, mark
		}
		b.newt = newt
	}
	b.cav, b.bnd = cav, bnd
	// Clear the marks: the outside tetrahedra that were tested are those
	// across the boundary faces; the cavity slots are reused below.
	for j := range nf {
		mark[recs[8*j+4+int(bnd[j]&3)]>>2] = 0
	}
	for _, c := range newt {
		mark[c] = 0
	}
	tab := b.edgeTable(nf)
	b.gen++
	gen, shift := b.gen, uint(64-bits.TrailingZeros(uint(len(tab))))
	open := 0
	for j, n := range newt {
		i := bnd[j] & 3
		rec := (*[8]int32)(recs[8*j : 8*j+8])
		copyRec((*[8]int32)(r[8*n:8*n+8]), rec)
		o := rec[4+i]
		r[nbIdx(o)] = 4*n + i
		for k := int32(0); k < 4; k++ {
			if k == i {
				continue
			}
			e := &otherTwo[i][k]
			key := edgeKey(rec[e[0]], rec[e[1]])
			h := (key * 0x9E3779B97F4A7C15) >> shift
			for {
				s := &tab[h]
				if s.gen != gen {
					*s = edgeSlot{key: key, corner: 4*n + k, gen: gen}
					open++
					break
				}
				if s.key == key {
					m := s.corner
					if m < 0 {
						return errInternal // a third face on one edge
					}
					r[8*n+4+k] = m
					r[nbIdx(m)] = 4*n + k
					s.corner = -1
					open--
					break
				}
				h = (h + 1) & uint64(len(tab)-1)
			}
		}
	}
	if open != 0 {
		return errInternal // a boundary edge in only one face
	}
	b.last = newt[0]
	for _, n := range newt {
		if r[8*n]|r[8*n+1]|r[8*n+2]|r[8*n+3] >= 0 {
			b.last = n
			break
		}
	}
	return nil
}

// abort undoes the marks of a cavity search.
func (b *builder) abort(cav, bnd []int32) {
	for _, c := range cav {
		b.mark[c] = 0
	}
	for _, bc := range bnd {
		b.mark[b.r[8*(bc>>2)+4+bc&3]>>2] = 0
	}
	b.cav, b.bnd = cav, bnd
}

// edgeTable returns the edge table for an insertion with nf boundary
// faces: at least four slots per edge (3nf/2 edges), so that linear probing
// stays short, and a power of two.
func (b *builder) edgeTable(nf int) []edgeSlot {
	need := 256
	for need < 6*nf {
		need *= 2
	}
	if len(b.edges) < need {
		b.edges = make([]edgeSlot, need)
		b.gen = 0
	}
	return b.edges
}

// reorder renumbers the tetrahedra so that those whose first finite vertex
// lies in the same cell of a coarse Hilbert grid are stored together, cells
// in Hilbert order, and drops the dead slots. It runs at the start of each
// round of the insertion order: a round's points are inserted along the
// Hilbert curve, so the tetrahedra they visit are then read from memory
// nearly in sequence instead of from all over the array, which the
// insertions of earlier rounds (slots reused as they were freed) leave
// scattered. keys are the insertion-order keys of the vertices, whose
// low hilbertBits bits are their Hilbert indices. It is a counting sort
// into the unused capacity of the record array; it does nothing when that
// capacity is too small, or the triangulation too small to gain from it.
func (b *builder) reorder(keys []uint64) {
	r := b.r
	nt := len(r) / 8
	if nt < 1<<15 {
		return
	}
	// about 64 tetrahedra per cell
	cellBits := min(max(bits.Len(uint(nt))-6, 3), 24)
	shift := hilbertBits - cellBits
	mask := uint64(1)<<hilbertBits - 1
	cell := func(t int) int {
		v := (*[4]int32)(r[8*t : 8*t+4])
		f := v[0]
		if f < 0 {
			f = v[1] // v[0] is the infinite vertex, so v[1] is finite
		}
		return int(keys[f] & mask >> shift)
	}
	start := make([]int32, 1<<cellBits+1)
	for t := 0; t < nt; t++ {
		if r[8*t] != dead {
			start[cell(t)+1]++
		}
	}
	for c := 1; c < len(start); c++ {
		start[c] += start[c-1]
	}
	kept := int(start[len(start)-1])
	if cap(r)-len(r) < 8*kept {
		return
	}
	newIdx := make([]int32, nt)
	spare := r[len(r) : len(r)+8*kept]
	for t := 0; t < nt; t++ {
		if r[8*t] == dead {
			continue
		}
		c := cell(t)
		n := start[c]
		start[c]++
		newIdx[t] = n
		copyRec((*[8]int32)(spare[8*n:8*n+8]), (*[8]int32)(r[8*t:8*t+8]))
	}
	r = r[:8*kept]
	par.For(kept, 1<<14, func(lo, hi int) {
		for n := lo; n < hi; n++ {
			rec := (*[8]int32)(spare[8*n : 8*n+8])
			for i := 4; i < 8; i++ {
				c := rec[i]
				rec[i] = 4*newIdx[c>>2] + c&3
			}
			copyRec((*[8]int32)(r[8*n:8*n+8]), rec)
		}
	})
	b.r = r
	b.mark = b.mark[:kept]
	b.free = b.free[:0]
	b.last = newIdx[b.last]
}

// copyRec copies one record through registers: the assignment of a whole
// [8]int32 through pointers compiles to a call of memmove (the compiler
// cannot rule out overlap), which costs more than the copy itself.
func copyRec(dst, src *[8]int32) {
	lo, hi := *(*[4]int32)(src[:4]), *(*[4]int32)(src[4:])
	*(*[4]int32)(dst[:4]), *(*[4]int32)(dst[4:]) = lo, hi
}

// insertRange inserts the points [p0, q) one by one, but those skip
// reports.
func (b *builder) insertRange(p0, q int32, skip func(int32) bool) error {
	for p := p0; p < q; p++ {
		if skip(p) {
			continue
		}
		if err := b.insert(p); err != nil {
			return err
		}
	}
	return nil
}

// parallelMin is the smallest round that insertParallel splits between two
// workers.
const parallelMin = 1 << 14

// insertParallel inserts the points [p0, q) of one round of the insertion
// order, which are sorted along the Hilbert curve, with two workers at
// once: the first inserts [p0, mid) in order, the second [mid, q) in
// reverse order.
//
// The tetrahedra are split between the workers by the Hilbert index of
// their first finite vertex, below or above that of point mid; each fresh
// slot belongs to the worker that fills it, from its own part of the
// unused capacity. A worker touches (reads the record of, tests, changes)
// only its own tetrahedra: when a walk or a cavity search reaches one of
// the other worker's, or an infinite one, the insertion stops before
// changing anything and the point is deferred. So a worker never changes
// a tetrahedron the other can reach: a tetrahedron it deletes or links to
// is its own and every neighbour of it has been checked to be its own too.
// The two workers therefore run as if alone, each one's result is fixed
// by its points and the triangulation at the start of the round, and the
// deferred points, inserted one by one afterwards (the first worker's,
// then the second's), complete the round: the outcome does not depend on
// the scheduling or on the number of threads. Most points lie far from
// the boundary between the two parts, so few are deferred (3.8% of the
// last round for 10^6 uniform points). It is a two-worker form of
// partitioned parallel insertion (as in Kohout, Kolingerová & Žára 2005),
// made deterministic by deferring instead of locking.
func (b *builder) insertParallel(p0, q int32, keys []uint64, skip func(int32) bool) error {
	const hmask = uint64(1)<<hilbertBits - 1
	mid := p0 + (q-p0)/2
	split := keys[mid] & hmask
	nt := int32(len(b.r) / 8)
	capT := int32(cap(b.r) / 8)
	// Each worker needs about 6.8 fresh slots per point; with less room
	// (never with the capacity reserved by triangulate) go one by one.
	if int64(capT-nt) < 6*int64(q-p0) {
		return b.insertRange(p0, q, skip)
	}
	r := b.r[:8*capT]
	if cap(b.mark) < int(capT) {
		b.mark = slices.Grow(b.mark, int(capT)-len(b.mark))
	}
	mark := b.mark[:capT]
	if cap(b.ownBuf) < int(capT) {
		b.ownBuf = make([]uint8, capT)
	}
	own := b.ownBuf[:capT]
	// Owners, and as each worker's first tetrahedron the finite one of
	// its own whose first vertex is nearest along the curve to its first
	// point. The second worker takes its points backwards, so that both
	// start far from the boundary between the parts and walk towards it:
	// a walk that crosses the boundary is deferred, and a worker that
	// started next to it would keep walking back across it.
	target := [2]uint64{keys[p0] & hmask, keys[q-1] & hmask}
	start := [2]int32{-1, -1}
	best := [2]uint64{^uint64(0), ^uint64(0)}
	for t := int32(0); t < nt; t++ {
		v := (*[4]int32)(r[8*t : 8*t+4])
		if v[0] == dead {
			own[t] = 2
			continue
		}
		f := v[0]
		if f < 0 {
			f = v[1]
		}
		k := keys[f] & hmask
		o := uint8(0)
		if k >= split {
			o = 1
		}
		own[t] = o
		if v[0]|v[1]|v[2]|v[3] >= 0 {
			d := max(k, target[o]) - min(k, target[o])
			if d < best[o] {
				best[o], start[o] = d, t
			}
		}
	}
	if start[0] < 0 || start[1] < 0 {
		// a part without a finite tetrahedron: go one by one
		return b.insertRange(p0, q, skip)
	}
	// The first worker's part of the unused capacity: 7 slots per point
	// (the average growth is 6.77, Okabe et al. 2000), so that the gap
	// left between its slots and the second worker's is small; a worker
	// out of slots defers its remaining points.
	endA := nt + min(7*(mid-p0)+1024, (capT-nt)/2)
	var w [2]*builder
	for i := range w {
		w[i] = &builder{pts: b.pts, ids: b.ids, r: r, mark: mark, own: own, me: uint8(i),
			last: start[i], rng: b.rng ^ uint64(0x9E3779B97F4A7C15)*uint64(i+1) | 1}
	}
	w[0].next, w[0].end = nt, endA
	w[1].next, w[1].end = endA, capT
	var deferred [2][]int32
	var errs [2]error
	// The two workers are the two chunks of a parallel loop; with one
	// thread they simply run one after the other.
	par.For(2, 1, func(i, _ int) {
		p, stop, step := p0, mid, int32(1)
		if i == 1 {
			p, stop, step = q-1, mid-1, -1
		}
		for ; p != stop; p += step {
			if skip(p) {
				continue
			}
			switch err := w[i].insert(p); err {
			case nil:
			case errDefer:
				deferred[i] = append(deferred[i], p)
			default:
				errs[i] = err
				return
			}
		}
	})
	if err := cmp.Or(errs[0], errs[1]); err != nil {
		return err
	}
	// The unused slots of the first worker's part are dead and free.
	for t := w[0].next; t < endA; t++ {
		r[8*t] = dead
		b.free = append(b.free, t)
	}
	b.free = append(b.free, w[0].free...)
	b.free = append(b.free, w[1].free...)
	b.r = r[:8*w[1].next]
	b.mark = mark[:w[1].next]
	// A worker's last tetrahedron is its start or one it created since:
	// alive either way, as only the worker itself could delete it.
	b.last = w[0].last
	b.nParallel += int(q - p0)
	b.nDeferred += len(deferred[0]) + len(deferred[1])
	b.touch += w[0].touch + w[1].touch
	for _, d := range deferred {
		for _, p := range d {
			if err := b.insert(p); err != nil {
				return err
			}
		}
	}
	return nil
}
