// Package groups finds galaxy groups in redshift space with a
// friends-of-friends (FoF) percolation algorithm (Huchra & Geller 1982,
// ApJ 257, 423) with separate transverse and line-of-sight linking lengths
// that scale with the local mean galaxy separation, measures the groups,
// and compresses their fingers of god.
package groups

import (
	"errors"
	"fmt"
	"math"
	"slices"
	"sort"
	"sync"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/internal/parallel"
)

// Default linking lengths in units of the local mean separation n^(−1/3).
// From memory: Berlind et al. 2006 (ApJS 167, 1) chose b⊥ = 0.14 and
// b∥ = 0.75 for SDSS groups to recover the multiplicity function and the
// projected sizes and velocity dispersions of haloes in mocks; Eke et al.
// 2004 (MNRAS 348, 866) used b⊥ = 0.13, b∥ = 1.43 for 2dFGRS (with a
// larger ratio because of that survey's redshift errors).
const (
	DefaultBPerp = 0.14
	DefaultBPar  = 0.75
)

// Options set the linking.
type Options struct {
	// BPerp and BPar are the transverse and line-of-sight linking lengths
	// in units of the local mean separation; 0 selects the defaults.
	BPerp, BPar float64
}

// Groups is a partition of the galaxies into groups (singletons included).
type Groups struct {
	// ID is the group of each galaxy, 0 … NumGroups−1, numbered in the
	// order of each group's first (lowest-index) member.
	ID []int32
	// Size is the number of members of each group.
	Size []int32
	// Members lists the galaxies of group g as Members[Start[g]:Start[g+1]],
	// in increasing order.
	Start   []int32
	Members []int32
}

// NumGroups returns the number of groups, singletons included.
func (g *Groups) NumGroups() int { return len(g.Size) }

