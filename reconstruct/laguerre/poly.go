package laguerre

import (
	"math"
	"sort"
)

// Vertex classes with respect to a clipping plane.
const (
	clsIn  int8 = -1 // strictly inside the kept half-space (s < −tol)
	clsOn  int8 = 0  // within tol of the plane; kept, never moved
	clsOut int8 = 1  // strictly outside (s > tol); removed
)

// clip results.
const (
	clipNone  = 0 // plane does not cut the polyhedron
	clipCut   = 1 // polyhedron was cut
	clipEmpty = 2 // nothing strictly inside remains
)

// wallTag marks faces that come from the starting box: box walls in clipped
// mode, planes to the point's own periodic images in periodic mode.
const wallTag int32 = -1

// poly is a convex polyhedron stored as a flat vertex array and faces given
// as vertex cycles, all faces oriented counter-clockwise seen from outside.
// Coordinates are relative to the generating point, which keeps the plane
// offsets small and well conditioned. Every buffer is reused between cells,
// so clipping does not allocate once the buffers have grown.
type poly struct {
	v    []float64 // 3 per vertex
	dist []float64 // signed distance to the current plane, per vertex
	cls  []int8    // class per vertex

	fs, fl []int32 // face start in fv, face length
	ftag   []int32 // face tag: neighbour index or wallTag
	fv     []int32 // face vertex cycles

	// double buffers for the clipped faces and renumbered vertices
	fs2, fl2, ftag2, fv2 []int32
	v2                   []float64
	remap                []int32

	edges []int32 // (a, b, new vertex) for edges cut by the current plane
	segs  []int32 // (entry, exit) pairs of the cap polygon
	capv  []int32
	ang   []angVert
	farea []float64 // face areas, filled by measure

	rmax2     float64 // max squared distance of a vertex from the origin
	fallbacks int     // number of caps ordered by angle (diagnostics)
	calls     int     // clip calls (diagnostics)
	cuts      int     // clip calls that cut (diagnostics)
}

type angVert struct {
	a float64
	v int32
}

// boxFaces lists the faces of a box whose corner k has coordinates
// (k&1 ? hi : lo, k&2 ? hi : lo, k&4 ? hi : lo), counter-clockwise from outside.
var boxFaces = [6][4]int32{
	{0, 4, 6, 2}, // −x
	{1, 3, 7, 5}, // +x
	{0, 1, 5, 4}, // −y
	{2, 6, 7, 3}, // +y
	{0, 2, 3, 1}, // −z
	{4, 5, 7, 6}, // +z
}

// reset makes p the box [lo, hi] (relative coordinates) with all faces tagged wallTag.
func (p *poly) reset(lo, hi [3]float64) {
	p.v = p.v[:0]
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
		p.v = append(p.v, x, y, z)
	}
	p.fs, p.fl, p.ftag, p.fv = p.fs[:0], p.fl[:0], p.ftag[:0], p.fv[:0]
	for f := range boxFaces {
		p.fs = append(p.fs, int32(len(p.fv)))
		p.fl = append(p.fl, 4)
		p.ftag = append(p.ftag, wallTag)
		p.fv = append(p.fv, boxFaces[f][:]...)
	}
	p.updateRmax()
}

func (p *poly) updateRmax() {
	r := 0.0
	v := p.v
	for k := 0; k+2 < len(v); k += 3 {
		d := v[k]*v[k] + v[k+1]*v[k+1] + v[k+2]*v[k+2]
		if d > r {
			r = d
		}
	}
	p.rmax2 = r
}

// edgeVertex returns the (new) id of the vertex where the plane crosses the
// edge (a, b) of old vertices, one end strictly inside and the other
// strictly outside. The point is computed from the lower-numbered end so
// both faces sharing the edge get the same vertex, bit for bit.
func (p *poly) edgeVertex(a, b int32) int32 {
	if a > b {
		a, b = b, a
	}
	for k := 0; k < len(p.edges); k += 3 {
		if p.edges[k] == a && p.edges[k+1] == b {
			return p.edges[k+2]
		}
	}
	da, db := p.dist[a], p.dist[b]
	t := da / (da - db) // da and db have opposite signs beyond ±tol: t in (0, 1)
	id := int32(len(p.v2) / 3)
	ax, ay, az := p.v[3*a], p.v[3*a+1], p.v[3*a+2]
	x, y, z := ax+t*(p.v[3*b]-ax), ay+t*(p.v[3*b+1]-ay), az+t*(p.v[3*b+2]-az)
	p.v2 = append(p.v2, x, y, z)
	if d := x*x + y*y + z*z; d > p.rmax2 {
		p.rmax2 = d
	}
	p.edges = append(p.edges, a, b, id)
	return id
}

