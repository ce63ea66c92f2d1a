package pipeline

import (
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/mask/randoms"
	"github.com/filigree-survey/filigree/reconstruct/grid"
	"github.com/filigree-survey/filigree/reconstruct/groups"
	"github.com/filigree-survey/filigree/reconstruct/rsd"
	"github.com/filigree-survey/filigree/reconstruct/zeldovich"
)

// RSD modes of Options.RSD.
const (
	RSDNone = "none" // positions from the observed redshifts as they are
	RSDFoG  = "fog"  // fingers of god compressed (friends-of-friends groups)
	RSDFull = "full" // fog, then the linear (Kaiser) correction
)

// RSDOptions configure the redshift-space steps of survey mode.
type RSDOptions struct {
	// Mode is RSDNone (default when empty), RSDFoG or RSDFull.
	Mode string
	// Bias is the linear bias of the galaxies, used by the Kaiser
	// correction (Ψ from δ_g / b); 0 means 1.
	Bias float64
	// Smooth is the Gaussian smoothing of the density for the Kaiser
	// correction (Mpc/h); 0 means max(10, 2 × mean separation).
	Smooth float64
	// MinMembers is the smallest group that is compressed; 0 means 5.
	MinMembers int
	// BPerp, BPar are the FoF linking lengths (0: groups defaults).
	BPerp, BPar float64
	// Tol and MaxIter control the Kaiser iteration (0: 0.05 Mpc/h, 20).
	Tol     float64
	MaxIter int
}

// RSDResult reports the redshift-space steps.
type RSDResult struct {
	Mode string
	// Groups and their measurements (FoF in redshift space).
	Groups *groups.Groups
	Meas   []groups.Group
	// GroupID, GroupN per galaxy (−1 and 0 for galaxies without weight).
	GroupID []int64
	GroupN  []int64
	// Compressed counts the galaxies moved by the finger-of-god step.
	Compressed int
	// Kaiser iteration: the largest shift per iteration (Mpc/h), whether
	// it converged, the bias and smoothing used.
	Shifts    []float64
	Converged bool
	Bias      float64
	Smooth    float64
	// VPecLOS (km/s) and ZCosmo per galaxy from the converged state (NaN
	// unless Mode is full): z_cosmo is the redshift of the corrected
	// distance and (1 + z) = (1 + z_cosmo)(1 + VPecLOS/c).
	VPecLOS, ZCosmo []float64
}

