// Package pipeline runs filigree's chain on a catalogue: distances,
// weights, fill particles, tessellation, DTFE density, gridded fields and
// tidal-tensor classification, for a survey (RA, Dec, redshift over a
// footprint) or for points in a periodic box. It is what `filigree run`
// calls; every step is a call into the packages named for it.
package pipeline

import (
	"fmt"
	"math"
	"slices"
	"time"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/internal/parallel"
	"github.com/filigree-survey/filigree/mask/edge"
	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/mask/randoms"
	"github.com/filigree-survey/filigree/mask/selection"
	"github.com/filigree-survey/filigree/reconstruct/dtfe"
	"github.com/filigree-survey/filigree/reconstruct/grid"
	"github.com/filigree-survey/filigree/reconstruct/tess"
	"github.com/filigree-survey/filigree/reconstruct/web"
)

// Flag bits of Result.Flags (the `flags` output column).
const (
	// FlagNearEdge: the galaxy is within 2R of a survey boundary or hole
	// (edge_dist < 2R); its smoothed fields feel the fill particles.
	FlagNearEdge uint32 = 1 << iota
	// FlagLowCompleteness: the footprint's completeness at the galaxy is
	// below 0.5.
	FlagLowCompleteness
	// FlagDuplicate: the galaxy has exactly the position of an earlier
	// row; they were merged in the tessellation and share its cell.
	FlagDuplicate
	// FlagNoWeight: outside the footprint or the n(z) range; no weight,
	// density or label.
	FlagNoWeight
	// FlagHull: the galaxy's Voronoi cell is cut by the convex hull of the
	// points, so its DTFE density is biased high.
	FlagHull
)

// FlagDescriptions documents the flag bits, for output headers and docs.
var FlagDescriptions = []struct {
	Bit  uint32
	Name string
	Desc string
}{
	{FlagNearEdge, "near_edge", "within 2R of a survey boundary or hole (edge_dist < 2R)"},
	{FlagLowCompleteness, "low_completeness", "footprint completeness below 0.5"},
	{FlagDuplicate, "duplicate", "same position as an earlier row; merged in the tessellation"},
	{FlagNoWeight, "no_weight", "outside the footprint or the n(z) range: no density or label"},
	{FlagHull, "hull", "Voronoi cell cut by the convex hull: DTFE density biased high"},
	{FlagReconEdge, "recon_edge", "transport: the galaxy's Laguerre cell borders a fill particle; zeldovich: within one mean separation of the survey boundary. The fill's uniform mass pulls the displacement towards the survey's inside"},
}

// NoLabel is the web code of galaxies without a label.
const NoLabel uint8 = 255

// Options are the method choices shared by survey and box mode.
type Options struct {
	// Smooth is the Gaussian smoothing radius R in Mpc/h; 0 selects the
	// default from the tracer density (web.DefaultSmoothing of the mean
	// galaxy separation at the median depth, or over the box).
	Smooth float64
	// Threshold is the eigenvalue threshold λ_th; NaN selects
	// web.DefaultThreshold.
	Threshold float64
	// CellsPerR sets the grid spacing H = R / CellsPerR (0: 2.5), within
	// MaxGrid cells per side.
	CellsPerR float64
	// MaxGrid caps the grid size per side (0: 512).
	MaxGrid int
	// AverageCells grids the DTFE field by averaging over each cell (with
	// 2³ sub-samples) instead of sampling it at the cell centres.
	AverageCells bool
	// FillBuffer is the width of the fill-particle buffer around a survey
	// in Mpc/h (0: max(3R, 20)).
	FillBuffer float64
	// Seed seeds the fill particles and the insertion order.
	Seed uint64
	// RSD chooses the redshift-space steps of survey mode.
	RSD RSDOptions
	// Recon chooses the reconstruction of Lagrangian positions.
	Recon ReconOptions
	// Progress, if not nil, is told the name of each step as it starts.
	Progress func(step string)
}

