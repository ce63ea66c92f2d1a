package laguerre

import "math"

// clipDegenerate is returned by gcell.clip when the plane passes within the
// tolerance of a vertex next to the removed part: the cut would need a
// vertex of degree above three, which gcell does not represent, so the cell
// is handed over to the face-list poly (see worker.clip).
const clipDegenerate = 3

// gcell is a convex polyhedron with every vertex of degree three, stored as
// a vertex-edge graph in flat arrays (the representation of Voro++, Rycroft
// 2009). Slot k of vertex a (index 3a+k) holds the neighbour ed, the slot
// er of the same edge at the neighbour, and the tag ft of the face lying
// between edges k and k+1 of a. The three edges of a vertex are in
// counter-clockwise order seen from outside, so walking the edge (a, k)
// keeps face (a, k) on the left and the face continues at the neighbour b
// with slot (er+2) mod 3. A cut touches only the removed vertices and their
// edges, unlike poly.clip which rewrites every face. Coordinates are
// relative to the generating point, as in poly.
type gcell struct {
	v  []float64 // 3 per vertex
	ed []int32   // neighbour per slot
	er []int32   // back slot per slot
	ft []int32   // face tag per slot
	s  []float64 // n·x − off for the current plane (n not normalised), per vertex
	r2 []float64 // squared distance from the origin, per vertex
	up []bool    // vertex strictly beyond the current plane (false outside clip)
	nv int

	hint  [8]int32  // last highest vertex per octant of the plane normal
	outs  []int32   // removed vertices of the current cut
	cross []int32   // slots of removed vertices on edges crossing the plane
	pend  []int32   // (new vertex, removed vertex, its slot) per cut edge
	mk    []bool    // visited slots, for toPoly and measure
	ftag  []int32   // face tags, filled by measure
	farea []float64 // face areas, filled by measure
	rmax2 float64
}

// reset makes g the box [lo, hi] with faces −x, +x, −y, +y, −z, +z tagged
// tags[0..5]. Corner k is
// (k&1 ? hi : lo, k&2 ? hi : lo, k&4 ? hi : lo), its neighbours are k^1,
// k^2, k^4; the order x, y, z is counter-clockwise from outside when the
// corner has an odd number of hi coordinates, x, z, y otherwise.
func (g *gcell) reset(lo, hi [3]float64, tags [6]int32) {
	g.nv = 0
	g.reserve(8)
	g.nv = 8
	clear(g.up[:8])
	g.hint = [8]int32{}
	for k := 0; k < 8; k++ {
		x, y, z := lo[0], lo[1], lo[2]
		if k&1 != 0 {
			x = hi[0]
		}
		if k&2 != 0 {
			y = hi[1]
		}
		if k&4 != 0 {
			z = hi[2]
		}
		g.v[3*k], g.v[3*k+1], g.v[3*k+2] = x, y, z
		g.r2[k] = x*x + y*y + z*z
		nb := [3]int32{int32(k ^ 1), int32(k ^ 2), int32(k ^ 4)}
		if (k&1+k>>1&1+k>>2&1)%2 == 0 {
			nb[1], nb[2] = nb[2], nb[1]
		}
		for m := 0; m < 3; m++ {
			g.ed[3*k+m] = nb[m]
			// the face between the edges along axes a and b is the wall
			// normal to the third axis, on the side of corner k
			ax := bitAxis(nb[m]^int32(k)) + bitAxis(nb[(m+1)%3]^int32(k))
			c := 3 - ax
			g.ft[3*k+m] = tags[2*c+(k>>c)&1]
		}
	}
	for a := 0; a < 8; a++ {
		for m := 0; m < 3; m++ {
			b := g.ed[3*a+m]
			for j := 0; j < 3; j++ {
				if g.ed[3*b+int32(j)] == int32(a) {
					g.er[3*a+m] = int32(j)
				}
			}
		}
	}
	g.updateRmax()
}

// bitAxis returns the axis 0, 1, 2 of the single bit b = 1, 2, 4.
func bitAxis(b int32) int {
	return int(b >> 1)
}

// reserve makes room for n vertices, keeping the first g.nv. The per-vertex
// slices always have their full capacity as length.
func (g *gcell) reserve(n int) {
	if len(g.r2) >= n {
		return
	}
	c := max(2*n, 64)
	nv := g.nv
	g.v = append(g.v[:3*nv], make([]float64, 3*(c-nv))...)
	g.ed = append(g.ed[:3*nv], make([]int32, 3*(c-nv))...)
	g.er = append(g.er[:3*nv], make([]int32, 3*(c-nv))...)
	g.ft = append(g.ft[:3*nv], make([]int32, 3*(c-nv))...)
	g.s = append(g.s[:nv], make([]float64, c-nv)...)
	g.r2 = append(g.r2[:nv], make([]float64, c-nv)...)
	g.up = append(g.up[:nv], make([]bool, c-nv)...)
}

func (g *gcell) updateRmax() {
	r := 0.0
	for _, d := range g.r2[:g.nv] {
		if d > r {
			r = d
		}
	}
	g.rmax2 = r
}