// ren returns the new id of the kept old vertex x, copying it on first use.
// Hot loops test p.remap themselves and call ren only on a miss.
func (p *poly) ren(x int32) int32 {
	id := p.remap[x]
	if id < 0 {
		id = int32(len(p.v2) / 3)
		p.remap[x] = id
		a, b, c := p.v[3*x], p.v[3*x+1], p.v[3*x+2]
		p.v2 = append(p.v2, a, b, c)
		if d := a*a + b*b + c*c; d > p.rmax2 {
			p.rmax2 = d
		}
	}
	return id
}

// clip keeps the half-space n·x ≤ off. Vertices within tol (in units of n·x)
// of the plane count as on it and are kept unmoved; this is what makes exact
// degeneracies (several planes through one vertex or edge) harmless: such a
// plane removes nothing and creates no face. tag is stored on the new face.
func (p *poly) clip(nx, ny, nz, off, tol float64, tag int32) int {
	nv := len(p.v) / 3
	p.calls++
	v := p.v[:3*nv]
	// Most candidate planes miss the cell: find that out with a plain
	// maximum before classifying.
	if cap(p.dist) < nv {
		p.dist = make([]float64, nv, 2*nv)
		p.cls = make([]int8, nv, 2*nv)
	}
	p.dist, p.cls = p.dist[:nv], p.cls[:nv]
	dist := p.dist
	smax := math.Inf(-1)
	for k := range dist {
		s := nx*v[3*k] + ny*v[3*k+1] + nz*v[3*k+2]
		dist[k] = s
		smax = max(smax, s)
	}
	if smax-off <= tol {
		return clipNone
	}
	nin, nout := 0, 0
	for k, s := range dist {
		s -= off
		dist[k] = s
		switch {
		case s > tol:
			p.cls[k] = clsOut
			nout++
		case s < -tol:
			p.cls[k] = clsIn
			nin++
		default:
			p.cls[k] = clsOn
		}
	}
	if nout == 0 {
		return clipNone
	}
	if nin == 0 {
		return clipEmpty
	}
	p.cuts++
	// Rebuild the faces into the second buffers, renumbering the kept
	// vertices into v2 on first use (which also drops removed vertices).
	p.edges, p.segs = p.edges[:0], p.segs[:0]
	p.fs2, p.fl2, p.ftag2, p.fv2 = p.fs2[:0], p.fl2[:0], p.ftag2[:0], p.fv2[:0]
	if cap(p.remap) < nv {
		p.remap = make([]int32, nv, 2*nv)
	}
	p.remap = p.remap[:nv]
	for k := range p.remap {
		p.remap[k] = -1
	}
	p.v2 = p.v2[:0]
	p.rmax2 = 0
	cls := p.cls
	for f := range p.fs {
		start, ln := p.fs[f], p.fl[f]
		vs := p.fv[start : start+ln]
		var seen int8 // bit 1: in, bit 2: on, bit 4: out
		for _, x := range vs {
			seen |= 1 << uint8(cls[x]+1)
		}
		if seen&4 == 0 {
			p.fs2 = append(p.fs2, int32(len(p.fv2)))
			p.fl2 = append(p.fl2, ln)
			p.ftag2 = append(p.ftag2, p.ftag[f])
			remap := p.remap
			for _, x := range vs {
				id := remap[x]
				if id < 0 {
					id = p.ren(x)
				}
				p.fv2 = append(p.fv2, id)
			}
			continue
		}
		if seen&3 == 0 {
			continue // entirely outside
		}
		k0 := 0
		for cls[vs[k0]] == clsOut {
			k0++
		}
		newStart := len(p.fv2)
		exit := int32(-1)
		n := int(ln)
		for m := 0; m < n; m++ {
			i0 := k0 + m
			if i0 >= n {
				i0 -= n
			}
			i1 := i0 + 1
			if i1 >= n {
				i1 -= n
			}
			cur, nxt := vs[i0], vs[i1]
			cc, cn := cls[cur], cls[nxt]
			if cc != clsOut {
				id := p.remap[cur]
				if id < 0 {
					id = p.ren(cur)
				}
				p.fv2 = append(p.fv2, id)
				if cn == clsOut {
					if cc == clsIn {
						exit = p.edgeVertex(cur, nxt)
						p.fv2 = append(p.fv2, exit)
					} else {
						exit = id
					}
				}
			} else if cn != clsOut {
				var entry int32
				if cn == clsIn {
					entry = p.edgeVertex(cur, nxt)
					p.fv2 = append(p.fv2, entry)
				} else {
					entry = p.ren(nxt)
				}
				if entry != exit && exit >= 0 {
					p.segs = append(p.segs, entry, exit)
				}
			}
		}
		if len(p.fv2)-newStart >= 3 && seen&1 != 0 {
			p.fs2 = append(p.fs2, int32(newStart))
			p.fl2 = append(p.fl2, int32(len(p.fv2)-newStart))
			p.ftag2 = append(p.ftag2, p.ftag[f])
		} else {
			p.fv2 = p.fv2[:newStart]
		}
	}
	p.v, p.v2 = p.v2, p.v // new vertices, used by buildCap's fallback
	p.buildCap(nx, ny, nz)
	if len(p.capv) >= 3 {
		p.fs2 = append(p.fs2, int32(len(p.fv2)))
		p.fl2 = append(p.fl2, int32(len(p.capv)))
		p.ftag2 = append(p.ftag2, tag)
		p.fv2 = append(p.fv2, p.capv...)
	}
	p.fs, p.fs2 = p.fs2, p.fs
	p.fl, p.fl2 = p.fl2, p.fl
	p.ftag, p.ftag2 = p.ftag2, p.ftag
	p.fv, p.fv2 = p.fv2, p.fv
	if len(p.fs) < 4 {
		return clipEmpty
	}
	return clipCut
}