// Result holds the per-galaxy columns and the fields. Rows without a
// result (FlagNoWeight) hold NaN and NoLabel.
type Result struct {
	// Cart are the positions used (flat x, y, z, Mpc/h): equatorial
	// Cartesian with the observer at the origin in survey mode.
	Cart []float64
	// ComovDist (survey mode) is the comoving distance, Mpc/h.
	ComovDist []float64
	// Weight is the mass weight: in survey mode the comoving volume per
	// galaxy 1/(completeness n̄(z)) times any user weight, (Mpc/h)³; in box
	// mode the user weight (1 without).
	Weight []float64
	// DTFEDensity is the DTFE number density of the galaxies, 4/W_i,
	// (h/Mpc)³ (without weights; duplicates share their cell).
	DTFEDensity []float64
	// Delta, L1, L2, L3 are the smoothed density contrast and the tidal
	// eigenvalues (descending) at each galaxy; Web the code there.
	Delta, L1, L2, L3 []float64
	Web               []uint8
	// EdgeDist (survey mode) is the distance to the surveyed volume's
	// boundary, Mpc/h.
	EdgeDist []float64
	// Flags holds the Flag bits.
	Flags []uint32
	// Fields are the smoothed gridded fields; Codes the web code per cell.
	Fields *web.Fields
	Codes  []uint8
	// InSurvey marks the grid cells inside the surveyed volume (survey
	// mode; nil in box mode, where every cell counts).
	InSurvey []bool
	// R and Threshold are the smoothing and threshold used; RNote says how
	// R was chosen.
	R, Threshold float64
	RNote        string
	// MeanSeparation is the mean galaxy separation used for the default
	// R, Mpc/h.
	MeanSeparation float64
	// VolumeFraction and MassFraction per web code: volume over the grid
	// cells inside the survey (the whole box in box mode); mass as the
	// weighted share of galaxies with a label.
	VolumeFraction, MassFraction [4]float64
	// Counts of flagged galaxies and fill particles.
	NearEdge, NoWeight, Duplicates, Hull, Fill int
	// GridOutside counts grid nodes outside the tessellation's hull (set
	// to mean density).
	GridOutside int
	// Seconds per step.
	Seconds map[string]float64
	// RSD reports the redshift-space steps (survey mode).
	RSD *RSDResult
	// Recon holds the reconstruction (nil without one).
	Recon *ReconResult
}

func (o *Options) defaults() {
	if o.CellsPerR <= 0 {
		o.CellsPerR = 2.5
	}
	if o.MaxGrid <= 0 {
		o.MaxGrid = 512
	}
}

// Survey is the input of survey mode.
type Survey struct {
	RA, Dec, Z []float64
	// UserWeight multiplies the mass weight (nil: 1).
	UserWeight []float64
	Model      *cosmo.Model
	Footprint  footprint.Footprint
	NBar       *selection.NBar
}

// stepper times named steps.
type stepper struct {
	o    *Options
	secs map[string]float64
	name string
	t0   time.Time
}

func (s *stepper) start(name string) {
	s.stop()
	s.name, s.t0 = name, time.Now()
	if s.o.Progress != nil {
		s.o.Progress(name)
	}
}

func (s *stepper) stop() {
	if s.name != "" {
		s.secs[s.name] += time.Since(s.t0).Seconds()
		s.name = ""
	}
}