// clip keeps the half-space n·x ≤ off with the tolerance rule of poly.clip
// (a vertex within tol of the plane is on it). It returns clipNone, clipCut,
// clipEmpty, or clipDegenerate, leaving g unchanged, when a vertex next to
// a removed one lies on the plane.
func (g *gcell) clip(nx, ny, nz, off, tol float64, tag int32) int {
	nv := g.nv
	v, ed, s, up := g.v[:3*nv], g.ed[:3*nv], g.s[:nv], g.up[:nv]
	// Climb to a vertex of largest n·x, from where the last climb for a
	// normal in the same octant ended: on a convex polyhedron a vertex
	// with no higher neighbour is a highest vertex.
	o := 0
	if nx > 0 {
		o = 1
	}
	if ny > 0 {
		o |= 2
	}
	if nz > 0 {
		o |= 4
	}
	a := g.hint[o]
	if int(a) >= nv {
		a = 0
	}
	sa := nx*v[3*a] + ny*v[3*a+1] + nz*v[3*a+2] - off
	er := g.er[:3*nv]
	skip := int32(-1) // slot of a leading back to the lower vertex just left
	for {
		best, bm, sb := int32(-1), int32(0), sa
		for m := 3 * a; m < 3*a+3; m++ {
			if m == skip {
				continue
			}
			b := ed[m]
			d := nx*v[3*b] + ny*v[3*b+1] + nz*v[3*b+2] - off
			if d > sb {
				best, bm, sb = b, m, d
			}
		}
		if best < 0 {
			break
		}
		a, sa, skip = best, sb, 3*best+er[bm]
	}
	g.hint[o] = a
	if sa <= tol {
		return clipNone
	}
	// Flood the vertices beyond the plane (they are connected); every
	// neighbour of a removed vertex must be removed or strictly inside.
	outs := append(g.outs[:0], a)
	up[a] = true
	s[a] = sa
	cross := g.cross[:0]
	maxr2 := 0.0
	for k := 0; k < len(outs); k++ {
		x := outs[k]
		if r := g.r2[x]; r > maxr2 {
			maxr2 = r
		}
		for m := 3 * x; m < 3*x+3; m++ {
			b := ed[m]
			if up[b] {
				continue
			}
			d := nx*v[3*b] + ny*v[3*b+1] + nz*v[3*b+2] - off
			s[b] = d
			if d > tol {
				up[b] = true
				outs = append(outs, b)
			} else if d >= -tol {
				for _, y := range outs {
					up[y] = false
				}
				g.outs = outs
				return clipDegenerate
			} else {
				cross = append(cross, m)
			}
		}
	}
	g.outs, g.cross = outs, cross
	nnew := len(cross)
	if len(outs) == nv {
		for _, y := range outs {
			up[y] = false
		}
		return clipEmpty
	}
	recompute := maxr2 >= g.rmax2
	g.reserve(nv + nnew)
	v, ed, s, up = g.v, g.ed, g.s, g.up
	er = g.er
	ft, r2 := g.ft, g.r2
	// new vertices on the cut edges: slot 0 back to the kept end b, slot 1
	// along face (b, j−1), slot 2 along face (b, j); faces (w, 0), (w, 1),
	// (w, 2) are (b, j−1), the cap and (b, j).
	w := int32(nv)
	pend := g.pend[:0]
	for _, m := range cross {
		{
			a, b, j := m/3, ed[m], er[m]
			sb, sa := s[b], s[a]
			t := sb / (sb - sa)
			x := v[3*b] + t*(v[3*a]-v[3*b])
			y := v[3*b+1] + t*(v[3*a+1]-v[3*b+1])
			z := v[3*b+2] + t*(v[3*a+2]-v[3*b+2])
			v[3*w], v[3*w+1], v[3*w+2] = x, y, z
			r2[w] = x*x + y*y + z*z
			up[w] = false
			bj := 3*b + j
			ed[3*w], er[3*w] = b, j
			ed[bj], er[bj] = w, 0
			ft[3*w] = ft[3*b+(j+2)%3]
			ft[3*w+1] = tag
			ft[3*w+2] = ft[bj]
			pend = append(pend, w, a, m-3*a)
			w++
		}
	}
	g.pend = pend
	// link the cap: from the new vertex on edge (b, j) → a, walk face (b, j)
	// through removed vertices until it re-enters the kept part.
	for k := 0; k < len(pend); k += 3 {
		w, cur, sl := pend[k], pend[k+1], pend[k+2]
		sl = (sl + 2) % 3
		for {
			x := ed[3*cur+sl]
			back := er[3*cur+sl]
			if up[x] {
				cur, sl = x, (back+2)%3
				continue
			}
			w2 := ed[3*x+back]
			ed[3*w+2], er[3*w+2] = w2, 1
			ed[3*w2+1], er[3*w2+1] = w, 2
			break
		}
	}
	// remove the cut-off vertices, moving kept ones from the end into the holes
	n := nv + nnew
	for _, a := range outs {
		for n > 0 && up[n-1] {
			n--
		}
		if int(a) >= n {
			continue
		}
		n--
		g.move(n, int(a))
	}
	g.nv = n
	if recompute {
		g.updateRmax()
	}
	return clipCut
}

