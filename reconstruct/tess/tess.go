// Package tess computes the Delaunay tessellation of points in three
// dimensions, in open space or in a periodic box, with exact geometric
// predicates, and answers the queries a density estimator needs: the
// tetrahedra and neighbours around each point, point location, the convex
// hull, tetrahedron volumes and contiguous Voronoi cell volumes.
//
// The construction is incremental insertion (Bowyer 1981; Watson 1981) in a
// biased randomised insertion order (Amenta, Choi & Rote 2003) whose rounds
// are sorted along a Hilbert curve, with point location by a visibility walk;
// the large rounds are split between two workers along the curve, in a
// way whose result does not depend on the scheduling.
// The predicates are Shewchuk's (1997) filtered orient3d and insphere with an
// exact fallback, and exact ties are broken by a symbolic perturbation
// (Edelsbrunner & Mücke 1990; Devillers & Teillaud 2003), so degenerate input
// (lattices, co-spherical or coplanar sets) gives a valid tessellation.
package tess

import (
	"errors"
	"fmt"
	"math"
	"math/bits"
	"math/rand/v2"
	"runtime"
	"sync"

	par "github.com/filigree-survey/filigree/internal/parallel"
)

// Options sets up a tessellation.
type Options struct {
	// Seed seeds the randomised insertion order. The tessellation itself is
	// unique (the Delaunay tessellation of the symbolically perturbed
	// points); Seed changes only the numbering and vertex order of the
	// tetrahedra. The same Seed always gives the same result.
	Seed uint64
	// Periodic selects a periodic box [0, L)^3 of side L (in the units of
	// the coordinates); every point must lie in the box.
	Periodic bool
	// L is the side of the periodic box; used only when Periodic is set.
	L float64
	// Threads is the number of goroutines used by the volume queries; zero
	// or less means runtime.GOMAXPROCS(0). Results do not depend on it.
	// The construction itself always splits its large insertion rounds
	// between two workers, and does its other parallel loops with
	// internal/parallel; its result does not depend on Threads either.
	Threads int
}

// maxPoints bounds the number of points so that the neighbour corners 4t+i
// of the about 6.8 tetrahedra per point (more with periodic images) fit in
// an int32.
const maxPoints = 1 << 26

// ErrCoplanar is matched (errors.Is) by the error New returns when the
// distinct input points do not span three dimensions: fewer than four
// distinct points, or all of them collinear or coplanar.
var ErrCoplanar = errors.New("tess: points do not span three dimensions")

// DegenerateError is the error New returns for input whose distinct points
// do not span three dimensions. It matches ErrCoplanar.
type DegenerateError struct {
	// Distinct is the number of distinct input points.
	Distinct int
	// Dim is the dimension of their affine hull: 0 (at most one distinct
	// point), 1 (collinear) or 2 (coplanar).
	Dim int
}

// Error implements the error interface.
func (e *DegenerateError) Error() string {
	what := [3]string{"at most one distinct point", "all points collinear", "all points coplanar"}[e.Dim]
	return fmt.Sprintf("tess: %d distinct points, %s: a 3-D tessellation needs four points not in one plane", e.Distinct, what)
}

// Is reports whether target is ErrCoplanar.
func (e *DegenerateError) Is(target error) bool { return target == ErrCoplanar }

// InputError reports a point New cannot use: a coordinate that is not
// finite, or, in periodic mode, outside [0, L).
type InputError struct {
	// Row is the index of the point (0-based) and Col its coordinate (0 x,
	// 1 y, 2 z).
	Row, Col int
	// Value is the offending coordinate and Reason what was expected.
	Value  float64
	Reason string
}

// Error implements the error interface.
func (e *InputError) Error() string {
	return fmt.Sprintf("tess: point %d, coordinate %c = %v: %s", e.Row, "xyz"[e.Col], e.Value, e.Reason)
}

// Tessellation is the Delaunay tessellation of a set of points.
//
// Vertices are numbered by input index: a tetrahedron's vertices are the
// indices of input points (rows of the xyz slice given to New). When the
// input holds exact duplicates, the first occurrence represents them all
// (Rep), and only representatives appear in tetrahedra.
//
// In periodic mode the tetrahedra are those of the periodic (toroidal)
// tessellation, each listed once, with vertices numbered by input index;
// a tetrahedron that wraps around the box is listed with the indices of
// the original points its corners are images of.
type Tessellation struct {
	xyz  []float64 // coordinates: input points, then periodic images
	n    int       // number of input points
	rep  []int32   // input index → representative input index
	dups int
	tets []int32 // 4 vertices per finite tetrahedron
	nbr  []int32 // 4 neighbours per tetrahedron (−1: none)
	vtet []int32 // per vertex: one incident tetrahedron, or −1
	hull []int32 // 3 vertices per hull face
	thr  int

	periodic bool
	l        float64
}

