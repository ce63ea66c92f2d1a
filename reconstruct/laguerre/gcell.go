package laguerre

import "math"

// clipDegenerate is returned by gcell.clip when the plane passes within the
// tolerance of a vertex next to the removed part: the cut would need a
// vertex of degree above three, which gcell does not represent, so the cell
// is handed over to the face-list poly (see worker.clip).
const clipDegenerate = 3

// gcell is a convex polyhedron with every vertex of degree three, stored as
// a vertex-edge graph in flat arrays (the representation of Voro++, Rycroft
// 2009). Vertex a has three edge slots k = 0, 1, 2: ed[a][k] = 4b+j links
// it to neighbour b, whose slot j holds the same edge, and ft[a][k] is the
// tag of the face lying between edges k and k+1 of a. The three edges of a
// vertex are in counter-clockwise order seen from outside, so walking the
// edge (a, k) keeps face (a, k) on the left and the face continues at the
// neighbour b with slot (j+2) mod 3. A cut touches only the removed vertices
// and their edges, unlike poly.clip which rewrites every face. Coordinates
// are relative to the generating point, as in poly.
//
// Per-vertex records are fixed-size arrays (four slots, the fourth unused by
// ed and ft; v[a][3] is the squared distance from the origin) so that a slot
// number masked with &3 needs no bounds check and a vertex sits in one or
// two cache lines.
type gcell struct {
	v  [][4]float64 // x, y, z, x²+y²+z² per vertex
	ed [][4]int32   // 4·neighbour + back slot, per slot
	ft [][4]int32   // face tag per slot
	s  []float64    // n·x − off for the current plane (n not normalised), per vertex
	up []bool       // vertex strictly beyond the current plane (false outside clip)
	nv int

	hint  [8]int32  // last highest vertex per octant of the plane normal
	outs  []int32   // removed vertices of the current cut
	cross []int32   // 4·vertex + slot of removed vertices on edges crossing the plane
	pend  []int32   // (new vertex, removed vertex, its slot) per cut edge
	mk    []bool    // visited slots (4 per vertex), for toPoly and measure
	ftag  []int32   // face tags, filled by measure
	farea []float64 // face areas, filled by measure
	rmax2 float64
}

// rot3 maps slot j to (j+2) mod 3, the slot that continues a face walk at
// the far end of an edge (indexed with j&3, so no bounds check).
var rot3 = [4]int32{2, 0, 1, 0}

// boxEd and boxFt are the edge graph of the starting box (see reset): the
// ed entries and, per slot, the index 0..5 of the wall tag.
var boxEd, boxFt = makeBoxTopo()

// makeBoxTopo builds the box graph of gcell.reset. Corner k is
// (k&1 ? hi : lo, k&2 ? hi : lo, k&4 ? hi : lo), its neighbours are k^1,
// k^2, k^4; the order x, y, z is counter-clockwise from outside when the
// corner has an odd number of hi coordinates, x, z, y otherwise.
func makeBoxTopo() (ed [8][4]int32, ft [8][4]int32) {
	var nbs [8][3]int32
	for k := 0; k < 8; k++ {
		nb := [3]int32{int32(k ^ 1), int32(k ^ 2), int32(k ^ 4)}
		if (k&1+k>>1&1+k>>2&1)%2 == 0 {
			nb[1], nb[2] = nb[2], nb[1]
		}
		nbs[k] = nb
		for m := 0; m < 3; m++ {
			// the face between the edges along axes a and b is the wall
			// normal to the third axis, on the side of corner k
			ax := bitAxis(nb[m]^int32(k)) + bitAxis(nb[(m+1)%3]^int32(k))
			c := 3 - ax
			ft[k][m] = int32(2*c + (k>>c)&1)
		}
	}
	for a := 0; a < 8; a++ {
		for m := 0; m < 3; m++ {
			b := nbs[a][m]
			for j := 0; j < 3; j++ {
				if nbs[b][j] == int32(a) {
					ed[a][m] = 4*b + int32(j)
				}
			}
		}
	}
	return ed, ft
}

// reset makes g the box [lo, hi] with faces −x, +x, −y, +y, −z, +z tagged
// tags[0..5] (corner numbering of makeBoxTopo).
func (g *gcell) reset(lo, hi [3]float64, tags [6]int32) {
	g.nv = 0
	g.reserve(8)
	g.nv = 8
	clear(g.up[:8])
	g.hint = [8]int32{}
	r := 0.0
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
		r2 := x*x + y*y + z*z
		g.v[k] = [4]float64{x, y, z, r2}
		r = max(r, r2)
		g.ed[k] = boxEd[k]
		f := boxFt[k]
		g.ft[k] = [4]int32{tags[f[0]%6], tags[f[1]%6], tags[f[2]%6], 0}
	}
	g.rmax2 = r
}