// move copies vertex from to slot to and repoints its neighbours.
func (g *gcell) move(from, to int) {
	v, ed, er, ft := g.v, g.ed, g.er, g.ft
	v[3*to], v[3*to+1], v[3*to+2] = v[3*from], v[3*from+1], v[3*from+2]
	g.r2[to] = g.r2[from]
	g.up[to] = g.up[from]
	for k := 0; k < 3; k++ {
		b, j := ed[3*from+k], er[3*from+k]
		ed[3*to+k], er[3*to+k], ft[3*to+k] = b, j, ft[3*from+k]
		ed[3*b+j] = int32(to)
	}
}

// toPoly writes g as a face-list poly (faces counter-clockwise from
// outside), for measuring or for continuing with degenerate cuts.
func (g *gcell) toPoly(p *poly) {
	nv := g.nv
	p.v = append(p.v[:0], g.v[:3*nv]...)
	p.fs, p.fl, p.ftag, p.fv = p.fs[:0], p.fl[:0], p.ftag[:0], p.fv[:0]
	if cap(g.mk) < 3*nv {
		g.mk = make([]bool, 3*nv, 6*nv)
	}
	marks := g.mk[:3*nv]
	clear(marks)
	for a := 0; a < nv; a++ {
		for k := int32(0); k < 3; k++ {
			if marks[3*a+int(k)] {
				continue
			}
			p.fs = append(p.fs, int32(len(p.fv)))
			p.ftag = append(p.ftag, g.ft[3*a+int(k)])
			cur, sl := int32(a), k
			ln := int32(0)
			for !marks[3*cur+sl] {
				marks[3*cur+sl] = true
				p.fv = append(p.fv, cur)
				ln++
				i := 3*cur + sl
				cur, sl = g.ed[i], (g.er[i]+2)%3
			}
			p.fl = append(p.fl, ln)
		}
	}
	p.rmax2 = g.rmax2
}

// measure returns the volume and the centroid (relative coordinates) of g
// and stores the tag and area of every face in g.ftag and g.farea, in the
// manner of poly.measure: pyramids from the vertex mean to each face, each
// cut into tetrahedra by a fan from the face's first vertex.
func (g *gcell) measure() (vol float64, cen [3]float64) {
	nv := g.nv
	g.ftag, g.farea = g.ftag[:0], g.farea[:0]
	v, ed, er := g.v[:3*nv], g.ed[:3*nv], g.er[:3*nv]
	var rx, ry, rz float64
	for k := 0; k < nv; k++ {
		rx += v[3*k]
		ry += v[3*k+1]
		rz += v[3*k+2]
	}
	inv := 1 / float64(nv)
	rx, ry, rz = rx*inv, ry*inv, rz*inv
	if cap(g.mk) < 3*nv {
		g.mk = make([]bool, 3*nv, 6*nv)
	}
	marks := g.mk[:3*nv]
	clear(marks)
	var sx, sy, sz float64
	for i0 := range marks {
		if marks[i0] {
			continue
		}
		marks[i0] = true
		a0 := i0 / 3
		x0, y0, z0 := v[3*a0]-rx, v[3*a0+1]-ry, v[3*a0+2]-rz
		// second vertex, then the fan over the rest of the face
		i := int32(i0)
		b := ed[i]
		i = 3*b + (er[i]+2)%3
		marks[i] = true
		x1, y1, z1 := v[3*b]-rx, v[3*b+1]-ry, v[3*b+2]-rz
		var Ax, Ay, Az, fvol, fx, fy, fz float64
		for {
			c := ed[i]
			if int(c) == a0 {
				break
			}
			i = 3*c + (er[i]+2)%3
			marks[i] = true
			x2, y2, z2 := v[3*c]-rx, v[3*c+1]-ry, v[3*c+2]-rz
			ux, uy, uz := x1-x0, y1-y0, z1-z0
			wx, wy, wz := x2-x0, y2-y0, z2-z0
			cx, cy, cz := uy*wz-uz*wy, uz*wx-ux*wz, ux*wy-uy*wx
			Ax += cx
			Ay += cy
			Az += cz
			t := cx*x0 + cy*y0 + cz*z0
			fvol += t
			fx += t * (x0 + x1 + x2)
			fy += t * (y0 + y1 + y2)
			fz += t * (z0 + z1 + z2)
			x1, y1, z1 = x2, y2, z2
		}
		if Ax*x0+Ay*y0+Az*z0 < 0 {
			fvol, fx, fy, fz = -fvol, -fx, -fy, -fz
		}
		vol += fvol
		sx += fx
		sy += fy
		sz += fz
		g.ftag = append(g.ftag, g.ft[i0])
		g.farea = append(g.farea, 0.5*math.Sqrt(Ax*Ax+Ay*Ay+Az*Az))
	}
	if vol <= 0 {
		return 0, [3]float64{rx, ry, rz}
	}
	cen = [3]float64{rx + sx/(4*vol), ry + sy/(4*vol), rz + sz/(4*vol)}
	return vol / 6, cen
}