// RunSurvey runs the chain in survey mode.
func RunSurvey(in Survey, opt Options) (*Result, error) {
	opt.defaults()
	n := len(in.RA)
	if len(in.Dec) != n || len(in.Z) != n || (in.UserWeight != nil && len(in.UserWeight) != n) {
		panic("pipeline: RunSurvey: column lengths differ")
	}
	if in.Model == nil || in.Footprint == nil || in.NBar == nil {
		return nil, fmt.Errorf("pipeline: survey mode needs a cosmology, a footprint and n̄(z)")
	}
	st := &stepper{o: &opt, secs: map[string]float64{}}
	res := &Result{Seconds: st.secs, Flags: make([]uint32, n)}

	st.start("distances and weights")
	res.ComovDist = make([]float64, n)
	if err := in.Model.ComovingDistancesMpch(res.ComovDist, in.Z); err != nil {
		return nil, err
	}
	res.Cart = make([]float64, 3*n)
	for i := range n {
		u := edge.UnitVector(in.RA[i], in.Dec[i])
		for a := 0; a < 3; a++ {
			res.Cart[3*i+a] = res.ComovDist[i] * u[a]
		}
	}
	comp := make([]float64, n)
	footprint.CompletenessMany(in.Footprint, comp, in.RA, in.Dec)
	res.Weight = make([]float64, n)
	// Errors here only report rows without a weight (NaN), handled below.
	_ = selection.Weights(res.Weight, in.Z, comp, in.UserWeight, in.NBar)
	var use []int // rows that enter the tessellation
	var nobs []float64
	nobsOf := make([]float64, n)
	for i, w := range res.Weight {
		if math.IsNaN(w) || !(w > 0) {
			res.Flags[i] |= FlagNoWeight
			res.NoWeight++
			continue
		}
		if comp[i] < 0.5 {
			res.Flags[i] |= FlagLowCompleteness
		}
		use = append(use, i)
		nobsOf[i] = comp[i] * in.NBar.At(in.Z[i])
		nobs = append(nobs, nobsOf[i])
	}
	if len(use) < 5 {
		return nil, fmt.Errorf("pipeline: only %d galaxies have a weight (inside the footprint and the n(z) range)", len(use))
	}

	// Default smoothing from the observed galaxy density at the median depth.
	slices.Sort(nobs)
	nMed := nobs[len(nobs)/2]
	res.MeanSeparation = math.Cbrt(1 / nMed)
	res.R, res.RNote = chooseR(opt.Smooth, res.MeanSeparation, "the median observed galaxy density (completeness × n̄(z))")
	res.Threshold = opt.Threshold
	if math.IsNaN(res.Threshold) {
		res.Threshold = web.DefaultThreshold
	}

	// Fill particles: holes and a buffer at the median observed density,
	// each standing for mean density (mass 1/n_fill in the same units as
	// the galaxies' 1/(c n̄)).
	st.start("fill particles")
	rMin, rMax := in.NBar.DistEdges[0], in.NBar.DistEdges[len(in.NBar.DistEdges)-1]
	buf := opt.FillBuffer
	if buf <= 0 {
		buf = math.Max(3*res.R, 20)
	}
	fill, err := randoms.FillParticles(in.Footprint, randoms.FillOptions{Density: nMed, RMin: rMin, RMax: rMax, Buffer: buf}, opt.Seed)
	if err != nil {
		return nil, err
	}
	res.Fill = len(fill.X)

	sepOf := func(i int) float64 { return math.Cbrt(1 / nobsOf[i]) }
	fxyz := fillXYZ(fill)
	if res.RSD, err = redshiftSpace(st, in, res, use, sepOf, fxyz, fill.Mass, rMin, rMax, buf, opt.RSD); err != nil {
		return nil, err
	}

	xyz := make([]float64, 0, 3*(len(use)+res.Fill))
	mass := make([]float64, 0, len(use)+res.Fill)
	for _, i := range use {
		xyz = append(xyz, res.Cart[3*i:3*i+3]...)
		mass = append(mass, res.Weight[i])
	}
	xyz = append(xyz, fxyz...)
	for range fill.X {
		mass = append(mass, fill.Mass)
	}

	// Grid over the points with a padding of 3R of mean density, so the
	// periodic FFT does not wrap structure onto itself.
	lo, hi := bounds(xyz)
	pad := 3 * res.R
	side := 0.0
	for a := 0; a < 3; a++ {
		side = math.Max(side, hi[a]-lo[a]+2*pad)
	}
	g := chooseGrid(side, res.R, opt)
	for a := 0; a < 3; a++ {
		g.Origin[a] = 0.5*(lo[a]+hi[a]) - 0.5*g.L
	}

	f, t, err := densityField(st, xyz, mass, opt, false, 0)
	if err != nil {
		return nil, err
	}
	rho := make([]float64, g.Len())
	res.GridOutside = gridDensity(st, f, rho, g, opt)

	if err := classify(st, res, rho, g, use, mass, t, f); err != nil {
		return nil, err
	}

	st.start("edge distances")
	res.EdgeDist = make([]float64, n)
	vol, err := edge.NewVolume(in.Footprint, rMin, rMax, 0)
	if err != nil {
		return nil, err
	}
	vol.Distances(res.EdgeDist, in.RA, in.Dec, res.ComovDist)
	for i, d := range res.EdgeDist {
		if res.Flags[i]&FlagNoWeight == 0 && d < 2*res.R {
			res.Flags[i] |= FlagNearEdge
			res.NearEdge++
		}
	}

	st.start("fractions")
	res.InSurvey = surveyCells(in.Footprint, g, rMin, rMax)
	fractions(res, use)
	gm := make([]float64, len(use))
	for k, i := range use {
		gm[k] = res.Weight[i]
	}
	if err := reconstruct(st, res, use, gm, fxyz, fill.Mass, rho, g, false, 0, in.Model, in.Z, opt.Recon); err != nil {
		return nil, err
	}
	if err := agreement(st, res, use, gm, fxyz, fill.Mass, g, false, 0, in.Z, opt); err != nil {
		return nil, err
	}
	st.stop()
	return res, nil
}