// redshiftSpace runs the FoF compression and, for RSDFull, the Kaiser
// correction on the galaxies in use, updating res.Cart and res.ComovDist.
// fxyz are the fill particles' positions (flat x, y, z; standing for mean
// density around the survey) and fillMass their mass, and buf the fill
// buffer width.
func redshiftSpace(st *stepper, in Survey, res *Result, use []int, sepOf func(i int) float64, fxyz []float64, fillMass, rMin, rMax, buf float64, opt RSDOptions) (*RSDResult, error) {
	n := len(in.RA)
	out := &RSDResult{Mode: opt.Mode, GroupID: make([]int64, n), GroupN: make([]int64, n)}
	for i := range out.GroupID {
		out.GroupID[i] = -1
	}
	if opt.Mode == "" || opt.Mode == RSDNone {
		out.Mode = RSDNone
		return out, nil
	}
	if opt.Mode != RSDFoG && opt.Mode != RSDFull {
		return nil, fmt.Errorf("pipeline: redshift-space mode %q: want none, fog or full", opt.Mode)
	}
	if opt.MinMembers == 0 {
		opt.MinMembers = 5
	}
	st.start("friends-of-friends groups")
	ra, dec, z, r, sep := make([]float64, len(use)), make([]float64, len(use)), make([]float64, len(use)), make([]float64, len(use)), make([]float64, len(use))
	for k, i := range use {
		ra[k], dec[k], z[k], r[k], sep[k] = in.RA[i], in.Dec[i], in.Z[i], res.ComovDist[i], sepOf(i)
	}
	g, err := groups.Find(ra, dec, r, sep, groups.Options{BPerp: opt.BPerp, BPar: opt.BPar})
	if err != nil {
		return nil, err
	}
	out.Groups = g
	out.Meas = groups.Measure(g, ra, dec, z, r)
	rc, err := groups.Compress(g, out.Meas, r, opt.MinMembers)
	if err != nil {
		return nil, err
	}
	for k, i := range use {
		out.GroupID[i] = int64(g.ID[k])
		out.GroupN[i] = int64(g.Size[g.ID[k]])
		if rc[k] != r[k] {
			out.Compressed++
		}
		setDistance(res, i, rc[k])
	}
	if opt.Mode == RSDFoG {
		return out, nil
	}

	// Kaiser correction, on a grid of spacing Smooth/2.5 over the points.
	out.Bias = opt.Bias
	if out.Bias == 0 {
		out.Bias = 1
	}
	out.Smooth = opt.Smooth
	if out.Smooth == 0 {
		out.Smooth = math.Max(10, 2*res.MeanSeparation)
	}
	st.start("linear redshift-space correction")
	m := in.Model
	s := make([]float64, 3*len(use))
	mass := make([]float64, len(use)+len(fxyz)/3)
	f := make([]float64, len(use))
	for k, i := range use {
		copy(s[3*k:3*k+3], res.Cart[3*i:3*i+3])
		mass[k] = res.Weight[i]
		f[k] = m.GrowthRate(in.Z[i])
	}
	for j := len(use); j < len(mass); j++ {
		mass[j] = fillMass
	}
	lo, hi := bounds(append(append([]float64(nil), s...), fxyz...))
	side := 0.0
	pad := 3 * out.Smooth
	for a := 0; a < 3; a++ {
		side = math.Max(side, hi[a]-lo[a]+2*pad)
	}
	gr := grid.Geometry{N: gridSize(side, out.Smooth/2.5, 256), L: side}
	for a := 0; a < 3; a++ {
		gr.Origin[a] = 0.5*(lo[a]+hi[a]) - 0.5*side
	}
	// Cells within the buffer of the surveyed volume hold galaxies or fill
	// particles at mean density; beyond it there is nothing, and δ = 0 there.
	inSurvey := surveyCells(in.Footprint, gr, rMin, rMax)
	notIn := make([]bool, len(inSurvey))
	for i, b := range inSurvey {
		notIn[i] = !b
	}
	dist := grid.DistanceToOutside(notIn, gr) // distance to the nearest survey cell
	covered := make([]bool, len(dist))
	for i, d := range dist {
		covered[i] = d <= math.Max(0, buf-gr.H())
	}
	cellVol := gr.H() * gr.H() * gr.H()
	displace := func(x []float64) ([]float64, error) {
		pos := append(append(make([]float64, 0, len(x)+len(fxyz)), x...), fxyz...)
		rho := make([]float64, gr.Len())
		grid.AssignCIC(rho, gr, pos, mass)
		for c := range rho {
			if covered[c] {
				rho[c] = rho[c]/cellVol - 1
			} else {
				rho[c] = 0
			}
		}
		fld, err := zeldovich.Displacement(rho, gr, out.Smooth, out.Bias)
		if err != nil {
			return nil, err
		}
		d := make([]float64, len(x))
		fld.At(d, x)
		return d, nil
	}
	los := func(k int) [3]float64 {
		v := s[3*k : 3*k+3]
		d := math.Sqrt(v[0]*v[0] + v[1]*v[1] + v[2]*v[2])
		if d == 0 {
			return [3]float64{}
		}
		return [3]float64{v[0] / d, v[1] / d, v[2] / d}
	}
	cr, err := rsd.Correct(s, los, f, displace, rsd.Options{Tol: opt.Tol, MaxIter: opt.MaxIter, Damping: 0.6})
	if err != nil {
		return nil, err
	}
	out.Shifts, out.Converged = cr.Shifts, cr.Converged
	out.VPecLOS, out.ZCosmo = nanSlice(n), nanSlice(n)
	for k, i := range use {
		x := cr.X[3*k : 3*k+3]
		d := math.Sqrt(x[0]*x[0] + x[1]*x[1] + x[2]*x[2])
		setDistance(res, i, d)
		// z_cosmo is the redshift of the corrected distance, and the
		// line-of-sight velocity the one that turns it into the observed
		// redshift, (1 + z) = (1 + z_cosmo)(1 + v/c): the linear flow
		// f a H Ψ·n̂ plus the internal motions removed by the
		// finger-of-god step.
		zc, err := m.RedshiftAtComovingDistance(d / m.LittleH())
		if err != nil {
			continue
		}
		out.ZCosmo[i] = zc
		out.VPecLOS[i] = cosmo.SpeedOfLight * ((1+in.Z[i])/(1+zc) - 1)
	}
	return out, nil
}

// setDistance moves galaxy i to comoving distance d along its direction.
func setDistance(res *Result, i int, d float64) {
	old := res.ComovDist[i]
	if old > 0 {
		for a := 0; a < 3; a++ {
			res.Cart[3*i+a] *= d / old
		}
	}
	res.ComovDist[i] = d
}

func fillXYZ(f *randoms.Fill) []float64 {
	out := make([]float64, 0, 3*len(f.X))
	for j := range f.X {
		out = append(out, f.X[j], f.Y[j], f.Z[j])
	}
	return out
}
