package tess

import (
	"fmt"
	"math"
	"slices"
)

// Periodic mode. The Delaunay tessellation of the infinite periodic point
// set {p + L·s : s ∈ Z³} is computed from a finite one: the points in
// [0, L)^3 plus their periodic images within a layer of width w around the
// box. A tetrahedron of the padded tessellation whose circumscribed ball
// lies inside the padded box [−w, L+w)^3 is empty of every periodic point
// (all periodic points in that box are present and the ball is empty of
// them), so it is a tetrahedron of the periodic tessellation. When every
// tetrahedron incident to an original point passes this test, the stars of
// all original points are complete and correct; otherwise w grows by half
// and the padded tessellation is built again. The tetrahedra of the torus
// are then the padded ones whose lowest-numbered corner (after mapping
// images to their originals) is an original point, which lists each one
// exactly once; their neighbours are found through a hash of their sorted
// corner tuples.

// padInitial is the starting layer width in units of the mean
// inter-point distance (L^3/N)^(1/3); in a Poisson sample the largest
// Delaunay circumradius among 10^6 points is about twice that distance.
const padInitial = 3.0

func (t *Tessellation) buildPeriodic(opt Options) error {
	L := opt.L
	t.periodic, t.l = true, L
	m := t.n - t.dups
	if m < 4 {
		return &DegenerateError{Distinct: m, Dim: min(m, 3) - 1 + boolInt(m == 0)}
	}
	w := padInitial * L / math.Cbrt(float64(m))
	for {
		w = math.Min(w, L)
		ok, err := t.tryPeriodic(opt.Seed, w)
		if err != nil {
			return err
		}
		if ok {
			return nil
		}
		if w == L {
			return fmt.Errorf("tess: periodic box of side %v: %d distinct points are too few to tessellate it", L, m)
		}
		w *= 1.5
	}
}

func boolInt(b bool) int {
	if b {
		return 1
	}
	return 0
}