// New returns the Delaunay tessellation of the points xyz = (x0, y0, z0, x1,
// y1, z1, …), at most 2^26 of them. Exact duplicates are merged (see Rep
// and Duplicates). It returns an *InputError for a non-finite coordinate
// (or one outside [0, L) in periodic mode) and a *DegenerateError, matching
// ErrCoplanar, when the points do not span three dimensions (in periodic
// mode: fewer than 4 distinct points). It panics if len(xyz) is not a
// multiple of 3. The tessellation keeps a reference to xyz, which must not
// be modified afterwards. The predicates are exact for coordinates of
// magnitude between about 1e-60 and 1e60 (or zero); see Orient3D.
func New(xyz []float64, opt Options) (*Tessellation, error) {
	if len(xyz)%3 != 0 {
		panic("tess: len(xyz) is not a multiple of 3")
	}
	n := len(xyz) / 3
	if n > maxPoints {
		return nil, fmt.Errorf("tess: %d points: at most %d supported", n, maxPoints)
	}
	if opt.Periodic && !(opt.L > 0 && !math.IsInf(opt.L, 0)) {
		return nil, fmt.Errorf("tess: periodic box side L = %v: expected a positive finite number", opt.L)
	}
	for i, v := range xyz {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return nil, &InputError{Row: i / 3, Col: i % 3, Value: v, Reason: "expected a finite number"}
		}
		if opt.Periodic && !(v >= 0 && v < opt.L) {
			return nil, &InputError{Row: i / 3, Col: i % 3, Value: v, Reason: fmt.Sprintf("expected a value in the periodic box [0, %v)", opt.L)}
		}
	}
	t := &Tessellation{xyz: xyz, n: n, thr: opt.Threads}
	if t.thr <= 0 {
		t.thr = runtime.GOMAXPROCS(0)
	}
	t.rep, t.dups = dedup(xyz)
	if opt.Periodic {
		if err := t.buildPeriodic(opt); err != nil {
			return nil, err
		}
		return t, nil
	}
	b, err := triangulate(xyz, t.rep, opt.Seed)
	if err != nil {
		return nil, err
	}
	t.tets, t.nbr, t.hull = b.compact()
	t.vtet = vertexTets(t.tets, n)
	return t, nil
}

// dedup returns, for every point, the index of the first point with the
// same coordinates (+0 and −0 are equal), and the number of duplicates.
func dedup(xyz []float64) (rep []int32, dups int) {
	n := len(xyz) / 3
	rep = make([]int32, n)
	size := 1
	for size < 2*n {
		size *= 2
	}
	table := make([]int32, size)
	for i := range table {
		table[i] = -1
	}
	mask := uint64(size - 1)
	for i := 0; i < n; i++ {
		x, y, z := xyz[3*i]+0, xyz[3*i+1]+0, xyz[3*i+2]+0 // −0 → +0
		h := mix64(mix64(mix64(math.Float64bits(x))^math.Float64bits(y))^math.Float64bits(z)) & mask
		for {
			j := table[h]
			if j < 0 {
				table[h] = int32(i)
				rep[i] = int32(i)
				break
			}
			if xyz[3*j] == x && xyz[3*j+1] == y && xyz[3*j+2] == z {
				rep[i] = j
				dups++
				break
			}
			h = (h + 1) & mask
		}
	}
	return rep, dups
}

// mix64 is the finaliser of SplitMix64 (Steele, Lea & Flood 2014): every
// input bit affects every output bit, so the low bits can index a table
// even for keys such as small integers written as float64, whose low bits
// are all zero.
func mix64(h uint64) uint64 {
	h = (h ^ h>>30) * 0xBF58476D1CE4E5B9
	h = (h ^ h>>27) * 0x94D049BB133111EB
	return h ^ h>>31
}

