package transport

import (
	"math"
	"slices"

	"github.com/filigree-survey/filigree/reconstruct/laguerre"
)

// polytope rebuilds one Laguerre cell from its facet list to integrate
// |x − y_i|² over it, which package laguerre does not report. The cell is
// the start domain (the box, or in periodic mode the cube of side Hi − Lo
// centred on y_i) cut by the power bisectors of the neighbours laguerre
// lists, since those are exactly its facets (Aurenhammer 1987). Faces are
// convex polygons kept in boundary order; a cut clips every face
// (Sutherland & Hodgman 1974) and closes the hole with a cap polygon whose
// vertices are sorted by angle about their mean. Coordinates are relative to
// y_i. The buffers are reused from cell to cell.
type polytope struct {
	planes []plane
	ds     []float64
	faces  [][][3]float64
	spare  [][][3]float64
	cap    [][3]float64
	ang    []float64
	ord    []int
}

// plane is the half-space n·x ≤ off (n a unit vector).
type plane struct {
	n   [3]float64
	off float64
}

// reset makes p the box [lo, hi] (relative coordinates).
func (p *polytope) reset(lo, hi [3]float64) {
	p.spare = append(p.spare, p.faces...)
	p.faces = p.faces[:0]
	c := func(i, j, k int) [3]float64 {
		v := [3]float64{lo[0], lo[1], lo[2]}
		if i == 1 {
			v[0] = hi[0]
		}
		if j == 1 {
			v[1] = hi[1]
		}
		if k == 1 {
			v[2] = hi[2]
		}
		return v
	}
	for _, q := range [6][4][3]int{
		{{0, 0, 0}, {0, 1, 0}, {0, 1, 1}, {0, 0, 1}},
		{{1, 0, 0}, {1, 1, 0}, {1, 1, 1}, {1, 0, 1}},
		{{0, 0, 0}, {1, 0, 0}, {1, 0, 1}, {0, 0, 1}},
		{{0, 1, 0}, {1, 1, 0}, {1, 1, 1}, {0, 1, 1}},
		{{0, 0, 0}, {1, 0, 0}, {1, 1, 0}, {0, 1, 0}},
		{{0, 0, 1}, {1, 0, 1}, {1, 1, 1}, {0, 1, 1}},
	} {
		f := p.newFace()
		for _, v := range q {
			f = append(f, c(v[0], v[1], v[2]))
		}
		p.faces = append(p.faces, f)
	}
}

func (p *polytope) newFace() [][3]float64 {
	if k := len(p.spare); k > 0 {
		f := p.spare[k-1][:0]
		p.spare = p.spare[:k-1]
		return f
	}
	return make([][3]float64, 0, 8)
}

// clip keeps the part of the polytope with n·x ≤ off (n a unit vector);
// points within eps of the plane count as on it.
func (p *polytope) clip(n [3]float64, off, eps float64) {
	// Signed distances of all vertices, once, snapped to 0 within eps. A
	// plane with no vertex beyond it at most touches the polytope and
	// changes nothing.
	p.ds = p.ds[:0]
	cuts := false
	for _, f := range p.faces {
		for _, v := range f {
			d := n[0]*v[0] + n[1]*v[1] + n[2]*v[2] - off
			if math.Abs(d) <= eps {
				d = 0
			}
			cuts = cuts || d > 0
			p.ds = append(p.ds, d)
		}
	}
	if !cuts {
		return
	}
	p.cap = p.cap[:0]
	out := p.faces[:0]
	base := 0
	for _, f := range p.faces {
		ds := p.ds[base : base+len(f)]
		base += len(f)
		inside := true
		for _, d := range ds {
			if d >= 0 {
				inside = false
				break
			}
		}
		if inside { // strictly inside: kept as it is
			out = append(out, f)
			continue
		}
		g := p.newFace()
		for k := range f {
			k1 := k + 1
			if k1 == len(f) {
				k1 = 0
			}
			a, b := f[k], f[k1]
			da, db := ds[k], ds[k1]
			if da <= 0 {
				g = append(g, a)
				if da == 0 {
					p.cap = append(p.cap, a)
				}
			}
			if (da < 0 && db > 0) || (da > 0 && db < 0) {
				t := da / (da - db)
				x := [3]float64{a[0] + t*(b[0]-a[0]), a[1] + t*(b[1]-a[1]), a[2] + t*(b[2]-a[2])}
				g = append(g, x)
				p.cap = append(p.cap, x)
			}
		}
		p.spare = append(p.spare, f)
		if len(g) >= 3 {
			out = append(out, g)
		} else {
			p.spare = append(p.spare, g)
		}
	}
	p.faces = out
	if len(p.cap) < 3 {
		return
	}
	// Order the cap by angle about its mean in a basis of the plane.
	var m [3]float64
	for _, v := range p.cap {
		for a := 0; a < 3; a++ {
			m[a] += v[a]
		}
	}
	for a := 0; a < 3; a++ {
		m[a] /= float64(len(p.cap))
	}
	e1 := [3]float64{1, 0, 0}
	if math.Abs(n[0]) > 0.9 {
		e1 = [3]float64{0, 1, 0}
	}
	d := e1[0]*n[0] + e1[1]*n[1] + e1[2]*n[2]
	for a := 0; a < 3; a++ {
		e1[a] -= d * n[a]
	}
	l := math.Sqrt(e1[0]*e1[0] + e1[1]*e1[1] + e1[2]*e1[2])
	for a := 0; a < 3; a++ {
		e1[a] /= l
	}
	e2 := [3]float64{n[1]*e1[2] - n[2]*e1[1], n[2]*e1[0] - n[0]*e1[2], n[0]*e1[1] - n[1]*e1[0]}
	p.ang, p.ord = p.ang[:0], p.ord[:0]
	for k, v := range p.cap {
		var r [3]float64
		for a := 0; a < 3; a++ {
			r[a] = v[a] - m[a]
		}
		p.ang = append(p.ang, math.Atan2(r[0]*e2[0]+r[1]*e2[1]+r[2]*e2[2], r[0]*e1[0]+r[1]*e1[1]+r[2]*e1[2]))
		p.ord = append(p.ord, k)
	}
	slices.SortFunc(p.ord, func(a, b int) int {
		if p.ang[a] < p.ang[b] {
			return -1
		}
		if p.ang[a] > p.ang[b] {
			return 1
		}
		return a - b
	})
	g := p.newFace()
	for _, k := range p.ord {
		g = append(g, p.cap[k])
	}
	p.faces = append(p.faces, g)
}