// tryPeriodic builds the padded tessellation with layer width w; it reports
// false when the layer was too thin.
func (t *Tessellation) tryPeriodic(seed uint64, w float64) (bool, error) {
	L, n := t.l, t.n
	// Padded point set: the input points (duplicates included, so that input
	// indices are vertex indices), then the images of the representatives.
	xyz := slices.Clip(slices.Clone(t.xyz))
	image := make([]int32, n, n+n/2)
	for i := range image {
		image[i] = int32(i)
	}
	for i := 0; i < n; i++ {
		if int(t.rep[i]) != i {
			continue
		}
		var shifts [3][]float64
		for k := 0; k < 3; k++ {
			x := t.xyz[3*i+k]
			shifts[k] = append(shifts[k][:0], 0)
			if x < w {
				shifts[k] = append(shifts[k], L)
			}
			if x >= L-w {
				shifts[k] = append(shifts[k], -L)
			}
		}
		for _, sx := range shifts[0] {
			for _, sy := range shifts[1] {
				for _, sz := range shifts[2] {
					if sx == 0 && sy == 0 && sz == 0 {
						continue
					}
					xyz = append(xyz, t.xyz[3*i]+sx, t.xyz[3*i+1]+sy, t.xyz[3*i+2]+sz)
					image = append(image, int32(i))
				}
			}
		}
	}
	rep, _ := dedup(xyz)
	b, err := triangulate(xyz, rep, seed)
	if err != nil {
		return false, err
	}
	aug, augNbr, _ := b.compact()
	b = nil

	// Check the stars of the original points.
	lo, hi := -w*(1-1e-9), L+w*(1-1e-9)
	for a := 0; a < len(aug)/4; a++ {
		v := aug[4*a : 4*a+4]
		if v[0] >= int32(n) && v[1] >= int32(n) && v[2] >= int32(n) && v[3] >= int32(n) {
			continue
		}
		c, r := circumsphere(xyz, v)
		for k := 0; k < 3; k++ {
			if !(c[k]-r > lo && c[k]+r < hi) {
				return false, nil
			}
		}
	}

	// List the torus tetrahedra.
	var tets []int32
	var first []int32
	for a := 0; a < len(aug)/4; a++ {
		var mv [4]int32
		low, at := int32(math.MaxInt32), 0
		for j := 0; j < 4; j++ {
			mv[j] = image[aug[4*a+j]]
			if mv[j] < low {
				low, at = mv[j], j
			}
		}
		if aug[4*a+at] != low {
			continue // the lowest corner is an image: another copy is listed
		}
		for j := 0; j < 4; j++ {
			if j != at && mv[j] == low {
				return false, fmt.Errorf("tess: periodic box of side %v: too few points (a tetrahedron touches two images of point %d)", L, low)
			}
		}
		tets = append(tets, mv[:]...)
		first = append(first, int32(a))
	}
	nt := len(first)
	size := 1
	for size < 2*nt {
		size *= 2
	}
	table := make([]int32, size)
	for i := range table {
		table[i] = -1
	}
	mask := uint64(size - 1)
	sorted := func(v []int32) [4]int32 {
		s := [4]int32{v[0], v[1], v[2], v[3]}
		slices.Sort(s[:])
		return s
	}
	hash := func(s [4]int32) uint64 {
		return mix64(mix64(uint64(s[0])<<32|uint64(s[1]))^(uint64(s[2])<<32|uint64(s[3]))) & mask
	}
	for k := 0; k < nt; k++ {
		h := hash(sorted(tets[4*k : 4*k+4]))
		for table[h] >= 0 {
			h = (h + 1) & mask
		}
		table[h] = int32(k)
	}
	nbr := make([]int32, 4*nt)
	for k, a := range first {
		for i := 0; i < 4; i++ {
			u := augNbr[4*int(a)+i]
			if u < 0 {
				return false, nil
			}
			var mv [4]int32
			for j := 0; j < 4; j++ {
				mv[j] = image[aug[4*u+int32(j)]]
			}
			s := sorted(mv[:])
			h := hash(s)
			found := int32(-1)
			for ; table[h] >= 0; h = (h + 1) & mask {
				if sorted(tets[4*table[h]:4*table[h]+4]) == s {
					found = table[h]
					break
				}
			}
			if found < 0 {
				return false, nil
			}
			nbr[4*k+i] = found
		}
	}
	t.tets, t.nbr = tets, nbr
	t.vtet = vertexTets(tets, n)
	return true, nil
}

// circumsphere returns the centre and radius of the sphere through the four
// points v of xyz, in floating point.
func circumsphere(xyz []float64, v []int32) ([3]float64, float64) {
	a := xyz[3*v[0] : 3*v[0]+3]
	var d [3][3]float64
	var l [3]float64
	for j := 0; j < 3; j++ {
		p := xyz[3*v[j+1] : 3*v[j+1]+3]
		for k := 0; k < 3; k++ {
			d[j][k] = p[k] - a[k]
		}
		l[j] = d[j][0]*d[j][0] + d[j][1]*d[j][1] + d[j][2]*d[j][2]
	}
	cross := func(u, w [3]float64) [3]float64 {
		return [3]float64{u[1]*w[2] - u[2]*w[1], u[2]*w[0] - u[0]*w[2], u[0]*w[1] - u[1]*w[0]}
	}
	cd, db, bc := cross(d[1], d[2]), cross(d[2], d[0]), cross(d[0], d[1])
	den := 2 * (d[0][0]*cd[0] + d[0][1]*cd[1] + d[0][2]*cd[2])
	var c [3]float64
	var r2 float64
	for k := 0; k < 3; k++ {
		off := (l[0]*cd[k] + l[1]*db[k] + l[2]*bc[k]) / den
		c[k] = a[k] + off
		r2 += off * off
	}
	return c, math.Sqrt(r2)
}