// Find links galaxy i and j when, with s = (s_i + s_j)/2 the mean of their
// local mean separations (Mpc/h), their transverse separation r̄ θ_ij ≤
// BPerp·s and their line-of-sight separation |r_i − r_j| ≤ BPar·s, with r̄
// the mean of their comoving distances r (Mpc/h) and θ their angle; groups
// are the connected components. Scaling the lengths with the local
// separation treats a flux-limited sample consistently with depth. The
// neighbour search uses a grid of cubic cells as wide as the largest
// possible link, so the cost is near-linear for realistic samples; the
// result does not depend on the number of threads.
func Find(ra, dec, r, sep []float64, opt Options) (*Groups, error) {
	n := len(ra)
	if len(dec) != n || len(r) != n || len(sep) != n {
		panic("groups: Find: slice lengths differ")
	}
	if opt.BPerp == 0 {
		opt.BPerp = DefaultBPerp
	}
	if opt.BPar == 0 {
		opt.BPar = DefaultBPar
	}
	if !(opt.BPerp > 0) || !(opt.BPar > 0) || math.IsInf(opt.BPerp+opt.BPar, 0) {
		return nil, fmt.Errorf("groups: linking lengths b⊥ = %v, b∥ = %v: want positive numbers", opt.BPerp, opt.BPar)
	}
	u := make([]float64, 3*n)
	sMax := 0.0
	for i := 0; i < n; i++ {
		if !(r[i] >= 0) || math.IsInf(r[i], 0) || !(sep[i] > 0) || math.IsInf(sep[i], 0) {
			return nil, fmt.Errorf("groups: galaxy %d has distance %v and mean separation %v: want finite, positive values", i, r[i], sep[i])
		}
		a, d := ra[i]*math.Pi/180, dec[i]*math.Pi/180
		u[3*i], u[3*i+1], u[3*i+2] = math.Cos(d)*math.Cos(a), math.Cos(d)*math.Sin(a), math.Sin(d)
		sMax = math.Max(sMax, sep[i])
	}
	// Search cells: a partner j of i lies within |r_j − r_i| ≤ L∥ = b∥ s'
	// along the line of sight and, since r̄θ ≤ L⊥ = b⊥ s' and r_j ≤ 2r̄,
	// within 2 L⊥ of the ray through i (s' = (s_i + sMax)/2 bounds s). The
	// candidates are the points in the 3×3×3 cells around positions spaced
	// by one cell along that segment, with cells at least 2 L⊥ wide: a thin
	// tube, not a ball of radius L∥, because b∥ ≫ b⊥.
	if n == 0 {
		return &Groups{Start: []int32{0}}, nil
	}
	cells := newCellIndex(u, r, 2*opt.BPerp*sMax)
	// The galaxies are visited in cell order, and the candidates read from
	// copies of their direction, distance and separation in that order, so
	// that neighbouring searches share cache lines. The stamp arrays (one
	// int32 per cell) are reused between chunks: the marks, i+1, are
	// unique per galaxy.
	type point struct{ x, y, z, r, sep float64 }
	sorted := make([]point, n)
	for k, j := range cells.order {
		sorted[k] = point{u[3*j], u[3*j+1], u[3*j+2], r[j], sep[j]}
	}
	stamps := sync.Pool{New: func() any { return make([]int32, len(cells.start)-1) }}
	const chunk = 4096
	links := make([][]int32, (n+chunk-1)/chunk)
	parallel.For(n, chunk, func(lo, hi int) {
		var out []int32
		var seen []int
		stamp := stamps.Get().([]int32)
		defer stamps.Put(stamp)
		for k := lo; k < hi; k++ {
			i := cells.order[k]
			pi := sorted[k]
			lpar := opt.BPar * 0.5 * (pi.sep + sMax)
			seen = cells.tube(seen[:0], stamp, i+1, [3]float64{pi.x, pi.y, pi.z}, math.Max(0, pi.r-lpar), pi.r+lpar)
			for _, key := range seen {
				for m := cells.start[key]; m < cells.start[key+1]; m++ {
					j := cells.order[m]
					if j <= i {
						continue
					}
					pj := &sorted[m]
					s := 0.5 * (pi.sep + pj.sep)
					if math.Abs(pi.r-pj.r) > opt.BPar*s {
						continue
					}
					// Angle by the numerically safe atan2 of |u×v| and u·v.
					cx := pi.y*pj.z - pi.z*pj.y
					cy := pi.z*pj.x - pi.x*pj.z
					cz := pi.x*pj.y - pi.y*pj.x
					dot := pi.x*pj.x + pi.y*pj.y + pi.z*pj.z
					theta := math.Atan2(math.Sqrt(cx*cx+cy*cy+cz*cz), dot)
					if 0.5*(pi.r+pj.r)*theta <= opt.BPerp*s {
						out = append(out, i, j)
					}
				}
			}
		}
		links[lo/chunk] = out
	})
	parent := make([]int32, n)
	for i := range parent {
		parent[i] = int32(i)
	}
	var find func(int32) int32
	find = func(x int32) int32 {
		for parent[x] != x {
			parent[x] = parent[parent[x]]
			x = parent[x]
		}
		return x
	}
	for _, l := range links {
		for k := 0; k < len(l); k += 2 {
			a, b := find(l[k]), find(l[k+1])
			if a != b {
				if a < b {
					parent[b] = a
				} else {
					parent[a] = b
				}
			}
		}
	}
	return partition(n, func(i int) int32 { return find(int32(i)) }), nil
}

// partition numbers the groups by their lowest member.
func partition(n int, root func(int) int32) *Groups {
	g := &Groups{ID: make([]int32, n)}
	num := map[int32]int32{}
	for i := 0; i < n; i++ {
		rt := root(i)
		id, ok := num[rt]
		if !ok {
			id = int32(len(g.Size))
			num[rt] = id
			g.Size = append(g.Size, 0)
		}
		g.ID[i] = id
		g.Size[id]++
	}
	g.Start = make([]int32, len(g.Size)+1)
	for k, s := range g.Size {
		g.Start[k+1] = g.Start[k] + s
	}
	g.Members = make([]int32, n)
	fill := slices.Clone(g.Start[:len(g.Size)])
	for i, id := range g.ID {
		g.Members[fill[id]] = int32(i)
		fill[id]++
	}
	return g
}

// cellIndex buckets points into cubic cells for neighbour search.
type cellIndex struct {
	size  float64
	lo    [3]float64
	dim   [3]int
	start []int32 // per cell, into order
	order []int32
}