// insertionOrder returns the representative points in biased randomised
// insertion order (Amenta, Choi & Rote 2003): each point goes to the last
// round with probability 1/2, to the one before with probability 1/4, and
// so on, and the points of each round are sorted along a 3-D Hilbert curve
// over the bounding box, so that consecutive insertions are close in space
// while the rounds keep the randomisation that bounds the expected work.
//
// It also returns the sort keys, in the same order: the round in the bits
// from hilbertBits up, the Hilbert index below.
func insertionOrder(xyz []float64, rep []int32, seed uint64) ([]int32, []uint64) {
	lo3 := [3]float64{math.Inf(1), math.Inf(1), math.Inf(1)}
	hi := [3]float64{math.Inf(-1), math.Inf(-1), math.Inf(-1)}
	m := 0
	for i, r := range rep {
		if int(r) != i {
			continue
		}
		m++
		for k := 0; k < 3; k++ {
			lo3[k] = math.Min(lo3[k], xyz[3*i+k])
			hi[k] = math.Max(hi[k], xyz[3*i+k])
		}
	}
	rounds := 0
	for (m >> rounds) > 64 {
		rounds++
	}
	const hb = hilbertBits / 3
	var scale [3]float64
	for k := 0; k < 3; k++ {
		if hi[k] > lo3[k] {
			scale[k] = (1<<hb - 1) / (hi[k] - lo3[k])
		}
	}
	// The rounds come from one random stream, in input order; the Hilbert
	// keys, the costly part, are computed in parallel (each chunk writes
	// only its own keys, so the result does not depend on the threads).
	idx := make([]int32, 0, m)
	keys := make([]uint64, m)
	rng := rand.New(rand.NewPCG(seed, 0x5eed5eed5eed5eed))
	for i, r := range rep {
		if int(r) != i {
			continue
		}
		// round: rounds with probability 1/2, rounds−1 with 1/4, …, 0.
		z := 0
		for u := rng.Uint64(); u&1 == 1 && z < rounds; u >>= 1 {
			z++
		}
		keys[len(idx)] = uint64(rounds-z) << (3 * hb)
		idx = append(idx, int32(i))
	}
	par.For(m, 1<<14, func(lo, hi int) {
		for j := lo; j < hi; j++ {
			i := int(idx[j])
			var c [3]uint32
			for k := 0; k < 3; k++ {
				c[k] = uint32((xyz[3*i+k] - lo3[k]) * scale[k])
			}
			keys[j] |= hilbert3(c, hb)
		}
	})
	// Sorting by key, ties in input order: the LSD radix sort is stable,
	// and idx is in input order.
	radixSort(keys, idx, bits.Len64(uint64(rounds))+3*hb)
	return idx, keys
}

// radixSort sorts keys, whose values are below 2^nbits, in increasing
// order and permutes vals with them: a stable least-significant-digit
// radix sort with 11-bit digits (Knuth, TAOCP vol. 3, section 5.2.5), in
// O(n·nbits/11) time and one scratch copy of each slice.
func radixSort(keys []uint64, vals []int32, nbits int) {
	const digit = 11
	n := len(keys)
	k2, v2 := make([]uint64, n), make([]int32, n)
	var count [1 << digit]int
	for shift := 0; shift < nbits; shift += digit {
		clear(count[:])
		for _, k := range keys {
			count[k>>shift&(1<<digit-1)]++
		}
		sum := 0
		for d, c := range count {
			count[d] = sum
			sum += c
		}
		for j, k := range keys {
			d := k >> shift & (1<<digit - 1)
			k2[count[d]] = k
			v2[count[d]] = vals[j]
			count[d]++
		}
		keys, k2 = k2, keys
		vals, v2 = v2, vals
	}
	// after an odd number of passes the sorted data is in the scratch
	// copies
	if (nbits+digit-1)/digit%2 == 1 {
		copy(k2, keys)
		copy(v2, vals)
	}
}

// hilbertBits is the number of bits of the Hilbert index of the insertion
// order: 19 per axis, a grid fine enough that few distinct points share a
// cell.
const hilbertBits = 57