// buildCap orders the cap polygon. The cap edges are the (entry, exit) pairs
// left by the clipped faces; with a consistent face orientation they chain
// into one cycle. If rounding broke that chain (never seen in the tests, but
// cheap to guard), the distinct cap vertices are sorted by angle in the plane
// instead, which is valid because the cap is convex.
func (p *poly) buildCap(nx, ny, nz float64) {
	p.capv = p.capv[:0]
	s := p.segs
	if len(s) < 4 {
		return
	}
	first := s[0]
	cur := s[1]
	p.capv = append(p.capv, first)
	s[0], s[1] = s[len(s)-2], s[len(s)-1]
	s = s[:len(s)-2]
	ok := true
	for cur != first {
		found := -1
		for k := 0; k < len(s); k += 2 {
			if s[k] == cur {
				found = k
				break
			}
		}
		if found < 0 {
			ok = false
			break
		}
		p.capv = append(p.capv, cur)
		cur = s[found+1]
		s[found], s[found+1] = s[len(s)-2], s[len(s)-1]
		s = s[:len(s)-2]
	}
	if ok && len(s) == 0 {
		return
	}
	p.angularCap(nx, ny, nz)
}

func (p *poly) angularCap(nx, ny, nz float64) {
	p.fallbacks++
	p.ang = p.ang[:0]
	for _, x := range p.segs {
		dup := false
		for _, a := range p.ang {
			if a.v == x {
				dup = true
				break
			}
		}
		if !dup {
			p.ang = append(p.ang, angVert{v: x})
		}
	}
	p.capv = p.capv[:0]
	if len(p.ang) < 3 {
		return
	}
	var cx, cy, cz float64
	for _, a := range p.ang {
		cx += p.v[3*a.v]
		cy += p.v[3*a.v+1]
		cz += p.v[3*a.v+2]
	}
	inv := 1 / float64(len(p.ang))
	cx, cy, cz = cx*inv, cy*inv, cz*inv
	// basis (e1, e2) of the plane with e1 × e2 along n, so increasing angle
	// is counter-clockwise seen from outside (the side n points to).
	var ax, ay, az float64
	if math.Abs(nx) < math.Abs(ny) && math.Abs(nx) < math.Abs(nz) {
		ax = 1
	} else if math.Abs(ny) < math.Abs(nz) {
		ay = 1
	} else {
		az = 1
	}
	e1x, e1y, e1z := ay*nz-az*ny, az*nx-ax*nz, ax*ny-ay*nx
	e2x, e2y, e2z := ny*e1z-nz*e1y, nz*e1x-nx*e1z, nx*e1y-ny*e1x
	for k := range p.ang {
		x := p.ang[k].v
		dx, dy, dz := p.v[3*x]-cx, p.v[3*x+1]-cy, p.v[3*x+2]-cz
		p.ang[k].a = math.Atan2(dx*e2x+dy*e2y+dz*e2z, dx*e1x+dy*e1y+dz*e1z)
	}
	sort.Slice(p.ang, func(i, j int) bool { return p.ang[i].a < p.ang[j].a })
	for _, a := range p.ang {
		p.capv = append(p.capv, a.v)
	}
}

