package pipeline

import (
	"errors"
	"fmt"
	"math"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/reconstruct/grid"
	"github.com/filigree-survey/filigree/reconstruct/transport"
	"github.com/filigree-survey/filigree/reconstruct/web"
	"github.com/filigree-survey/filigree/reconstruct/zeldovich"
)

// Reconstruction modes of ReconOptions.Mode.
const (
	ReconNone      = "none"
	ReconZeldovich = "zeldovich" // Zel'dovich displacement of the smoothed density by FFT
	ReconTransport = "transport" // semi-discrete optimal transport (inverse least action)
)

// FlagReconEdge marks galaxies whose reconstruction feels the fill: with
// transport, those whose Laguerre cell borders a fill particle or the
// coarse lattice, whose uniform mass biases the displacement towards the
// survey's inside; with the Zel'dovich estimate, those within one mean
// separation of the survey's boundary.
const FlagReconEdge uint32 = 1 << 5

// ReconOptions configure the reconstruction of Lagrangian positions.
type ReconOptions struct {
	// Mode is ReconNone (default when empty), ReconZeldovich or
	// ReconTransport.
	Mode string
	// Bias divides the density for the Zel'dovich estimate (0: 1).
	Bias float64
	// Smooth is the Gaussian smoothing R_L of the Lagrangian
	// classification and of the Zel'dovich estimate (0: the run's R).
	Smooth float64
	// Threshold λ_L of the Lagrangian web code (NaN: web.DefaultThreshold).
	Threshold float64
	// Tol is the transport tolerance on the relative cell volumes
	// (0: transport.DefaultTol).
	Tol float64
	// CoarseFactor sets the spacing of the coarse fill that covers the rest
	// of the transport box, in mean separations (0: 3).
	CoarseFactor float64
	// Resamples is the number K of bootstrap resamples for WebAgree (0:
	// none).
	Resamples int
}

// ReconResult holds the reconstruction.
type ReconResult struct {
	Mode string
	// Lagr and Disp per galaxy (flat x, y, z, Mpc/h; NaN without weight).
	Lagr, Disp []float64
	// DeformL1..3 and WebLagr per galaxy at its Lagrangian position.
	DeformL1, DeformL2, DeformL3 []float64
	WebLagr                      []uint8
	// VPecLOS and ZCosmo per galaxy (survey mode), from f a H Ψ·r̂.
	VPecLOS, ZCosmo []float64
	// R and Threshold of the Lagrangian classification.
	R, Threshold float64
	// Transport statistics (ReconTransport).
	Transport *transport.Stats
	Points    int // points in the transport problem (galaxies + fill)
	// Fractions of the Lagrangian web codes over the galaxies (by weight).
	MassFraction [4]float64
	// Psi is the gridded displacement (Mpc/h) and Fields its deformation
	// eigenvalues (Fields.L1..L3) and −∇·Ψ (Fields.Delta), on the grid
	// Fields.G, as functions of the Lagrangian position (to first order
	// the same as the Eulerian one for the Zel'dovich estimate).
	Psi    [3][]float64
	Fields *web.Fields
	Codes  []uint8
	// WebAgree per galaxy: the fraction of the bootstrap resamples that
	// drew it in which WebLagr is the same (NaN: none drew it, or no
	// resamples); Resamples of them took ResampleSeconds.
	WebAgree        []float64
	Resamples       int
	ResampleSeconds float64
}