// hilbert3 returns the position along the 3-D Hilbert curve of the cell c
// of a 2^nbits grid, by J. Skilling, "Programming the Hilbert curve", AIP
// Conf. Proc. 707, 381 (2004): transform the axes to the transposed Hilbert
// index, then interleave its bits.
func hilbert3(c [3]uint32, nbits int) uint64 {
	m := uint32(1) << (nbits - 1)
	for bit := nbits - 1; bit > 0; bit-- {
		p := uint32(1)<<bit - 1
		for i := 0; i < 3; i++ {
			// Without branches: if bit of c[i] is set, invert the low
			// bits of c[0]; else exchange the low bits of c[0] and c[i].
			set := -(c[i] >> bit & 1) // all ones when set
			t := (c[0] ^ c[i]) & p &^ set
			c[0] ^= p&set | t
			c[i] ^= t
		}
	}
	c[1] ^= c[0]
	c[2] ^= c[1]
	t := uint32(0)
	for q := m; q > 1; q >>= 1 {
		if c[2]&q != 0 {
			t ^= q - 1
		}
	}
	c[0] ^= t
	c[1] ^= t
	c[2] ^= t
	// interleave: bit k of c[0], c[1], c[2] goes to bit 3k+2, 3k+1, 3k
	return spread3(c[0])<<2 | spread3(c[1])<<1 | spread3(c[2])
}

// spread3 moves bit k of the low 21 bits of x to bit 3k.
func spread3(x uint32) uint64 {
	v := uint64(x) & 0x1fffff
	v = (v | v<<32) & 0x1f00000000ffff
	v = (v | v<<16) & 0x1f0000ff0000ff
	v = (v | v<<8) & 0x100f00f00f00f00f
	v = (v | v<<4) & 0x10c30c30c30c30c3
	v = (v | v<<2) & 0x1249249249249249
	return v
}

// triangulate builds the Delaunay tessellation, with its infinite
// tetrahedra, of the representative points (rep[i] == i).
func triangulate(xyz []float64, rep []int32, seed uint64) (*builder, error) {
	return triangulateMode(xyz, rep, seed, buildMode{})
}

// buildMode switches off optional parts of the construction, for the
// tests that compare the results with and without them.
type buildMode struct {
	noReorder, noParallel bool
}

// triangulateMode is triangulate with the parts mode switches off.
func triangulateMode(xyz []float64, rep []int32, seed uint64, mode buildMode) (*builder, error) {
	order, keys := insertionOrder(xyz, rep, seed)
	// Internally the vertices are numbered in insertion order, with their
	// coordinates copied in that order: consecutive insertions are close
	// along the Hilbert curve, so the coordinates they read are close in
	// memory too.
	local := make([][3]float64, len(order))
	for k, v := range order {
		local[k] = [3]float64(xyz[3*v : 3*v+3])
	}
	b := &builder{pts: local, ids: order, rng: seed | 1}
	first, err := b.initial(len(order))
	if err != nil {
		return nil, err
	}
	// 6.77 tetrahedra per point in a Poisson sample (Okabe et al. 2000),
	// plus the hull
	est := 68*len(order)/10 + 1024
	// make, unlike growing with append, need not clear memory fresh from
	// the operating system
	b.r = append(make([]int32, 0, 8*est), b.r...)
	b.mark = append(make([]uint8, 0, est), b.mark...)
	isFirst := func(p int32) bool {
		return p == first[0] || p == first[1] || p == first[2] || p == first[3]
	}
	n := int32(len(order))
	for p := int32(0); p < n; {
		// the round of p is [p, q)
		q := p + 1
		for q < n && keys[q]>>hilbertBits == keys[p]>>hilbertBits {
			q++
		}
		if p > 0 && !mode.noReorder {
			b.reorder(keys)
		}
		var err error
		if q-p >= parallelMin && !mode.noParallel {
			err = b.insertParallel(p, q, keys, isFirst)
		} else {
			err = b.insertRange(p, q, isFirst)
		}
		if err != nil {
			return nil, err
		}
		p = q
	}
	b.pts = nil
	return b, nil
}