// measure returns the volume and the centroid (relative coordinates) of p,
// and stores the area of every face in p.farea. The polyhedron is cut into
// pyramids from the vertex mean r (inside, by convexity) to each face, and
// each pyramid into tetrahedra by fanning the face from its first vertex.
// Orientation is not relied on: each face's sign is taken from its area
// vector against v0 − r.
func (p *poly) measure() (vol float64, cen [3]float64) {
	p.farea = p.farea[:0]
	nv := len(p.v) / 3
	if nv == 0 {
		return 0, cen
	}
	var rx, ry, rz float64
	for k := 0; k < nv; k++ {
		rx += p.v[3*k]
		ry += p.v[3*k+1]
		rz += p.v[3*k+2]
	}
	inv := 1 / float64(nv)
	rx, ry, rz = rx*inv, ry*inv, rz*inv
	var sx, sy, sz float64
	for f := range p.fs {
		vs := p.fv[p.fs[f] : p.fs[f]+p.fl[f]]
		a0 := vs[0]
		x0, y0, z0 := p.v[3*a0]-rx, p.v[3*a0+1]-ry, p.v[3*a0+2]-rz
		var Ax, Ay, Az float64
		var fvol, fx, fy, fz float64
		for m := 1; m+1 < len(vs); m++ {
			b, c := vs[m], vs[m+1]
			x1, y1, z1 := p.v[3*b]-rx, p.v[3*b+1]-ry, p.v[3*b+2]-rz
			x2, y2, z2 := p.v[3*c]-rx, p.v[3*c+1]-ry, p.v[3*c+2]-rz
			ux, uy, uz := x1-x0, y1-y0, z1-z0
			wx, wy, wz := x2-x0, y2-y0, z2-z0
			cx, cy, cz := uy*wz-uz*wy, uz*wx-ux*wz, ux*wy-uy*wx
			Ax += cx
			Ay += cy
			Az += cz
			t := cx*x0 + cy*y0 + cz*z0 // 6 × signed tetra volume (r, v0, v1, v2)
			fvol += t
			fx += t * (x0 + x1 + x2)
			fy += t * (y0 + y1 + y2)
			fz += t * (z0 + z1 + z2)
		}
		if Ax*x0+Ay*y0+Az*z0 < 0 {
			fvol, fx, fy, fz = -fvol, -fx, -fy, -fz
		}
		vol += fvol
		sx += fx
		sy += fy
		sz += fz
		p.farea = append(p.farea, 0.5*math.Sqrt(Ax*Ax+Ay*Ay+Az*Az))
	}
	if vol <= 0 {
		return 0, [3]float64{rx, ry, rz}
	}
	// tetra centroid is (r + v0 + v1 + v2)/4 = r + (v0' + v1' + v2')/4 in shifted coordinates
	cen = [3]float64{rx + sx/(4*vol), ry + sy/(4*vol), rz + sz/(4*vol)}
	return vol / 6, cen
}
