package tess

import (
	"errors"
	"fmt"
	"math"
)

// ErrOutside is returned by Locate for a point outside the convex hull.
var ErrOutside = errors.New("tess: point outside the convex hull")

// NumPoints returns the number of input points (duplicates included).
func (t *Tessellation) NumPoints() int { return t.n }

// NumTets returns the number of tetrahedra.
func (t *Tessellation) NumTets() int { return len(t.tets) / 4 }

// Tets returns the tetrahedra, four input indices each: tetrahedron k is
// Tets()[4k:4k+4], positively oriented (Orient3D of its corners > 0; in
// periodic mode, of the unwrapped corners). The slice is shared: do not
// modify it.
func (t *Tessellation) Tets() []int32 { return t.tets }

// Neighbours returns, for each tetrahedron k and i = 0..3, the index of the
// tetrahedron across the face opposite its vertex i at Neighbours()[4k+i],
// or −1 across a convex-hull face. The slice is shared: do not modify it.
// In periodic mode every face has a neighbour.
func (t *Tessellation) Neighbours() []int32 { return t.nbr }

// Duplicates returns the number of input points that repeat an earlier
// point exactly and were merged into it.
func (t *Tessellation) Duplicates() int { return t.dups }

// Rep returns, for every input point, the input index of the point that
// represents it in the tessellation: itself, or the first earlier point
// with the same coordinates. The slice is shared: do not modify it.
func (t *Tessellation) Rep() []int32 { return t.rep }

// Periodic reports whether the tessellation is of a periodic box, and its
// side.
func (t *Tessellation) Periodic() (bool, float64) { return t.periodic, t.l }

// VertexTets appends to dst[:0] the tetrahedra incident to input point v
// (through its representative, see Rep) and returns it. It panics if v is
// out of range.
func (t *Tessellation) VertexTets(v int32, dst []int32) []int32 {
	return starOf(t.tets, t.nbr, t.vtet, t.rep[v], dst[:0])
}

// starOf appends to dst the tetrahedra around vertex v by a search across
// the faces that contain v, starting from the stored incident tetrahedron.
func starOf(tets, nbr, vtet []int32, v int32, dst []int32) []int32 {
	s := vtet[v]
	if s < 0 {
		return dst
	}
	start := len(dst)
	dst = append(dst, s)
	for k := start; k < len(dst); k++ {
		c := dst[k]
		for i := 0; i < 4; i++ {
			if tets[4*c+int32(i)] == v {
				continue // the face opposite v does not contain v
			}
			u := nbr[4*c+int32(i)]
			if u < 0 {
				continue
			}
			seen := false
			for _, w := range dst[start:] {
				if w == u {
					seen = true
					break
				}
			}
			if !seen {
				dst = append(dst, u)
			}
		}
	}
	return dst
}

// VertexNeighbours appends to dst[:0] the Delaunay neighbours of input
// point v (the vertices joined to its representative by an edge), as input
// indices in no particular order, and returns it.
func (t *Tessellation) VertexNeighbours(v int32, dst []int32) []int32 {
	dst = dst[:0]
	r := t.rep[v]
	for _, c := range starOf(t.tets, t.nbr, t.vtet, r, nil) {
		for _, w := range t.tets[4*c : 4*c+4] {
			if w == r {
				continue
			}
			seen := false
			for _, x := range dst {
				if x == w {
					seen = true
					break
				}
			}
			if !seen {
				dst = append(dst, w)
			}
		}
	}
	return dst
}