// initial builds the first tetrahedron and its four infinite neighbours from
// the earliest of the m vertices (in insertion order) that span three
// dimensions.
func (b *builder) initial(m int) ([4]int32, error) {
	var f [4]int32
	if m < 2 {
		return f, &DegenerateError{Distinct: m, Dim: 0}
	}
	f[0], f[1] = 0, 1
	k := 2
	for ; k < m; k++ {
		if !collinear(b.pt(f[0]), b.pt(f[1]), b.pt(int32(k))) {
			break
		}
	}
	if k == m {
		return f, &DegenerateError{Distinct: m, Dim: 1}
	}
	f[2] = int32(k)
	o := 0
	for k = 2; k < m; k++ {
		if o = orient3d(b.pt(f[0]), b.pt(f[1]), b.pt(f[2]), b.pt(int32(k))); o != 0 {
			break
		}
	}
	if k == m {
		return f, &DegenerateError{Distinct: m, Dim: 2}
	}
	f[3] = int32(k)
	if o < 0 {
		f[0], f[1] = f[1], f[0]
	}
	b.r = append(b.r[:0], f[0], f[1], f[2], f[3], 0, 0, 0, 0)
	// Infinite tetrahedron for face i: vertex i → inf, and two other
	// vertices swapped so that inf sits on the outer side.
	for i := 0; i < 4; i++ {
		v := f
		v[i] = inf
		a, c := (i+1)&3, (i+2)&3
		v[a], v[c] = v[c], v[a]
		b.r = append(b.r, v[0], v[1], v[2], v[3], 0, 0, 0, 0)
	}
	b.mark = make([]uint8, 5)
	// Link the five tetrahedra by matching faces (5·4 faces, brute force).
	for t := int32(0); t < 5; t++ {
		for i := int32(0); i < 4; i++ {
			for u := int32(0); u < 5; u++ {
				if u == t {
					continue
				}
				for j := int32(0); j < 4; j++ {
					if sameFace(b.r[8*t:8*t+4], i, b.r[8*u:8*u+4], j) {
						b.r[8*t+4+i] = 4*u + j
					}
				}
			}
		}
	}
	b.last = 0
	return f, nil
}

// sameFace reports whether face i of tetrahedron s and face j of u have the
// same three vertices.
func sameFace(s []int32, i int32, u []int32, j int32) bool {
	for k := int32(0); k < 4; k++ {
		if k == i {
			continue
		}
		found := false
		for l := int32(0); l < 4; l++ {
			if l != j && u[l] == s[k] {
				found = true
			}
		}
		if !found {
			return false
		}
	}
	return true
}

// collinear reports exactly whether a, b, c lie on one line: all three
// coordinate-plane projections of the triangle have zero area.
func collinear(a, b, c *[3]float64) bool {
	for k := 0; k < 3; k++ {
		x, y := k, (k+1)%3
		var backing [64]float64
		ar := arena{cur: backing[:0]}
		d := ar.det2(ar.diffExp(b[x], a[x]), ar.diffExp(b[y], a[y]), ar.diffExp(c[x], a[x]), ar.diffExp(c[y], a[y]))
		if sign(d) != 0 {
			return false
		}
	}
	return true
}

// compact removes the infinite and deleted tetrahedra and renumbers the
// rest; it returns the finite tetrahedra, their neighbours (−1 across a hull
// face) and the hull faces, each ordered so that (b−a)×(c−a) points out of
// the hull. The tetrahedra and neighbours are two halves of the record
// array, rearranged in place, so compaction needs no second copy.
func (b *builder) compact() (tets, nbr, hull []int32) {
	nt := int32(len(b.r) / 8)
	b.mark, b.free = nil, nil
	r, ids := b.r, b.ids
	// The new index of a kept tetrahedron is the number of kept ones before
	// it: a bitmap with a running count per 64-bit word gives it without a
	// T-long index array. A tetrahedron is kept when it is neither dead
	// nor infinite, that is when none of its vertices is negative.
	live := make([]uint64, (nt+63)/64)
	par.For(len(live), 1024, func(lo, hi int) {
		for w := lo; w < hi; w++ {
			var bitsW uint64
			for t := int32(64 * w); t < min(int32(64*w+64), nt); t++ {
				v := (*[4]int32)(r[8*t : 8*t+4])
				if v[0]|v[1]|v[2]|v[3] >= 0 {
					bitsW |= 1 << (t & 63)
				}
			}
			live[w] = bitsW
		}
	})
	before := make([]int32, len(live))
	next := int32(0)
	for w, bitsW := range live {
		before[w] = next
		next += int32(bits.OnesCount64(bitsW))
		for free := ^bitsW; free != 0; free &= free - 1 {
			t := int32(64*w + bits.TrailingZeros64(free))
			if t >= nt || r[8*t] == dead {
				continue
			}
			i := b.infPos(t)
			v, f := r[8*t:8*t+4], faceIdx[i]
			hull = append(hull, ids[v[f[0]]], ids[v[f[1]]], ids[v[f[2]]])
		}
	}
	remap := func(t int32) int32 {
		w, bit := t>>6, uint64(1)<<(t&63)
		if live[w]&bit == 0 {
			return -1
		}
		return before[w] + int32(bits.OnesCount64(live[w]&(bit-1)))
	}
	// Pass 1, in parallel: each kept record is rewritten where it is, with
	// 4 vertices as input indices, then 4 renumbered neighbours.
	par.For(len(live), 1024, func(lo, hi int) {
		for w := lo; w < hi; w++ {
			for bw := live[w]; bw != 0; bw &= bw - 1 {
				t := 64*w + bits.TrailingZeros64(bw)
				rec := (*[8]int32)(r[8*t : 8*t+8])
				var out [8]int32
				for i := 0; i < 4; i++ {
					out[i] = ids[rec[i]]
					out[4+i] = remap(rec[4+i] >> 2)
				}
				*rec = out
			}
		}
	})
	// Pass 2: the kept records are moved down, a run of consecutive ones
	// at a time (record k goes to k ≤ t, so nothing unread is
	// overwritten).
	dst := 0
	for w, bw := range live {
		for bw != 0 {
			s := bits.TrailingZeros64(bw)
			l := min(bits.TrailingZeros64(^(bw >> s)), 64-s)
			t := 64*w + s
			copy(r[8*dst:], r[8*t:8*(t+l)])
			dst += l
			if l == 64 {
				bw = 0
			} else {
				bw &^= (1<<l - 1) << s
			}
		}
	}
	unshuffle(b.r[:8*next])
	tets = b.r[: 4*next : 4*next]
	nbr = b.r[4*next : 8*next : 8*next]
	b.r = nil
	return tets, nbr, hull
}

