package mock

import (
	"fmt"
	"math"
	"slices"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/internal/parallel"
)

// Sky is a survey footprint: the completeness in [0, 1] at a direction
// (degrees). mask/footprint.Footprint satisfies it.
type Sky interface {
	Completeness(ra, dec float64) float64
}

// SurveyOptions describe the observed survey.
type SurveyOptions struct {
	// Footprint gives the completeness on the sky.
	Footprint Sky
	// NBar is the intended mean comoving density of the survey in (h/Mpc)³
	// as a function of observed redshift, before completeness.
	NBar func(z float64) float64
	// ZMin and ZMax bound the observed redshift.
	ZMin, ZMax float64
	// Bias is the linear bias b of the galaxies at ZRef.
	Bias, ZRef float64
	// Observer is the observer's position in the box (Mpc/h). When
	// AutoObserver is set it is chosen instead: the box centre minus half
	// the survey depth along Centre, which puts the survey cone in the
	// middle of the box.
	Observer     [3]float64
	AutoObserver bool
	// Centre is the direction (RA, Dec in degrees) of the footprint's
	// middle, used by AutoObserver.
	Centre [2]float64
}

// Survey is a light-cone catalogue. Positions are relative to the
// observer, in equatorial Cartesian coordinates (x toward RA 0, Dec 0; z to
// the north pole), flat x, y, z.
type Survey struct {
	ID                []int64
	RA, Dec, Z        []float64 // degrees, degrees, observed redshift
	ZCosmo, VLos      []float64 // cosmological redshift, km/s (positive receding)
	TruePos, TrueLagr []float64 // real-space and Lagrangian positions, Mpc/h
	Observer          [3]float64
	// Repeats counts galaxies whose particle also appears elsewhere in the
	// survey as another periodic image: structures seen twice, which
	// happens when the survey is larger than the box.
	Repeats            int
	ParentDensity      float64 // density of the biased parents, (h/Mpc)³
	MaxNBar            float64 // largest NBar over [ZMin, ZMax]
	Beta, BiasSmoothed float64
}

// Len returns the number of galaxies.
func (s *Survey) Len() int { return len(s.ID) }

// lightCone tabulates, on a uniform grid of comoving distance, the
// redshift and growth factors, for linear interpolation (Δr = 0.05 Mpc/h;
// z(r) is smooth, so the error is below 1e-8 in z).
type lightCone struct {
	dr    float64
	z     []float64
	g     []growthAt
	rMax  float64
	model *cosmo.Model
}

func (r *Realisation) newLightCone(rMax float64) (*lightCone, error) {
	const dr = 0.05
	n := int(math.Ceil(rMax/dr)) + 2
	lc := &lightCone{dr: dr, z: make([]float64, n), g: make([]growthAt, n), rMax: float64(n-1) * dr, model: r.Model}
	d := make([]float64, n)
	for i := range d {
		d[i] = float64(i) * dr
	}
	if err := r.Model.RedshiftsAtComovingDistancesMpch(lc.z, d); err != nil {
		return nil, err
	}
	parallel.For(n, 1024, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			lc.g[i] = r.growthAt(lc.z[i])
		}
	})
	return lc, nil
}

// at returns the interpolated growth factors at distance d ≤ rMax.
func (lc *lightCone) at(d float64) growthAt {
	s := d / lc.dr
	i := int(s)
	if i >= len(lc.z)-1 {
		i = len(lc.z) - 2
	}
	u := s - float64(i)
	a, b := lc.g[i], lc.g[i+1]
	lerp := func(x, y float64) float64 { return x + u*(y-x) }
	return growthAt{d1: lerp(a.d1, b.d1), d2: lerp(a.d2, b.d2), v1: lerp(a.v1, b.v1), v2: lerp(a.v2, b.v2), z: lerp(a.z, b.z)}
}

