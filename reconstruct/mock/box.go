package mock

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/internal/parallel"
)

// BoxOptions choose a snapshot of the periodic box.
type BoxOptions struct {
	// Redshift of the snapshot; the displacements and velocities use D, D2,
	// f1, f2 and E there.
	Redshift float64
	// Galaxies selects biased galaxies instead of every particle.
	Galaxies bool
	// Bias is the linear bias b requested at Redshift (galaxies only).
	Bias float64
	// Density is the galaxy number density in (h/Mpc)³ (galaxies only);
	// it must not exceed the particle density N³/L³.
	Density float64
	// RSDAxis is 0, 1 or 2 to move tracers to redshift space along that
	// axis (plane-parallel: s = x + v/(aH) along the axis), −1 for none.
	RSDAxis int
}

// Catalogue is a set of tracers with their truth, positions flat x, y, z.
type Catalogue struct {
	// ID is the particle number (x-major cell index i·N² + j·N + k).
	ID []int64
	// Pos are the positions used as observed (redshift space when asked),
	// wrapped into [0, L). RealPos are the real-space positions, wrapped.
	Pos, RealPos []float64
	// Lagr are the Lagrangian positions (cell centres), Mpc/h.
	Lagr []float64
	// Vel are the peculiar velocities in km/s.
	Vel []float64
	// Beta, ParentFraction: the selection used (see select.go); Beta is 0
	// and ParentFraction 1 for particles.
	Beta, ParentFraction float64
}

// Len returns the number of tracers.
func (c *Catalogue) Len() int { return len(c.ID) }

// growthAt are the time-dependent factors of a snapshot.
type growthAt struct {
	d1, d2 float64 // growth factors
	v1, v2 float64 // km/s per Mpc/h of Ψ1, Ψ2: 100 E a f D
	z      float64
}

func (r *Realisation) growthAt(z float64) growthAt {
	m := r.Model
	d1, d2 := m.Growth(z), 0.0
	if r.Order == 2 {
		d2 = m.SecondOrderGrowth(z)
	}
	ah := 100 * m.E(z) / (1 + z)
	return growthAt{d1: d1, d2: d2, v1: ah * m.GrowthRate(z) * d1, v2: ah * m.SecondOrderGrowthRate(z) * d2, z: z}
}

// displace returns the real-space position offset (Mpc/h) and velocity
// (km/s) of particle p at the growth factors ga.
func (r *Realisation) displace(p int, ga growthAt) (dx, v [3]float64) {
	for a := 0; a < 3; a++ {
		p1 := float64(r.Psi1[a][p])
		dx[a] = ga.d1 * p1
		v[a] = ga.v1 * p1
		if r.Order == 2 {
			p2 := float64(r.Psi2[a][p])
			dx[a] += ga.d2 * p2
			v[a] += ga.v2 * p2
		}
	}
	return dx, v
}

// lagrangian returns the cell centre of particle p.
func (r *Realisation) lagrangian(p int) [3]float64 {
	n := r.Geometry.N
	h := r.Geometry.H()
	i, j, k := p/(n*n), (p/n)%n, p%n
	return [3]float64{(float64(i) + 0.5) * h, (float64(j) + 0.5) * h, (float64(k) + 0.5) * h}
}

// Box returns a snapshot of the particles, or of biased galaxies, in the
// periodic box.
func (r *Realisation) Box(opt BoxOptions) (*Catalogue, error) {
	if !(opt.Redshift >= 0) {
		return nil, fmt.Errorf("mock: snapshot redshift %v: want ≥ 0", opt.Redshift)
	}
	if opt.RSDAxis < -1 || opt.RSDAxis > 2 {
		return nil, fmt.Errorf("mock: redshift-space axis %d: want −1, 0, 1 or 2", opt.RSDAxis)
	}
	g := r.Geometry
	sel := selection{f: math.Inf(1), frac: 1}
	if opt.Galaxies {
		frac := opt.Density * g.Volume() / float64(g.Len())
		var err error
		if sel, err = r.newSelection(opt.Bias, opt.Redshift, frac); err != nil {
			return nil, err
		}
	}
	ga := r.growthAt(opt.Redshift)
	rsd := 0.0
	if opt.RSDAxis >= 0 {
		rsd = (1 + opt.Redshift) / (100 * r.Model.E(opt.Redshift)) // Mpc/h per km/s
	}
	const chunk = 1 << 16
	nChunks := (g.Len() + chunk - 1) / chunk
	parts := make([]Catalogue, nChunks)
	L := g.L
	parallel.For(g.Len(), chunk, func(lo, hi int) {
		c := &parts[lo/chunk]
		for p := lo; p < hi; p++ {
			if opt.Galaxies && uniform(r.Seed, streamParent, uint64(p)) >= sel.prob(r.Nu[p]) {
				continue
			}
			q := r.lagrangian(p)
			dx, v := r.displace(p, ga)
			var x, s [3]float64
			for a := 0; a < 3; a++ {
				x[a] = q[a] + dx[a]
				s[a] = x[a]
				if a == opt.RSDAxis {
					s[a] += rsd * v[a]
				}
				x[a], s[a] = wrap(x[a], L), wrap(s[a], L)
			}
			c.ID = append(c.ID, int64(p))
			c.Pos = append(c.Pos, s[:]...)
			c.RealPos = append(c.RealPos, x[:]...)
			c.Lagr = append(c.Lagr, q[:]...)
			c.Vel = append(c.Vel, v[:]...)
		}
	})
	out := &Catalogue{Beta: sel.beta, ParentFraction: sel.frac}
	total := 0
	for i := range parts {
		total += len(parts[i].ID)
	}
	out.ID = make([]int64, 0, total)
	out.Pos, out.RealPos = make([]float64, 0, 3*total), make([]float64, 0, 3*total)
	out.Lagr, out.Vel = make([]float64, 0, 3*total), make([]float64, 0, 3*total)
	for i := range parts {
		out.ID = append(out.ID, parts[i].ID...)
		out.Pos = append(out.Pos, parts[i].Pos...)
		out.RealPos = append(out.RealPos, parts[i].RealPos...)
		out.Lagr = append(out.Lagr, parts[i].Lagr...)
		out.Vel = append(out.Vel, parts[i].Vel...)
		parts[i] = Catalogue{}
	}
	return out, nil
}

// wrap returns x mod L in [0, L).
func wrap(x, L float64) float64 {
	x = math.Mod(x, L)
	if x < 0 {
		x += L
	}
	if x >= L { // −tiny + L rounds to L
		x = 0
	}
	return x
}