// unshuffle rearranges in place the blocks of four int32 of a, viewed as
// B[0], B[1], …, B[2m−1] with len(a) = 8m, into the order B[0], B[2], …,
// B[2m−2], B[1], B[3], …, B[2m−1]: with a record of vertices and neighbours
// per tetrahedron, it gives all the vertices, then all the neighbours.
//
// Step k = 0, …, m−1 swaps B[k] and B[2k]; since B[2k] is untouched before
// step k, it brings the k-th even block to slot k. An odd block 2j+1 is
// carried to slot 2s at every step s equal to its slot, so it ends in the
// slot (2j+1)·2^e ∈ [m, 2m); a cycle-following permutation then moves it
// to slot m+j, with a bitmap of the slots already placed.
func unshuffle(a []int32) {
	m := len(a) / 8
	type block = [4]int32
	blk := func(i int) *block { return (*block)(a[4*i : 4*i+4]) }
	for k := 1; k < m; k++ {
		*blk(k), *blk(2 * k) = *blk(2 * k), *blk(k)
	}
	// src returns the slot holding the block that belongs in slot d ≥ m.
	src := func(d int) int {
		o := 2*(d-m) + 1
		s := o << max(0, bits.Len(uint(m))-bits.Len(uint(o)))
		if s < m {
			s <<= 1
		}
		return s
	}
	done := make([]uint64, (m+63)/64)
	for s0 := m; s0 < 2*m; s0++ {
		if done[(s0-m)>>6]&(1<<((s0-m)&63)) != 0 {
			continue
		}
		tmp := *blk(s0)
		cur := s0
		for {
			done[(cur-m)>>6] |= 1 << ((cur - m) & 63)
			s := src(cur)
			if s == s0 {
				*blk(cur) = tmp
				break
			}
			*blk(cur) = *blk(s)
			cur = s
		}
	}
}

// vertexTets returns, for each of n vertices, one incident tetrahedron, or
// −1 when the vertex is in none.
func vertexTets(tets []int32, n int) []int32 {
	vt := make([]int32, n)
	for i := range vt {
		vt[i] = -1
	}
	for i, v := range tets {
		vt[v] = int32(i / 4)
	}
	return vt
}

// parallel runs f(lo, hi) over [0, n) split into thr contiguous ranges.
func parallel(n, thr int, f func(lo, hi int)) {
	thr = max(1, min(thr, n/1024+1))
	var wg sync.WaitGroup
	for g := 0; g < thr; g++ {
		lo, hi := n*g/thr, n*(g+1)/thr
		wg.Add(1)
		go func() {
			defer wg.Done()
			f(lo, hi)
		}()
	}
	wg.Wait()
}