func newCellIndex(u, r []float64, size float64) *cellIndex {
	n := len(r)
	c := &cellIndex{size: size}
	c.lo = [3]float64{math.Inf(1), math.Inf(1), math.Inf(1)}
	hi := [3]float64{math.Inf(-1), math.Inf(-1), math.Inf(-1)}
	for i := 0; i < n; i++ {
		for a := 0; a < 3; a++ {
			x := r[i] * u[3*i+a]
			c.lo[a] = math.Min(c.lo[a], x)
			hi[a] = math.Max(hi[a], x)
		}
	}
	total := 1
	for a := 0; a < 3; a++ {
		c.dim[a] = max(1, int((hi[a]-c.lo[a])/size)+1)
		total *= c.dim[a]
	}
	// Far more cells than points wastes memory: coarsen if needed.
	for total > 8*n+64 {
		c.size *= 1.5
		total = 1
		for a := 0; a < 3; a++ {
			c.dim[a] = max(1, int((hi[a]-c.lo[a])/c.size)+1)
			total *= c.dim[a]
		}
	}
	key := make([]int32, n)
	c.start = make([]int32, total+1)
	for i := 0; i < n; i++ {
		k := c.key([3]float64{r[i] * u[3*i], r[i] * u[3*i+1], r[i] * u[3*i+2]})
		key[i] = int32(k)
		c.start[k+1]++
	}
	for k := 0; k < total; k++ {
		c.start[k+1] += c.start[k]
	}
	c.order = make([]int32, n)
	fill := slices.Clone(c.start[:total])
	for i, k := range key {
		c.order[fill[k]] = int32(i)
		fill[k]++
	}
	return c
}

func (c *cellIndex) coord(x [3]float64) [3]int {
	var q [3]int
	for a := 0; a < 3; a++ {
		q[a] = min(c.dim[a]-1, max(0, int((x[a]-c.lo[a])/c.size)))
	}
	return q
}

func (c *cellIndex) key(x [3]float64) int {
	q := c.coord(x)
	return (q[0]*c.dim[1]+q[1])*c.dim[2] + q[2]
}

// tube appends to keys (and returns, each once) the cells within one cell
// of the points r·u, r from r0 to r1 in steps of one cell: every point
// within a cell width of that segment lies in them. stamp[k] == mark
// marks cells already taken for this call (mark differs between calls).
func (c *cellIndex) tube(keys []int, stamp []int32, mark int32, u [3]float64, r0, r1 float64) []int {
	steps := int((r1-r0)/c.size) + 1
	for s := 0; s <= steps; s++ {
		r := math.Min(r1, r0+float64(s)*c.size)
		q := c.coord([3]float64{r * u[0], r * u[1], r * u[2]})
		for a := max(0, q[0]-1); a <= min(c.dim[0]-1, q[0]+1); a++ {
			for b := max(0, q[1]-1); b <= min(c.dim[1]-1, q[1]+1); b++ {
				base := (a*c.dim[1] + b) * c.dim[2]
				for k := max(0, q[2]-1); k <= min(c.dim[2]-1, q[2]+1); k++ {
					if stamp[base+k] != mark {
						stamp[base+k] = mark
						keys = append(keys, base+k)
					}
				}
			}
		}
	}
	return keys
}

// Group is the measured catalogue entry of one group.
type Group struct {
	// N is the number of members.
	N int
	// RA, Dec (degrees) are the direction of the mean of the members' unit
	// vectors; Z is the mean observed redshift.
	RA, Dec, Z float64
	// SigmaLOS is the line-of-sight velocity dispersion in km/s, from the
	// gapper estimator (Beers, Flynn & Gebhardt 1990, AJ 100, 32, eq. 2)
	// with the factor √(N/(N−1)), of rest-frame velocities
	// c (z_i − z̄)/(1 + z̄); 0 for N < 2.
	SigmaLOS float64
	// RProj is the rms projected distance of the members from the centre,
	// and RHarm the projected harmonic radius N(N−1)/(2 Σ_{i<j} 1/R_ij),
	// both in Mpc/h at the group's distance (0 for N < 2).
	RProj, RHarm float64
	// MassDyn is a crude dynamical mass (M_sun/h), the projected virial
	// estimator M = (3π/2) σ² R_H / G (Heisler, Tremaine & Bahcall 1985,
	// ApJ 298, 8, eq. 4 in its harmonic-radius form); 0 for N < 2.
	MassDyn float64
	// RLOS is the rms line-of-sight spread of the members' comoving
	// distances about their mean (Mpc/h).
	RLOS float64
}

// gravitational constant in (km/s)² Mpc/M_sun (CODATA 2018 G with the IAU
// 2015 nominal solar mass parameter: G M_sun = 1.3271244e20 m³/s²).
const gMpc = 1.3271244e20 / 1e6 / 3.0856775814913673e22 // (km/s)^2 Mpc / M_sun

// Measure returns the catalogue entry of every group (singletons
// included): centre, richness, velocity dispersion, radii and a
// dynamical mass. r are comoving distances in Mpc/h.
func Measure(g *Groups, ra, dec, z, r []float64) []Group {
	out := make([]Group, g.NumGroups())
	parallel.For(len(out), 256, func(lo, hi int) {
		for k := lo; k < hi; k++ {
			out[k] = measure(g.Members[g.Start[k]:g.Start[k+1]], ra, dec, z, r)
		}
	})
	return out
}