// reconstruct runs the chosen reconstruction on the galaxies in use at
// res.Cart with masses mass (aligned with use), the fill particles fillXYZ
// and fillMass, the DTFE density contrast grid delta on g (periodic in box
// mode), and writes res.Recon.
func reconstruct(st *stepper, res *Result, use []int, mass []float64, fillXYZ []float64, fillMass float64,
	delta []float64, g grid.Geometry, periodic bool, boxL float64, m *cosmo.Model, z []float64, opt ReconOptions) error {
	if opt.Mode == "" || opt.Mode == ReconNone {
		return nil
	}
	n := len(res.Flags)
	rr := &ReconResult{Mode: opt.Mode, Lagr: nanSlice(3 * n), Disp: nanSlice(3 * n),
		DeformL1: nanSlice(n), DeformL2: nanSlice(n), DeformL3: nanSlice(n), WebLagr: make([]uint8, n)}
	for i := range rr.WebLagr {
		rr.WebLagr[i] = NoLabel
	}
	rr.R = opt.Smooth
	if rr.R <= 0 {
		rr.R = res.R
	}
	rr.Threshold = opt.Threshold
	if math.IsNaN(rr.Threshold) {
		rr.Threshold = web.DefaultThreshold
	}
	bias := opt.Bias
	if bias == 0 {
		bias = 1
	}
	x := make([]float64, 0, 3*len(use))
	for _, i := range use {
		x = append(x, res.Cart[3*i:3*i+3]...)
	}
	var q, disp []float64 // per galaxy in use
	var psiGrid [3][]float64
	var gL grid.Geometry
	switch opt.Mode {
	case ReconZeldovich:
		st.start("Zel'dovich reconstruction")
		fld, err := zeldovich.Displacement(delta, g, rr.R, bias)
		if err != nil {
			return err
		}
		disp = make([]float64, len(x))
		fld.At(disp, x)
		q = make([]float64, len(x))
		for k := range x {
			q[k] = x[k] - disp[k]
		}
		// Ψ on the Eulerian grid: to first order the same field as on
		// the Lagrangian grid (Zel'dovich 1970).
		psiGrid, gL = fld.Psi, g
	case ReconTransport:
		st.start("optimal-transport reconstruction")
		pos := append(append([]float64(nil), x...), fillXYZ...)
		pm := append(append([]float64(nil), mass...), make([]float64, len(fillXYZ)/3)...)
		for j := len(mass); j < len(pm); j++ {
			pm[j] = fillMass
		}
		var lo, hi [3]float64
		if periodic {
			hi = [3]float64{boxL, boxL, boxL}
		} else {
			// The transport box is the DTFE grid's cube; what the survey
			// and its fill do not cover gets a coarse lattice of mean
			// density.
			for a := 0; a < 3; a++ {
				lo[a], hi[a] = g.Origin[a], g.Origin[a]+g.L
			}
			coarse, cm := coarseFill(pos, lo, hi, res.MeanSeparation*coarseFactor(opt))
			pos = append(pos, coarse...)
			for range len(coarse) / 3 {
				pm = append(pm, cm)
			}
		}
		pos, pm, rep := mergeCoincident(pos, pm)
		rr.Points = len(pm)
		topt := transport.Options{Lo: lo, Hi: hi, Periodic: periodic, Tol: opt.Tol}
		if st.o.Progress != nil {
			topt.Progress = func(iter int, maxErr float64) {
				st.o.Progress(fmt.Sprintf("optimal transport of %d points: Newton iteration %d, largest cell volume error %.3g", len(pm), iter, maxErr))
			}
		}
		tr, err := transport.Solve(pos, pm, topt)
		if err != nil && !errors.Is(err, transport.ErrNotConverged) {
			return err
		}
		if tr == nil {
			return err
		}
		rr.Transport = &tr.Stats
		// The map moves galaxy mass: in linear theory a tracer of bias b
		// is displaced b times as far as the matter (δ_g = b δ), so the
		// matter displacement is Ψ/b and q = x − Ψ/b, as the Zel'dovich
		// estimate divides δ by b.
		if bias != 1 {
			for j := 0; j < len(tr.Disp)/3; j++ {
				for a := 0; a < 3; a++ {
					tr.Disp[3*j+a] /= bias
					tr.Lagr[3*j+a] = pos[3*j+a] - tr.Disp[3*j+a]
				}
			}
		}
		if !periodic {
			// Flag the galaxies whose cells border a fill particle or the
			// coarse lattice.
			cells := tr.Cells
			isGal := make([]bool, len(pm))
			for k := 0; k < len(x)/3; k++ {
				isGal[rep[k]] = true
			}
			for k, i := range use {
				j := rep[k]
				for _, nb := range cells.Nbr[cells.NbrStart[j]:cells.NbrStart[j+1]] {
					if !isGal[nb] {
						res.Flags[i] |= FlagReconEdge
						break
					}
				}
			}
		}
		q = make([]float64, len(x))
		disp = make([]float64, len(x))
		for k := 0; k < len(x)/3; k++ {
			j := rep[k]
			for a := 0; a < 3; a++ {
				q[3*k+a] = tr.Lagr[3*j+a]
				disp[3*k+a] = tr.Disp[3*j+a]
			}
		}
		st.start("Lagrangian classification")
		gL = g
		if periodic {
			gL = grid.Geometry{N: g.N, L: boxL}
		}
		// Ψ at the Lagrangian positions, smoothed once at R_L by
		// normalised convolution (the particles are sparser than the grid)
		if psiGrid, err = web.GridDisplacement(tr.Lagr, tr.Disp, pm, gL, rr.R); err != nil {
			return err
		}
	default:
		return fmt.Errorf("pipeline: reconstruction %q: want none, zeldovich or transport", opt.Mode)
	}
	if opt.Mode == ReconZeldovich {
		st.start("Lagrangian classification")
	}
	// The deformation is smoothed once, at R_L: both the Zel'dovich Ψ and
	// the gridded transport Ψ already are (smoothing again would give an
	// effective √2·R_L). The Zel'dovich Ψ_k = i k S δ_k/(b k²) has the
	// deformation −∂_jΨ_i = k_i k_j S δ_k/(b k²), the tidal tensor of
	// S δ/b, computed directly (4 FFTs fewer; the two differ only on the
	// Nyquist planes, where S(kR_L) ≈ e⁻³⁰).
	var fields *web.Fields
	var err error
	if opt.Mode == ReconZeldovich {
		scaled := make([]float64, len(delta))
		for c, v := range delta {
			scaled[c] = v / bias
		}
		fields, err = web.Tidal(scaled, g, rr.R)
	} else {
		fields, err = web.Deformation(psiGrid, gL, 0)
	}
	if err != nil {
		return err
	}
	rr.Psi, rr.Fields, rr.Codes = psiGrid, fields, fields.Classify(rr.Threshold)
	qs := append([]float64(nil), q...)
	if periodic {
		for k := range qs {
			qs[k] = math.Mod(math.Mod(qs[k], boxL)+boxL, boxL)
		}
	}
	_, l1, l2, l3, codes := fields.Sample(qs, rr.Threshold)
	var tot float64
	for k, i := range use {
		copy(rr.Lagr[3*i:3*i+3], qs[3*k:3*k+3])
		copy(rr.Disp[3*i:3*i+3], disp[3*k:3*k+3])
		rr.DeformL1[i], rr.DeformL2[i], rr.DeformL3[i], rr.WebLagr[i] = l1[k], l2[k], l3[k], codes[k]
		rr.MassFraction[codes[k]] += mass[k]
		tot += mass[k]
	}
	for c := range rr.MassFraction {
		rr.MassFraction[c] /= tot
	}
	if m != nil { // survey mode: velocities along the line of sight
		rr.VPecLOS, rr.ZCosmo = nanSlice(n), nanSlice(n)
		for k, i := range use {
			xv := x[3*k : 3*k+3]
			d := math.Sqrt(xv[0]*xv[0] + xv[1]*xv[1] + xv[2]*xv[2])
			if d == 0 {
				continue
			}
			pl := (disp[3*k]*xv[0] + disp[3*k+1]*xv[1] + disp[3*k+2]*xv[2]) / d
			zi := z[i]
			v := 100 * m.E(zi) / (1 + zi) * m.GrowthRate(zi) * pl
			rr.VPecLOS[i] = v
			rr.ZCosmo[i] = (1+zi)/(1+v/cosmo.SpeedOfLight) - 1
			if opt.Mode != ReconTransport && res.EdgeDist != nil && res.EdgeDist[i] < res.MeanSeparation {
				res.Flags[i] |= FlagReconEdge
			}
		}
	}
	res.Recon = rr
	return nil
}