// RunBox runs the chain for points in the periodic box [0, L)³ (flat xyz,
// Mpc/h) with optional weights.
func RunBox(xyz []float64, L float64, weights []float64, opt Options) (*Result, error) {
	opt.defaults()
	n := len(xyz) / 3
	if n < 5 {
		return nil, fmt.Errorf("pipeline: %d points: too few to tessellate", n)
	}
	st := &stepper{o: &opt, secs: map[string]float64{}}
	res := &Result{Seconds: st.secs, Flags: make([]uint32, n), Cart: xyz}
	res.Weight = make([]float64, n)
	mass := make([]float64, n)
	var total float64
	for i := range n {
		w := 1.0
		if weights != nil {
			w = weights[i]
		}
		res.Weight[i] = w
		total += w
	}
	// Mass such that the mean density is 1: ρ is then 1 + δ.
	for i := range n {
		mass[i] = res.Weight[i] * L * L * L / total
	}
	res.MeanSeparation = math.Cbrt(L * L * L / float64(n))
	res.R, res.RNote = chooseR(opt.Smooth, res.MeanSeparation, "the mean density of the box")
	res.Threshold = opt.Threshold
	if math.IsNaN(res.Threshold) {
		res.Threshold = web.DefaultThreshold
	}
	g := chooseGrid(L, res.R, opt)
	g.L = L // the grid must tile the periodic box exactly
	f, t, err := densityField(st, xyz, mass, opt, true, L)
	if err != nil {
		return nil, err
	}
	rho := make([]float64, g.Len())
	res.GridOutside = gridDensity(st, f, rho, g, opt)
	use := make([]int, n)
	for i := range use {
		use[i] = i
	}
	if err := classify(st, res, rho, g, use, mass, t, f); err != nil {
		return nil, err
	}
	st.start("fractions")
	fractions(res, use)
	if err := reconstruct(st, res, use, mass, nil, 0, rho, g, true, L, nil, nil, opt.Recon); err != nil {
		return nil, err
	}
	if err := agreement(st, res, use, res.Weight, nil, 0, g, true, L, nil, opt); err != nil {
		return nil, err
	}
	st.stop()
	return res, nil
}

// chooseR returns the smoothing radius: the given one, or the default from
// the mean separation, with a note saying which.
func chooseR(given, sep float64, what string) (float64, string) {
	if given > 0 {
		return given, "given (--smooth)"
	}
	r := web.DefaultSmoothing(sep)
	return r, fmt.Sprintf("default: %.3g Mpc/h from the mean galaxy separation %.3g Mpc/h at %s", r, sep, what)
}

// chooseGrid returns a grid of side at least side with spacing at most
// R/CellsPerR: the smallest FFT-friendly size (grid.FastSize) that gives
// it, within [16, MaxGrid] (a capped grid is coarser than asked).
func chooseGrid(side, r float64, opt Options) grid.Geometry {
	return grid.Geometry{N: gridSize(side, r/opt.CellsPerR, opt.MaxGrid), L: side}
}

// gridSize is the number of cells per side of a grid of the given side
// and spacing at most h: an FFT-friendly even number (grid.FastSize) in
// [16, the largest such number ≤ maxN].
func gridSize(side, h float64, maxN int) int {
	return max(16, min(grid.FastSize(int(math.Ceil(side/h))), grid.FastSizeBelow(maxN)))
}

func bounds(xyz []float64) (lo, hi [3]float64) {
	lo = [3]float64{math.Inf(1), math.Inf(1), math.Inf(1)}
	hi = [3]float64{math.Inf(-1), math.Inf(-1), math.Inf(-1)}
	for i := 0; i < len(xyz); i += 3 {
		for a := 0; a < 3; a++ {
			lo[a] = math.Min(lo[a], xyz[i+a])
			hi[a] = math.Max(hi[a], xyz[i+a])
		}
	}
	return lo, hi
}

// densityField tessellates the points and computes their DTFE densities.
func densityField(st *stepper, xyz, mass []float64, opt Options, periodic bool, L float64) (*dtfe.Field, *tess.Tessellation, error) {
	st.start("tessellation")
	t, err := tess.New(xyz, tess.Options{Seed: opt.Seed, Periodic: periodic, L: L})
	if err != nil {
		return nil, nil, err
	}
	st.start("DTFE densities")
	f, err := dtfe.New(t, xyz, mass)
	if err != nil {
		return nil, nil, err
	}
	return f, t, nil
}