// moment returns the volume of the polytope and ∫|x|² over it (x relative
// to y_i), from tetrahedra joining the vertex mean to a fan of every face:
// for a tetrahedron with vertices v_0..v_3 and volume V,
// ∫|x|² dx = V/20 (Σ_k |v_k|² + |Σ_k v_k|²) (the exact second moment of a
// simplex; from memory: Tonon 2004, J. Math. Stat. 1, 8; checked by the
// cube cells of TestLatticeZeroDisplacement, n·h⁵/4 to 1e-9).
func (p *polytope) moment() (vol, m2 float64) {
	var c [3]float64
	cnt := 0
	for _, f := range p.faces {
		for _, v := range f {
			for a := 0; a < 3; a++ {
				c[a] += v[a]
			}
			cnt++
		}
	}
	if cnt == 0 {
		return 0, 0
	}
	for a := 0; a < 3; a++ {
		c[a] /= float64(cnt)
	}
	sq := func(v [3]float64) float64 { return v[0]*v[0] + v[1]*v[1] + v[2]*v[2] }
	for _, f := range p.faces {
		for k := 1; k+1 < len(f); k++ {
			a, b, d := f[0], f[k], f[k+1]
			var u, v, w [3]float64
			for t := 0; t < 3; t++ {
				u[t], v[t], w[t] = a[t]-c[t], b[t]-c[t], d[t]-c[t]
			}
			V := math.Abs(u[0]*(v[1]*w[2]-v[2]*w[1])-u[1]*(v[0]*w[2]-v[2]*w[0])+u[2]*(v[0]*w[1]-v[1]*w[0])) / 6
			if V == 0 {
				continue
			}
			var s [3]float64
			for t := 0; t < 3; t++ {
				s[t] = a[t] + b[t] + d[t] + c[t]
			}
			vol += V
			m2 += V / 20 * (sq(a) + sq(b) + sq(d) + sq(c) + sq(s))
		}
	}
	return vol, m2
}

// cellCost returns ∫_{L_i} |x − y_i|² dx for cell i, rebuilt from its
// facets; s is the mean point spacing, which sets the on-plane tolerance.
func (p *polytope) cellCost(i int, y, psi []float64, cells *laguerre.Cells, opt Options, s float64) float64 {
	if cells.Volume[i] <= 0 {
		return 0
	}
	var lo, hi [3]float64
	for a := 0; a < 3; a++ {
		if opt.Periodic {
			L := opt.Hi[a] - opt.Lo[a]
			lo[a], hi[a] = -L/2, L/2
		} else {
			lo[a], hi[a] = opt.Lo[a]-y[3*i+a], opt.Hi[a]-y[3*i+a]
		}
	}
	p.reset(lo, hi)
	// Cut nearest planes first: the polytope then shrinks to about the
	// cell at once and later cuts touch few vertices.
	p.planes = p.planes[:0]
	for k := cells.NbrStart[i]; k < cells.NbrStart[i+1]; k++ {
		j := int(cells.Nbr[k])
		var u [3]float64
		d2 := 0.0
		for a := 0; a < 3; a++ {
			u[a] = y[3*j+a] - y[3*i+a]
			if opt.Periodic {
				L := opt.Hi[a] - opt.Lo[a]
				u[a] -= L * math.Round(u[a]/L)
			}
			d2 += u[a] * u[a]
		}
		d := math.Sqrt(d2)
		for a := 0; a < 3; a++ {
			u[a] /= d
		}
		// Power bisector: (x − y_i)·u ≤ (d² + ψ_i − ψ_j)/(2d).
		p.planes = append(p.planes, plane{u, (d2 + psi[i] - psi[j]) / (2 * d)})
	}
	for a := 1; a < len(p.planes); a++ { // insertion sort: about 15 planes
		q := p.planes[a]
		b := a
		for b > 0 && p.planes[b-1].off > q.off {
			p.planes[b] = p.planes[b-1]
			b--
		}
		p.planes[b] = q
	}
	for _, q := range p.planes {
		p.clip(q.n, q.off, 1e-11*s)
	}
	_, m2 := p.moment()
	return m2
}