// Locate returns the index of a tetrahedron containing the point p (on its
// boundary or inside), found by a visibility walk from tetrahedron 0 with
// exact orientation tests (O(N^(1/3)) steps for uniform points). It
// returns ErrOutside
// when p is outside the convex hull, and an error for a non-finite p. It is
// not available in periodic mode.
func (t *Tessellation) Locate(p [3]float64) (int, error) {
	for k, v := range p {
		if math.IsNaN(v) || math.IsInf(v, 0) {
			return -1, fmt.Errorf("tess: Locate: coordinate %c = %v: expected a finite number", "xyz"[k], v)
		}
	}
	if t.periodic {
		return -1, errors.New("tess: Locate is not available in periodic mode")
	}
	c := int32(0)
	prev := int32(-1)
	rng := uint64(0x9E3779B97F4A7C15)
	for steps := 0; steps < 4*len(t.tets)+16; steps++ {
		rng ^= rng << 13
		rng ^= rng >> 7
		rng ^= rng << 17
		r := int(rng >> 62)
		moved := false
		for k := 0; k < 4; k++ {
			i := (r + k) & 3
			u := t.nbr[4*c+int32(i)]
			if u == prev && u >= 0 {
				continue
			}
			var q [4]*[3]float64
			for j := 0; j < 4; j++ {
				if j == i {
					q[j] = &p
				} else {
					w := t.tets[4*c+int32(j)]
					q[j] = (*[3]float64)(t.xyz[3*w : 3*w+3])
				}
			}
			if orient3d(q[0], q[1], q[2], q[3]) < 0 {
				if u < 0 {
					return -1, ErrOutside
				}
				prev, c = c, u
				moved = true
				break
			}
		}
		if !moved {
			return int(c), nil
		}
	}
	return -1, errInternal
}

// HullFaces returns the faces of the convex hull, three input indices each,
// ordered so that (b−a)×(c−a) points out of the hull. It is nil in periodic
// mode. The slice is shared: do not modify it.
func (t *Tessellation) HullFaces() []int32 { return t.hull }

// TetVolume returns the volume of tetrahedron k (positive), in the cube of
// the coordinate unit. In periodic mode the corners are unwrapped to the
// periodic images nearest to the first one.
func (t *Tessellation) TetVolume(k int) float64 {
	v := t.tets[4*k : 4*k+4]
	a := (*[3]float64)(t.xyz[3*v[0] : 3*v[0]+3])
	b := (*[3]float64)(t.xyz[3*v[1] : 3*v[1]+3])
	c := (*[3]float64)(t.xyz[3*v[2] : 3*v[2]+3])
	d := (*[3]float64)(t.xyz[3*v[3] : 3*v[3]+3])
	bx, by, bz := b[0]-a[0], b[1]-a[1], b[2]-a[2]
	cx, cy, cz := c[0]-a[0], c[1]-a[1], c[2]-a[2]
	dx, dy, dz := d[0]-a[0], d[1]-a[1], d[2]-a[2]
	if t.periodic {
		w := func(x float64) float64 { return x - t.l*math.Round(x/t.l) }
		bx, by, bz = w(bx), w(by), w(bz)
		cx, cy, cz = w(cx), w(cy), w(cz)
		dx, dy, dz = w(dx), w(dy), w(dz)
	}
	return (bx*(cy*dz-cz*dy) - by*(cx*dz-cz*dx) + bz*(cx*dy-cy*dx)) / 6
}

// Volumes fills dst with the volume of every tetrahedron and returns it; a
// nil or short dst is replaced by a new slice of length NumTets.
func (t *Tessellation) Volumes(dst []float64) []float64 {
	nt := t.NumTets()
	if cap(dst) < nt {
		dst = make([]float64, nt)
	}
	dst = dst[:nt]
	parallel(nt, t.thr, func(lo, hi int) {
		for k := lo; k < hi; k++ {
			dst[k] = t.TetVolume(k)
		}
	})
	return dst
}

// VoronoiVolumes fills dst with the volume of the contiguous Voronoi cell
// of every input point — the summed volume of the tetrahedra incident to
// it, the quantity the Delaunay tessellation field estimator divides the
// mass by (Schaap & van de Weygaert 2000) — and returns it; a nil or short
// dst is replaced by a new slice of length NumPoints. Duplicates get their
// representative's volume. The sums run over the tetrahedra in index order
// for every point, so the result does not depend on Options.Threads.
func (t *Tessellation) VoronoiVolumes(dst []float64) []float64 {
	if cap(dst) < t.n {
		dst = make([]float64, t.n)
	}
	dst = dst[:t.n]
	vol := t.Volumes(nil)
	// Each goroutine owns a range of vertices and scans all tetrahedra in
	// order: the order of additions per vertex is fixed.
	parallel(t.n, t.thr, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			dst[i] = 0
		}
		l, h := int32(lo), int32(hi)
		for k, v := range t.tets {
			if v >= l && v < h {
				dst[v] += vol[k/4]
			}
		}
	})
	for i, r := range t.rep {
		if int(r) != i {
			dst[i] = dst[r]
		}
	}
	return dst
}