func measure(m []int32, ra, dec, z, r []float64) Group {
	n := len(m)
	var s [3]float64
	var zbar, rbar float64
	for _, i := range m {
		a, d := ra[i]*math.Pi/180, dec[i]*math.Pi/180
		s[0] += math.Cos(d) * math.Cos(a)
		s[1] += math.Cos(d) * math.Sin(a)
		s[2] += math.Sin(d)
		zbar += z[i]
		rbar += r[i]
	}
	zbar /= float64(n)
	rbar /= float64(n)
	norm := math.Sqrt(s[0]*s[0] + s[1]*s[1] + s[2]*s[2])
	gr := Group{N: n, Z: zbar}
	gr.RA = math.Atan2(s[1], s[0]) * 180 / math.Pi
	if gr.RA < 0 {
		gr.RA += 360
	}
	gr.Dec = math.Asin(math.Max(-1, math.Min(1, s[2]/norm))) * 180 / math.Pi
	if n < 2 {
		return gr
	}
	c := [3]float64{s[0] / norm, s[1] / norm, s[2] / norm}
	proj := make([][3]float64, n) // transverse positions at the group's distance
	var rp2, rl2 float64
	v := make([]float64, n)
	for k, i := range m {
		a, d := ra[i]*math.Pi/180, dec[i]*math.Pi/180
		u := [3]float64{math.Cos(d) * math.Cos(a), math.Cos(d) * math.Sin(a), math.Sin(d)}
		dot := u[0]*c[0] + u[1]*c[1] + u[2]*c[2]
		for ax := 0; ax < 3; ax++ {
			proj[k][ax] = rbar * (u[ax] - dot*c[ax])
		}
		rp2 += proj[k][0]*proj[k][0] + proj[k][1]*proj[k][1] + proj[k][2]*proj[k][2]
		rl2 += (r[i] - rbar) * (r[i] - rbar)
		v[k] = cosmo.SpeedOfLight * (z[i] - zbar) / (1 + zbar)
	}
	gr.RProj = math.Sqrt(rp2 / float64(n))
	gr.RLOS = math.Sqrt(rl2 / float64(n))
	sort.Float64s(v)
	var gap float64
	for i := 1; i < n; i++ {
		gap += float64(i*(n-i)) * (v[i] - v[i-1])
	}
	gr.SigmaLOS = math.Sqrt(math.Pi) / float64(n*(n-1)) * gap * math.Sqrt(float64(n)/float64(n-1))
	var inv float64
	for a := 0; a < n; a++ {
		for b := a + 1; b < n; b++ {
			dx := proj[a][0] - proj[b][0]
			dy := proj[a][1] - proj[b][1]
			dz := proj[a][2] - proj[b][2]
			if d := math.Sqrt(dx*dx + dy*dy + dz*dz); d > 0 {
				inv += 1 / d
			}
		}
	}
	if inv > 0 {
		gr.RHarm = float64(n*(n-1)) / (2 * inv)
		gr.MassDyn = 1.5 * math.Pi * gr.SigmaLOS * gr.SigmaLOS * gr.RHarm / gMpc
	}
	return gr
}

// Compress moves the members of every group with at least minMembers
// members along their lines of sight towards the group's mean distance, so
// that the group's line-of-sight spread equals its transverse spread
// (r_i' = r̄ + (r_i − r̄)·RProj/RLOS, applied only when RLOS > RProj): a
// virialised group is on average as deep as it is wide, and its
// redshift-space elongation (the finger of god, Jackson 1972) comes from
// internal velocities. It returns the corrected distances (a new slice).
func Compress(g *Groups, meas []Group, r []float64, minMembers int) ([]float64, error) {
	if len(meas) != g.NumGroups() {
		return nil, errors.New("groups: Compress: measurements do not match the groups")
	}
	out := slices.Clone(r)
	for k, gr := range meas {
		if gr.N < minMembers || gr.N < 2 || !(gr.RLOS > gr.RProj) {
			continue
		}
		m := g.Members[g.Start[k]:g.Start[k+1]]
		var rbar float64
		for _, i := range m {
			rbar += r[i]
		}
		rbar /= float64(len(m))
		f := gr.RProj / gr.RLOS
		for _, i := range m {
			out[i] = rbar + (r[i]-rbar)*f
		}
	}
	return out, nil
}