func coarseFactor(opt ReconOptions) float64 {
	if opt.CoarseFactor > 0 {
		return opt.CoarseFactor
	}
	return 3
}

// coarseFill returns a lattice of spacing about h over the box [lo, hi],
// keeping the lattice sites farther than h from every given point (a
// cell-hash test), each with mass h³ (mean density); the kept sites cover
// what the survey and its fill particles leave empty, so the transport
// problem's uniform Lagrangian density has mass everywhere.
func coarseFill(pos []float64, lo, hi [3]float64, h float64) ([]float64, float64) {
	var dim [3]int
	var step [3]float64
	for a := 0; a < 3; a++ {
		dim[a] = max(1, int(math.Round((hi[a]-lo[a])/h)))
		step[a] = (hi[a] - lo[a]) / float64(dim[a])
	}
	occupied := make([]bool, dim[0]*dim[1]*dim[2])
	for i := 0; i < len(pos); i += 3 {
		var c [3]int
		for a := 0; a < 3; a++ {
			c[a] = min(dim[a]-1, max(0, int((pos[i+a]-lo[a])/step[a])))
		}
		// Mark the site's cell and its neighbours: a site within a cell of
		// a point is covered by that point's region.
		for dx := -1; dx <= 1; dx++ {
			for dy := -1; dy <= 1; dy++ {
				for dz := -1; dz <= 1; dz++ {
					a, b, e := c[0]+dx, c[1]+dy, c[2]+dz
					if a >= 0 && a < dim[0] && b >= 0 && b < dim[1] && e >= 0 && e < dim[2] {
						occupied[(a*dim[1]+b)*dim[2]+e] = true
					}
				}
			}
		}
	}
	var out []float64
	for a := 0; a < dim[0]; a++ {
		for b := 0; b < dim[1]; b++ {
			for e := 0; e < dim[2]; e++ {
				if !occupied[(a*dim[1]+b)*dim[2]+e] {
					out = append(out, lo[0]+(float64(a)+0.5)*step[0], lo[1]+(float64(b)+0.5)*step[1], lo[2]+(float64(e)+0.5)*step[2])
				}
			}
		}
	}
	return out, step[0] * step[1] * step[2]
}

// mergeCoincident merges points with identical coordinates (transport
// needs distinct points), summing their masses; rep maps each input point
// to its merged index.
func mergeCoincident(pos, mass []float64) ([]float64, []float64, []int) {
	n := len(mass)
	seen := make(map[[3]float64]int, n)
	rep := make([]int, n)
	var op, om []float64
	for i := 0; i < n; i++ {
		key := [3]float64{pos[3*i], pos[3*i+1], pos[3*i+2]}
		if j, ok := seen[key]; ok {
			rep[i] = j
			om[j] += mass[i]
			continue
		}
		seen[key] = len(om)
		rep[i] = len(om)
		op = append(op, key[:]...)
		om = append(om, mass[i])
	}
	return op, om, rep
}