// bitAxis returns the axis 0, 1, 2 of the single bit b = 1, 2, 4.
func bitAxis(b int32) int {
	return int(b >> 1)
}

// reserve makes room for n vertices, keeping the first g.nv. The per-vertex
// slices always have their full capacity as length.
func (g *gcell) reserve(n int) {
	if len(g.s) >= n {
		return
	}
	c := max(2*n, 64)
	nv := g.nv
	g.v = append(g.v[:nv], make([][4]float64, c-nv)...)
	g.ed = append(g.ed[:nv], make([][4]int32, c-nv)...)
	g.ft = append(g.ft[:nv], make([][4]int32, c-nv)...)
	g.s = append(g.s[:nv], make([]float64, c-nv)...)
	g.up = append(g.up[:nv], make([]bool, c-nv)...)
}

func (g *gcell) updateRmax() {
	r := 0.0
	for k := range g.v[:g.nv] {
		r = max(r, g.v[k][3])
	}
	g.rmax2 = r
}

// clip keeps the half-space n·x ≤ off with the tolerance rule of poly.clip
// (a vertex within tol of the plane is on it). It returns clipNone, clipCut,
// clipEmpty, or clipDegenerate, leaving g unchanged, when a vertex next to
// a removed one lies on the plane.
func (g *gcell) clip(nx, ny, nz, off, tol float64, tag int32) int {
	nv := g.nv
	v, ed, s, up := g.v[:nv], g.ed[:nv], g.s[:nv], g.up[:nv]
	// Climb to a vertex of largest n·x, from where the last climb for a
	// normal in the same octant ended: on a convex polyhedron a vertex
	// with no higher neighbour is a highest vertex. (Finer classes, such
	// as the 48 cones of octant and order of |nx|, |ny|, |nz|, made the
	// climbs longer, 3.1 against 2.7 rounds of the loop below per plane
	// for 20000 uniform points, because each hint is refreshed less
	// often; a single hint took 3.7.)
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
	a := g.hint[o&7]
	if int(a) >= nv {
		a = 0
	}
	va := &v[a]
	sa := nx*va[0] + ny*va[1] + nz*va[2] - off
	for {
		// All three neighbours are evaluated, the one just left too: it is
		// lower than a, so it never wins, and no back slot need be kept.
		e := &ed[a]
		b0, b1, b2 := e[0]>>2, e[1]>>2, e[2]>>2
		v0, v1, v2 := &v[b0], &v[b1], &v[b2]
		d0 := nx*v0[0] + ny*v0[1] + nz*v0[2] - off
		d1 := nx*v1[0] + ny*v1[1] + nz*v1[2] - off
		d2 := nx*v2[0] + ny*v2[1] + nz*v2[2] - off
		m := max(d0, d1, d2)
		if !(m > sa) {
			break
		}
		b := b0
		if d1 >= m {
			b = b1
		}
		if d2 >= m {
			b = b2
		}
		a, sa = b, m
	}
	g.hint[o&7] = a
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
		maxr2 = max(maxr2, v[x][3])
		e := &ed[x]
		for m := int32(0); m < 3; m++ {
			b := e[m] >> 2
			if up[b] {
				continue
			}
			vb := &v[b]
			d := nx*vb[0] + ny*vb[1] + nz*vb[2] - off
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
				cross = append(cross, 4*x+m)
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
	n := nv + nnew
	v, ed, s, up = g.v[:n], g.ed[:n], g.s[:n], g.up[:n]
	ft := g.ft[:n]
	// new vertices on the cut edges: slot 0 back to the kept end b, slot 1
	// along face (b, j−1), slot 2 along face (b, j); faces (w, 0), (w, 1),
	// (w, 2) are (b, j−1), the cap and (b, j).
	w := int32(nv)
	pend := g.pend[:0]
	for _, c := range cross {
		a, m := c>>2, c&3
		x := ed[a][m]
		b, j := x>>2, x&3
		sb, sa := s[b], s[a]
		t := sb / (sb - sa)
		vb, va := &v[b], &v[a]
		px := vb[0] + t*(va[0]-vb[0])
		py := vb[1] + t*(va[1]-vb[1])
		pz := vb[2] + t*(va[2]-vb[2])
		v[w] = [4]float64{px, py, pz, px*px + py*py + pz*pz}
		up[w] = false
		ed[w][0] = x
		ed[b][j] = 4 * w
		fb := &ft[b]
		ft[w] = [4]int32{fb[rot3[j]], tag, fb[j], 0}
		pend = append(pend, w, a, m)
		w++
	}
	g.pend = pend
	// link the cap: from the new vertex on edge (b, j) → a, walk face (b, j)
	// through removed vertices until it re-enters the kept part.
	for k := 0; k+2 < len(pend); k += 3 {
		w, cur, sl := pend[k], pend[k+1], rot3[pend[k+2]&3]
		for {
			e := ed[cur][sl&3]
			x, back := e>>2, e&3
			if up[x] {
				cur, sl = x, rot3[back]
				continue
			}
			w2 := ed[x][back] >> 2
			ed[w][2] = 4*w2 + 1
			ed[w2][1] = 4*w + 2
			break
		}
	}
	// remove the cut-off vertices, moving kept ones from the end into the holes
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
	ed := g.ed
	g.v[to] = g.v[from]
	g.up[to] = g.up[from]
	e := ed[from]
	ed[to] = e
	g.ft[to] = g.ft[from]
	for k := int32(0); k < 3; k++ {
		x := e[k]
		ed[x>>2][x&3] = 4*int32(to) + k
	}
}

// toPoly writes g as a face-list poly (faces counter-clockwise from
// outside), for measuring or for continuing with degenerate cuts.
func (g *gcell) toPoly(p *poly) {
	nv := g.nv
	p.v = p.v[:0]
	for _, x := range g.v[:nv] {
		p.v = append(p.v, x[0], x[1], x[2])
	}
	p.fs, p.fl, p.ftag, p.fv = p.fs[:0], p.fl[:0], p.ftag[:0], p.fv[:0]
	if cap(g.mk) < 4*nv {
		g.mk = make([]bool, 4*nv, 8*nv)
	}
	marks := g.mk[:4*nv]
	clear(marks)
	for a := 0; a < nv; a++ {
		for k := int32(0); k < 3; k++ {
			if marks[4*a+int(k)] {
				continue
			}
			p.fs = append(p.fs, int32(len(p.fv)))
			p.ftag = append(p.ftag, g.ft[a][k])
			cur, sl := int32(a), k
			ln := int32(0)
			for !marks[4*cur+sl] {
				marks[4*cur+sl] = true
				p.fv = append(p.fv, cur)
				ln++
				e := g.ed[cur][sl&3]
				cur, sl = e>>2, rot3[e&3]
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
	v, ed := g.v[:nv], g.ed[:nv]
	var rx, ry, rz float64
	for k := range v {
		rx += v[k][0]
		ry += v[k][1]
		rz += v[k][2]
	}
	inv := 1 / float64(nv)
	rx, ry, rz = rx*inv, ry*inv, rz*inv
	if cap(g.mk) < 4*nv {
		g.mk = make([]bool, 4*nv, 8*nv)
	}
	marks := g.mk[:4*nv]
	clear(marks)
	var sx, sy, sz float64
	for a0 := range v {
		for k0 := int32(0); k0 < 3; k0++ {
			if marks[4*a0+int(k0)] {
				continue
			}
			marks[4*a0+int(k0)] = true
			x0, y0, z0 := v[a0][0]-rx, v[a0][1]-ry, v[a0][2]-rz
			// second vertex, then the fan over the rest of the face
			e := ed[a0][k0]
			b := e >> 2
			sl := rot3[e&3]
			marks[4*b+sl] = true
			x1, y1, z1 := v[b][0]-rx, v[b][1]-ry, v[b][2]-rz
			var Ax, Ay, Az, fvol, fx, fy, fz float64
			for {
				e := ed[b][sl&3]
				c := e >> 2
				if int(c) == a0 {
					break
				}
				b, sl = c, rot3[e&3]
				marks[4*c+sl] = true
				vc := &v[c]
				x2, y2, z2 := vc[0]-rx, vc[1]-ry, vc[2]-rz
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
			g.ftag = append(g.ftag, g.ft[a0][k0])
			g.farea = append(g.farea, 0.5*math.Sqrt(Ax*Ax+Ay*Ay+Az*Az))
		}
	}
	if vol <= 0 {
		return 0, [3]float64{rx, ry, rz}
	}
	cen = [3]float64{rx + sx/(4*vol), ry + sy/(4*vol), rz + sz/(4*vol)}
	return vol / 6, cen
}