// gridDensity puts the DTFE field on the grid; nodes outside the hull get
// mean density 1.
func gridDensity(st *stepper, f *dtfe.Field, rho []float64, g grid.Geometry, opt Options) int {
	st.start("DTFE on the grid")
	var out int
	if opt.AverageCells {
		out = f.AverageCells(rho, g, 2)
	} else {
		out = f.SampleNodes(rho, g)
	}
	for i, v := range rho {
		if math.IsNaN(v) {
			rho[i] = 1
		}
	}
	return out
}

// classify records the per-galaxy DTFE results of t and f, then smooths,
// computes the tidal field and labels the galaxies in use. The
// tessellation and the DTFE field are not used after the first step, so
// their memory is free for the tidal grids.
func classify(st *stepper, res *Result, rho []float64, g grid.Geometry, use []int, mass []float64, t *tess.Tessellation, f *dtfe.Field) error {
	n := len(res.Flags)
	res.DTFEDensity = nanSlice(n)
	dens := f.Density()
	hull := f.Hull()
	rep := t.Rep()
	for j, i := range use {
		// Density() holds 4 m_j/W; the number density is 4/W.
		if mass[j] > 0 {
			res.DTFEDensity[i] = dens[j] / mass[j]
		}
		if hull != nil && hull[j] {
			res.Flags[i] |= FlagHull
			res.Hull++
		}
		if int(rep[j]) != j {
			res.Flags[i] |= FlagDuplicate
			res.Duplicates++
		}
	}
	for i := range rho {
		rho[i]--
	}
	st.start("tidal field")
	fields, err := web.Tidal(rho, g, res.R)
	if err != nil {
		return err
	}
	res.Fields = fields
	res.Codes = fields.Classify(res.Threshold)
	st.start("sampling the fields at the galaxies")
	pos := make([]float64, 0, 3*len(use))
	for _, i := range use {
		pos = append(pos, res.Cart[3*i:3*i+3]...)
	}
	delta, l1, l2, l3, codes := fields.Sample(pos, res.Threshold)
	res.Delta, res.L1, res.L2, res.L3 = nanSlice(n), nanSlice(n), nanSlice(n), nanSlice(n)
	res.Web = make([]uint8, n)
	for i := range res.Web {
		res.Web[i] = NoLabel
	}
	for j, i := range use {
		res.Delta[i], res.L1[i], res.L2[i], res.L3[i], res.Web[i] = delta[j], l1[j], l2[j], l3[j], codes[j]
	}
	return nil
}

func nanSlice(n int) []float64 {
	s := make([]float64, n)
	for i := range s {
		s[i] = math.NaN()
	}
	return s
}

// surveyCells marks the cells whose centre lies in the surveyed volume:
// completeness > 0 (on a HEALPix raster of the footprint at Nside 256) and
// comoving distance within [rMin, rMax].
func surveyCells(fp footprint.Footprint, g grid.Geometry, rMin, rMax float64) []bool {
	m, err := footprint.Rasterize(fp, 256, 0, "survey cells")
	var sky footprint.Footprint = fp
	if err == nil {
		sky = m
	}
	in := make([]bool, g.Len())
	h := g.H()
	parallel.For(g.N, 1, func(lo, hi int) {
		for i := lo; i < hi; i++ {
			surveyPlane(in, sky, g, h, i, rMin, rMax)
		}
	})
	return in
}

// surveyPlane fills the x-plane i of surveyCells.
func surveyPlane(in []bool, sky footprint.Footprint, g grid.Geometry, h float64, i int, rMin, rMax float64) {
	{
		for j := 0; j < g.N; j++ {
			for k := 0; k < g.N; k++ {
				x := g.Origin[0] + (float64(i)+0.5)*h
				y := g.Origin[1] + (float64(j)+0.5)*h
				z := g.Origin[2] + (float64(k)+0.5)*h
				r := math.Sqrt(x*x + y*y + z*z)
				if r < rMin || r > rMax || r == 0 {
					continue
				}
				ra := math.Atan2(y, x) * 180 / math.Pi
				if ra < 0 {
					ra += 360
				}
				dec := math.Asin(z/r) * 180 / math.Pi
				in[g.Index(i, j, k)] = sky.Completeness(ra, dec) > 0
			}
		}
	}
}

// fractions fills the volume and mass fractions.
func fractions(res *Result, use []int) {
	res.VolumeFraction, _ = web.Fractions(res.Codes, nil, res.InSurvey)
	var tot float64
	var m [4]float64
	for _, i := range use {
		c := res.Web[i]
		if c > 3 {
			continue
		}
		m[c] += res.Weight[i]
		tot += res.Weight[i]
	}
	if tot > 0 {
		for c := range m {
			res.MassFraction[c] = m[c] / tot
		}
	}
}