// Survey observes the realisation on the light cone: every biased parent
// galaxy, and every periodic image of it within the survey depth, is placed
// at the growth factors of its own distance from the observer (two
// fixed-point passes, distance → redshift → displacement), gets RA, Dec,
// cosmological redshift z_c, the line-of-sight velocity v and the observed
// redshift (1 + z) = (1 + z_c)(1 + v/c) (the Doppler shift of the peculiar
// velocity, to first order in v/c), and is kept with probability
// completeness × NBar(z)/n_parent. The counts per redshift bin are then
// Poisson (binomial) around NBar × volume × completeness, plus the
// clustering of the field.
func (r *Realisation) Survey(opt SurveyOptions) (*Survey, error) {
	if opt.Footprint == nil || opt.NBar == nil {
		return nil, fmt.Errorf("mock: a survey needs a footprint and n̄(z)")
	}
	if !(opt.ZMin >= 0 && opt.ZMax > opt.ZMin) {
		return nil, fmt.Errorf("mock: redshift range [%v, %v]: want 0 ≤ zmin < zmax", opt.ZMin, opt.ZMax)
	}
	m := r.Model
	g := r.Geometry
	rMaxObs := m.ComovingDistance(opt.ZMax) * m.LittleH()
	// Peculiar velocities move galaxies in redshift by up to a few thousand
	// km/s; look a margin beyond the depth for them.
	const vMargin = 6000.0 // km/s
	rLook := m.ComovingDistance((1+opt.ZMax)*(1+vMargin/cosmo.SpeedOfLight)-1)*m.LittleH() + 30
	lc, err := r.newLightCone(rLook + 50)
	if err != nil {
		return nil, err
	}
	out := &Survey{Observer: opt.Observer}
	if opt.AutoObserver {
		u := unitVector(opt.Centre[0], opt.Centre[1])
		for a := 0; a < 3; a++ {
			out.Observer[a] = g.L/2 - u[a]*rMaxObs/2
		}
	}
	// The parents must be at least as dense as the survey anywhere.
	for i := 0; i <= 2000; i++ {
		z := opt.ZMin + (opt.ZMax-opt.ZMin)*float64(i)/2000
		nb := opt.NBar(z)
		if !(nb >= 0) || math.IsInf(nb, 0) {
			return nil, fmt.Errorf("mock: n̄(%.4f) = %v", z, nb)
		}
		out.MaxNBar = math.Max(out.MaxNBar, nb)
	}
	if out.MaxNBar == 0 {
		return nil, fmt.Errorf("mock: n̄(z) is zero over [%v, %v]", opt.ZMin, opt.ZMax)
	}
	partDensity := float64(g.Len()) / g.Volume()
	if out.MaxNBar > partDensity {
		return nil, fmt.Errorf("mock: n̄(z) reaches %.4g (h/Mpc)³ but the particles have %.4g: use a finer grid (--grid) or a smaller box", out.MaxNBar, partDensity)
	}
	zRef := opt.ZRef
	sel, err := r.newSelection(opt.Bias, zRef, out.MaxNBar/partDensity)
	if err != nil {
		return nil, err
	}
	out.ParentDensity = sel.frac * partDensity
	out.Beta, out.BiasSmoothed = sel.beta, r.BiasSmooth

	// Periodic images within reach.
	reach := int(math.Ceil((rLook + g.L) / g.L))
	var shifts [][3]float64
	shifts = append(shifts, [3]float64{})
	for sx := -reach; sx <= reach; sx++ {
		for sy := -reach; sy <= reach; sy++ {
			for sz := -reach; sz <= reach; sz++ {
				sh := [3]float64{float64(sx) * g.L, float64(sy) * g.L, float64(sz) * g.L}
				// Keep the image only if its box comes within reach of the observer.
				var d2 float64
				for a := 0; a < 3; a++ {
					if gap := math.Max(sh[a]-out.Observer[a], out.Observer[a]-sh[a]-g.L); gap > 0 {
						d2 += gap * gap
					}
				}
				if (sx != 0 || sy != 0 || sz != 0) && d2 <= (rLook+40)*(rLook+40) {
					shifts = append(shifts, sh)
				}
			}
		}
	}
	const chunk = 1 << 15
	parts := make([]Survey, (g.Len()+chunk-1)/chunk)
	c := cosmo.SpeedOfLight
	parallel.For(g.Len(), chunk, func(lo, hi int) {
		o := &parts[lo/chunk]
		for p := lo; p < hi; p++ {
			if uniform(r.Seed, streamParent, uint64(p)) >= sel.prob(r.Nu[p]) {
				continue
			}
			q := r.lagrangian(p)
			for si, sh := range shifts {
				var ql [3]float64
				for a := 0; a < 3; a++ {
					ql[a] = q[a] + sh[a] - out.Observer[a]
				}
				r0 := math.Sqrt(ql[0]*ql[0] + ql[1]*ql[1] + ql[2]*ql[2])
				if r0 > rLook+40 { // no displacement is 40 Mpc/h
					continue
				}
				var x, v [3]float64
				d := r0
				for range 2 {
					ga := lc.at(math.Min(d, lc.rMax))
					dx, vv := r.displace(p, ga)
					for a := 0; a < 3; a++ {
						x[a] = ql[a] + dx[a]
					}
					v = vv
					d = math.Sqrt(x[0]*x[0] + x[1]*x[1] + x[2]*x[2])
				}
				if d > rLook || d == 0 {
					continue
				}
				ga := lc.at(d)
				vlos := (v[0]*x[0] + v[1]*x[1] + v[2]*x[2]) / d
				zc := ga.z
				zo := (1+zc)*(1+vlos/c) - 1
				if zo < opt.ZMin || zo > opt.ZMax {
					continue
				}
				ra, dec := sky(x, d)
				comp := opt.Footprint.Completeness(ra, dec)
				if comp <= 0 {
					continue
				}
				id := uint64(si)*uint64(g.Len()) + uint64(p)
				if uniform(r.Seed, streamThin, id) >= comp*opt.NBar(zo)/out.ParentDensity {
					continue
				}
				o.ID = append(o.ID, int64(id))
				o.RA = append(o.RA, ra)
				o.Dec = append(o.Dec, dec)
				o.Z = append(o.Z, zo)
				o.ZCosmo = append(o.ZCosmo, zc)
				o.VLos = append(o.VLos, vlos)
				o.TruePos = append(o.TruePos, x[:]...)
				o.TrueLagr = append(o.TrueLagr, ql[:]...)
			}
		}
	})
	for i := range parts {
		pp := &parts[i]
		out.ID = append(out.ID, pp.ID...)
		out.RA = append(out.RA, pp.RA...)
		out.Dec = append(out.Dec, pp.Dec...)
		out.Z = append(out.Z, pp.Z...)
		out.ZCosmo = append(out.ZCosmo, pp.ZCosmo...)
		out.VLos = append(out.VLos, pp.VLos...)
		out.TruePos = append(out.TruePos, pp.TruePos...)
		out.TrueLagr = append(out.TrueLagr, pp.TrueLagr...)
		parts[i] = Survey{}
	}
	out.Repeats = countRepeats(out.ID, int64(g.Len()))
	return out, nil
}

// countRepeats returns how many ids share their particle (id mod n) with
// another id.
func countRepeats(ids []int64, n int64) int {
	ps := make([]int64, len(ids))
	for i, id := range ids {
		ps[i] = id % n
	}
	slices.Sort(ps)
	rep := 0
	for i := range ps {
		if (i > 0 && ps[i] == ps[i-1]) || (i+1 < len(ps) && ps[i] == ps[i+1]) {
			rep++
		}
	}
	return rep
}

// unitVector returns the equatorial unit vector of (ra, dec) in degrees.
func unitVector(ra, dec float64) [3]float64 {
	a, d := ra*math.Pi/180, dec*math.Pi/180
	return [3]float64{math.Cos(d) * math.Cos(a), math.Cos(d) * math.Sin(a), math.Sin(d)}
}

// sky returns RA in [0, 360) and Dec of the position x at distance d > 0.
func sky(x [3]float64, d float64) (ra, dec float64) {
	ra = math.Atan2(x[1], x[0]) * 180 / math.Pi
	if ra < 0 {
		ra += 360
	}
	if ra >= 360 {
		ra = 0
	}
	dec = math.Asin(math.Max(-1, math.Min(1, x[2]/d))) * 180 / math.Pi
	return ra, dec
}
