package main

import (
	"fmt"
	"math"
	"os"
	"path/filepath"
	"strings"
	"time"

	"github.com/spf13/pflag"

	"github.com/filigree-survey/filigree/internal/figures"
	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/mask/healpix"
	"github.com/filigree-survey/filigree/reconstruct/pipeline"
	"github.com/filigree-survey/filigree/reconstruct/web"
	"github.com/filigree-survey/filigree/survey"
)

// webNames are the class names of the web codes (design: conventions).
var webNames = [4]string{"void", "sheet", "filament", "knot"}

// runFlags are the options of the run command.
type runFlags struct {
	cf           cosmoFlags
	cols         columnFlags
	nzf          nzFlags
	out          string
	fp           string
	box          float64
	xyzCols      string
	smooth       float64
	threshold    float64
	cellsPerR    float64
	maxGrid      int
	averageCells bool
	fields       string
	seed         uint64
	plots        string
	recon        string
	resamples    int
	reconSmooth  float64
	lagrThresh   float64
	reconTol     float64
	rsdMode      string
	bias         float64
	rsdSmooth    float64
	groupsOut    string
}

func (f *runFlags) register(fs *pflag.FlagSet) {
	fs.StringVarP(&f.out, "output", "o", "", "output catalogue: the input's columns plus filigree's (.fits, .csv, .parquet, .arrow)")
	fs.StringVar(&f.fp, "footprint", "", "survey footprint (HEALPix map, MOC or region file); default: the HEALPix pixels that hold galaxies")
	fs.Float64Var(&f.box, "box", 0, "periodic box of side L (Mpc/h): Cartesian points in [0, L)^3 instead of a survey")
	fs.StringVar(&f.xyzCols, "xyz-cols", "", "box mode: the x,y,z columns (guessed when absent)")
	fs.Float64Var(&f.smooth, "smooth", 0, "Gaussian smoothing radius R in Mpc/h (default: from the mean galaxy separation at the median depth)")
	fs.Float64Var(&f.threshold, "threshold", math.NaN(), fmt.Sprintf("eigenvalue threshold λ_th of the web classification (default %g)", web.DefaultThreshold))
	fs.Float64Var(&f.cellsPerR, "cells-per-r", 2.5, "grid cells per smoothing radius")
	fs.IntVar(&f.maxGrid, "max-grid", 512, "largest grid size per side")
	fs.BoolVar(&f.averageCells, "average-cells", false, "grid the DTFE field as cell averages (2³ sub-samples) instead of values at cell centres")
	fs.StringVar(&f.fields, "fields", "", "also write the gridded fields (smoothed δ, tidal eigenvalues, web code) as a FITS cube file")
	fs.Uint64Var(&f.seed, "seed", 1, "seed of the fill particles and the insertion order")
	fs.StringVar(&f.plots, "plots", "", "also draw the run's figures (wedge, slice, sky, n(z), fractions, density) as PNG files into this directory")
	fs.StringVar(&f.recon, "recon", "transport", "reconstruction of Lagrangian positions: transport (optimal transport, minutes for 10⁵ galaxies in survey mode), zeldovich (FFT baseline, seconds) or none")
	fs.Float64Var(&f.reconSmooth, "recon-smooth", 0, "Gaussian smoothing R_L (Mpc/h) of the Lagrangian classification and the Zel'dovich estimate (default: R)")
	fs.Float64Var(&f.lagrThresh, "lagr-threshold", math.NaN(), fmt.Sprintf("eigenvalue threshold λ_L of the Lagrangian web code (default %g)", web.DefaultThreshold))
	fs.IntVar(&f.resamples, "recon-resamples", -1, "bootstrap resamples K of the reconstruction for web_agree, each costing about one tessellation and reconstruction (default: 2 with --recon zeldovich, 0 with transport, where each is another transport solve)")
	fs.Float64Var(&f.reconTol, "recon-tol", 0, "optimal-transport tolerance on every cell's relative volume error (default 1e-3)")
	fs.StringVar(&f.rsdMode, "rsd", "full", "redshift-space treatment (survey mode): none, fog (compress fingers of god of FoF groups) or full (fog, then the linear Kaiser correction)")
	fs.Float64Var(&f.bias, "bias", 1, "linear bias of the galaxies, for the Kaiser correction")
	fs.Float64Var(&f.rsdSmooth, "rsd-smooth", 0, "Gaussian smoothing (Mpc/h) of the density for the Kaiser correction (default max(10, 2 × mean separation))")
	fs.StringVar(&f.groupsOut, "groups", "", "also write the friends-of-friends group catalogue (with --rsd fog or full) to this file")
	f.nzf.register(fs)
	f.cols.register(fs)
	f.cf.register(fs)
}

func init() {
	var f runFlags
	register(&command{
		name:    "run",
		summary: "the whole chain: density, tidal field and web label for every galaxy",
		usage:   "CATALOGUE -o OUT [--footprint FILE] [--box L] [options]",
		example: `  # A survey with its footprint; n(z) estimated from the galaxies:
  filigree run galaxies.fits --footprint completeness.fits -o galaxies-web.fits --fields fields.fits

  # A simulation box of side 500 Mpc/h, smoothing 3 Mpc/h:
  filigree run halos.parquet --box 500 --xyz-cols px,py,pz --smooth 3 -o halos-web.parquet`,
		flags: func(a *app, fs *pflag.FlagSet) { f.register(fs) },
		run: func(a *app, fs *pflag.FlagSet, args []string) error {
			if len(args) != 1 {
				return usagef("run takes one catalogue")
			}
			return runRun(a, fs, &f, args[0])
		},
	})
}

func runRun(a *app, fs *pflag.FlagSet, f *runFlags, path string) error {
	if f.out == "" {
		return usagef("run needs -o OUT")
	}
	if fs.Changed("box") && (!(f.box > 0) || math.IsInf(f.box, 0)) {
		return usagef("--box must be a positive length")
	}
	if f.box > 0 && f.fp != "" {
		return usagef("--footprint is for surveys; --box is for a periodic box")
	}
	if fs.Changed("smooth") && !(f.smooth > 0) {
		return usagef("--smooth must be a positive radius in Mpc/h")
	}
	if f.maxGrid < 16 {
		return usagef("--max-grid must be at least 16")
	}
	prov := a.newProvenance(fs)
	switch f.rsdMode {
	case pipeline.RSDNone, pipeline.RSDFoG, pipeline.RSDFull:
	default:
		return usagef("--rsd: expected none, fog or full, got %q", f.rsdMode)
	}
	if !(f.bias > 0) || math.IsInf(f.bias, 0) {
		return usagef("--bias must be a positive number")
	}
	if f.groupsOut != "" && (f.box > 0 || f.rsdMode == pipeline.RSDNone) {
		return usagef("--groups needs survey mode with --rsd fog or full")
	}
	opt := pipeline.Options{Smooth: f.smooth, Threshold: f.threshold, CellsPerR: f.cellsPerR, MaxGrid: f.maxGrid,
		AverageCells: f.averageCells, Seed: f.seed,
		RSD: pipeline.RSDOptions{Mode: f.rsdMode, Bias: f.bias, Smooth: f.rsdSmooth}}
	if f.box > 0 {
		opt.RSD.Mode = pipeline.RSDNone
	}
	switch f.recon {
	case pipeline.ReconNone, pipeline.ReconZeldovich, pipeline.ReconTransport:
	default:
		return usagef("--recon: expected transport, zeldovich or none, got %q", f.recon)
	}
	if f.resamples < -1 {
		return usagef("--recon-resamples: expected 0 or more, got %d", f.resamples)
	}
	if f.resamples == -1 {
		f.resamples = 0
		if f.recon == pipeline.ReconZeldovich {
			f.resamples = 2
		}
	}
	opt.Recon = pipeline.ReconOptions{Mode: f.recon, Bias: f.bias, Smooth: f.reconSmooth, Threshold: f.lagrThresh, Tol: f.reconTol, Resamples: f.resamples}
	opt.Progress = func(step string) { a.progress.Start(step, 0) }
	endSteps := a.progress.Finish
	t0 := time.Now()
	a.progress.Start("reading "+path, 0)
	t, err := survey.Read(path, survey.ReadOptions{HDU: f.cols.hdu})
	a.progress.Finish()
	if err != nil {
		return err
	}
	var res *pipeline.Result
	if f.box > 0 {
		res, err = runBoxMode(a, f, t, path, prov, opt)
	} else {
		res, t, err = runSurveyMode(a, fs, f, t, path, prov, opt)
	}
	endSteps()
	if err != nil {
		return err
	}
	if err := addRunColumns(t, res, f.box > 0); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err := addRSDColumns(a, t, res); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if err := addReconColumns(a, t, res); err != nil {
		return fmt.Errorf("%s: %w", path, err)
	}
	if f.groupsOut != "" {
		if err := writeGroups(f.groupsOut, res, prov); err != nil {
			return err
		}
		a.note("wrote %d groups (%d with at least 5 members) to %s", res.RSD.Groups.NumGroups(), richGroups(res, 5), f.groupsOut)
	}
	prov.Params = append(prov.Params,
		survey.KeyValue{Key: "smooth_used_mpch", Value: fmt.Sprint(res.R)},
		survey.KeyValue{Key: "smooth_choice", Value: res.RNote},
		survey.KeyValue{Key: "threshold_used", Value: fmt.Sprint(res.Threshold)},
		survey.KeyValue{Key: "grid", Value: fmt.Sprintf("%d^3 cells of %.4g Mpc/h", res.Fields.G.N, res.Fields.G.H())})
	caution := fmt.Sprintf("web labels depend on the smoothing R = %.3g Mpc/h, the threshold λ_th = %g and the tracer density (mean separation %.3g Mpc/h); galaxies near edges (flags bit 1) are less reliable", res.R, res.Threshold, res.MeanSeparation)
	t.Meta = mergeMeta(t.Meta, prov.Meta())
	t.Meta.Set("filigree.caution", caution)
	var fl []string
	for _, d := range pipeline.FlagDescriptions {
		fl = append(fl, fmt.Sprintf("%d=%s (%s)", d.Bit, d.Name, d.Desc))
	}
	t.Meta.Set("filigree.flags", strings.Join(fl, "; "))
	t.Meta.Set("filigree.web_codes", "0=void 1=sheet 2=filament 3=knot (number of tidal eigenvalues above the threshold)")
	if err := survey.Write(f.out, t, survey.WriteOptions{}); err != nil {
		return err
	}
	if f.fields != "" {
		if err := writeFieldsCube(f.fields, res, f.box, prov); err != nil {
			return err
		}
		a.note("wrote the gridded fields to %s", f.fields)
	}
	if f.plots != "" {
		files, err := runPlots(f, t, res, prov)
		if err != nil {
			return err
		}
		a.note("wrote %d figures to %s", len(files), f.plots)
	}
	secs := time.Since(t0).Seconds()
	a.note("smoothing R = %.3g Mpc/h (%s); threshold λ_th = %g", res.R, res.RNote, res.Threshold)
	a.note("grid %d³ cells of %.3g Mpc/h; %d fill particles", res.Fields.G.N, res.Fields.G.H(), res.Fill)
	a.note("volume fractions: %s", fractionText(res.VolumeFraction))
	a.note("mass fractions:   %s", fractionText(res.MassFraction))
	if f.box == 0 {
		a.note("%d galaxies within 2R of an edge or hole (flag 1); %d without a weight (flag 8)", res.NearEdge, res.NoWeight)
	}
	a.note("caution: %s", caution)
	a.note("wrote %d rows to %s (%.1f s)", t.Len(), f.out, secs)

	a.summary.SetProvenance(prov)
	a.summary.Set("rows", t.Len())
	a.summary.Set("seconds", secs)
	a.summary.Set("smooth_mpch", res.R)
	a.summary.Set("smooth_choice", res.RNote)
	a.summary.Set("threshold", res.Threshold)
	a.summary.Set("mean_separation_mpch", res.MeanSeparation)
	a.summary.Set("grid_cells", res.Fields.G.N)
	a.summary.Set("grid_cell_mpch", res.Fields.G.H())
	a.summary.Set("fill_particles", res.Fill)
	vf, mf := map[string]float64{}, map[string]float64{}
	for c, name := range webNames {
		vf[name], mf[name] = res.VolumeFraction[c], res.MassFraction[c]
	}
	a.summary.Set("volume_fractions", vf)
	a.summary.Set("mass_fractions", mf)
	a.summary.Set("near_edge", res.NearEdge)
	a.summary.Set("no_weight", res.NoWeight)
	a.summary.Set("duplicates", res.Duplicates)
	a.summary.Set("on_hull", res.Hull)
	a.summary.Set("step_seconds", res.Seconds)
	a.summary.Set("caution", caution)
	if r := res.RSD; r != nil && r.Mode != pipeline.RSDNone {
		rs := map[string]any{"mode": r.Mode, "groups": r.Groups.NumGroups(), "groups_5plus": richGroups(res, 5), "compressed_galaxies": r.Compressed}
		if r.Mode == pipeline.RSDFull {
			rs["bias"], rs["smooth_mpch"], rs["iterations"], rs["converged"], rs["shifts_mpch"] = r.Bias, r.Smooth, len(r.Shifts), r.Converged, r.Shifts
		}
		a.summary.Set("redshift_space", rs)
	}
	return nil
}

func richGroups(res *pipeline.Result, min int) int {
	k := 0
	for _, s := range res.RSD.Groups.Size {
		if int(s) >= min {
			k++
		}
	}
	return k
}

// addRSDColumns adds group_id, group_n and, after the full correction,
// vpec_los and z_cosmo.
func addRSDColumns(a *app, t *survey.Table, res *pipeline.Result) error {
	r := res.RSD
	if r == nil || r.Mode == pipeline.RSDNone {
		return nil
	}
	var cols []*survey.Column
	gid := survey.NewColumn("group_id", survey.Int64, 0)
	gid.I, gid.Desc = r.GroupID, "friends-of-friends group in redshift space (null: no weight)"
	gn := survey.NewColumn("group_n", survey.Int64, 0)
	gn.I, gn.Desc = r.GroupN, "members of the galaxy's group (1: single)"
	for i, v := range r.GroupID {
		if v < 0 {
			gid.SetNull(i)
			gn.SetNull(i)
		}
	}
	cols = append(cols, gid, gn)
	a.note("redshift space: %d FoF groups, %d with ≥ 5 members; %d galaxies moved by the finger-of-god compression", r.Groups.NumGroups(), richGroups(res, 5), r.Compressed)
	if r.Mode == pipeline.RSDFull {
		for _, c := range []struct {
			name, unit, desc string
			v                []float64
		}{
			{"vpec_los", "km/s", "linear-theory line-of-sight peculiar velocity from the converged Kaiser correction", r.VPecLOS},
			{"z_cosmo", "", "redshift with the line-of-sight peculiar velocity removed", r.ZCosmo},
		} {
			cols = append(cols, floatColumn(c.name, c.unit, c.desc, c.v))
		}
		last := 0.0
		if len(r.Shifts) > 0 {
			last = r.Shifts[len(r.Shifts)-1]
		}
		a.note("Kaiser correction: bias %g, smoothing %.3g Mpc/h, %d iterations, last shift %.3g Mpc/h, converged %v", r.Bias, r.Smooth, len(r.Shifts), last, r.Converged)
	}
	if err := addColumns(t, cols, "rename it first"); err != nil {
		return err
	}
	return nil
}

// writeGroups writes the group catalogue.
func writeGroups(path string, res *pipeline.Result, prov *survey.Provenance) error {
	r := res.RSD
	t := &survey.Table{Name: "GROUPS", Meta: prov.Meta()}
	n := len(r.Meas)
	id := make([]int64, n)
	nm := make([]int64, n)
	cols := map[string][]float64{}
	names := []string{"ra", "dec", "z", "sigma_los", "r_proj", "r_harm", "mass_dyn", "r_los"}
	for _, k := range names {
		cols[k] = make([]float64, n)
	}
	for g, m := range r.Meas {
		id[g], nm[g] = int64(g), int64(m.N)
		cols["ra"][g], cols["dec"][g], cols["z"][g] = m.RA, m.Dec, m.Z
		cols["sigma_los"][g], cols["r_proj"][g], cols["r_harm"][g] = m.SigmaLOS, m.RProj, m.RHarm
		cols["mass_dyn"][g], cols["r_los"][g] = m.MassDyn, m.RLOS
	}
	addInt(t, "group_id", "", "group number (group_id of the galaxy table)", id)
	addInt(t, "n_members", "", "richness: members in the galaxy table", nm)
	desc := map[string][2]string{
		"ra":        {"deg", "direction of the mean of the members' unit vectors"},
		"dec":       {"deg", "direction of the mean of the members' unit vectors"},
		"z":         {"", "mean observed redshift of the members"},
		"sigma_los": {"km/s", "line-of-sight velocity dispersion (gapper estimator, Beers et al. 1990)"},
		"r_proj":    {"Mpc/h", "rms projected distance of the members from the centre"},
		"r_harm":    {"Mpc/h", "projected harmonic radius N(N-1)/(2 sum 1/R_ij)"},
		"mass_dyn":  {"Msun/h", "crude dynamical mass (3 pi/2) sigma^2 R_harm / G (Heisler, Tremaine & Bahcall 1985)"},
		"r_los":     {"Mpc/h", "rms line-of-sight spread of the members' distances before compression"},
	}
	for _, k := range names {
		addFloat(t, k, desc[k][0], desc[k][1], cols[k])
	}
	return survey.Write(path, t, survey.WriteOptions{})
}

func fractionText(f [4]float64) string {
	var s []string
	for c, name := range webNames {
		s = append(s, fmt.Sprintf("%s %.3f", name, f[c]))
	}
	return strings.Join(s, ", ")
}

// runSurveyMode validates the catalogue, builds the footprint and n(z) and
// runs the survey chain. It returns the table to write (bad rows dropped
// when asked).
func runSurveyMode(a *app, fs *pflag.FlagSet, f *runFlags, t *survey.Table, path string, prov *survey.Provenance, opt pipeline.Options) (*pipeline.Result, *survey.Table, error) {
	m, notes, err := survey.Guess(t, f.cols.mapping())
	if err != nil {
		return nil, nil, fmt.Errorf("%s: %w", path, err)
	}
	for _, n := range notes {
		a.note("%s", n)
	}
	pos, rep, err := survey.Validate(t, m, f.cols.validateOptions(path))
	if err != nil {
		return nil, nil, err
	}
	if rep.Dropped > 0 {
		a.note("dropped %d bad rows", rep.Dropped)
		t = t.Select(pos.Row)
	}
	if err := prov.AddInput(path, int64(rep.Rows)); err != nil {
		return nil, nil, err
	}
	model, err := f.cf.model()
	if err != nil {
		return nil, nil, err
	}
	addCosmology(prov, model)
	var fp footprint.Footprint
	if f.fp != "" {
		if fp, err = footprint.Open(f.fp); err != nil {
			return nil, nil, err
		}
		if err := prov.AddInput(f.fp, -1); err != nil {
			return nil, nil, err
		}
	} else {
		var nside int
		fp, nside, err = footprintFromData(pos.RA, pos.Dec)
		if err != nil {
			return nil, nil, err
		}
		a.note("no --footprint: using the HEALPix pixels at Nside %d that hold galaxies, completeness 1 (holes smaller than a pixel, %.2g°, are missed; give the survey's footprint for real work)", nside, math.Sqrt(healpix.PixelArea(nside))*180/math.Pi)
		prov.Params = append(prov.Params, survey.KeyValue{Key: "footprint", Value: fmt.Sprintf("from the data: occupied HEALPix pixels at Nside %d", nside)})
	}
	sr := fp.EffectiveArea() * (math.Pi / 180) * (math.Pi / 180)
	if !(sr > 0) {
		return nil, nil, fmt.Errorf("the footprint has no area")
	}
	var nbar = (*nbarT)(nil)
	if f.nzf.table != "" || f.nzf.like != "" {
		nb, err := f.nzf.nbar(a, &f.cols, model, sr, prov)
		if err != nil {
			return nil, nil, err
		}
		nbar = nb
	} else {
		nb, err := estimateNBar(a, pos, fp, model, sr, &f.nzf, prov)
		if err != nil {
			return nil, nil, err
		}
		nbar = nb
	}
	res, err := pipeline.RunSurvey(pipeline.Survey{RA: pos.RA, Dec: pos.Dec, Z: pos.Z, UserWeight: pos.Weight,
		Model: model, Footprint: fp, NBar: nbar}, opt)
	return res, t, err
}

// runBoxMode reads Cartesian positions and runs the periodic chain.
func runBoxMode(a *app, f *runFlags, t *survey.Table, path string, prov *survey.Provenance, opt pipeline.Options) (*pipeline.Result, error) {
	var have []string
	for _, c := range t.Cols {
		have = append(have, c.Name)
	}
	cols, note, err := survey.GuessXYZ(path, have, f.xyzCols)
	if err != nil {
		return nil, err
	}
	if note != "" {
		a.note("%s", note)
	}
	n := t.Len()
	xyz := make([]float64, 3*n)
	for ax := 0; ax < 3; ax++ {
		c := t.Col(cols[ax])
		if c.Kind != survey.Float64 && c.Kind != survey.Int64 {
			return nil, &survey.InputError{File: path, Row: 0, Byte: -1, Column: cols[ax], Msg: "expected a numeric position column"}
		}
		for i := 0; i < n; i++ {
			var v float64
			if c.Kind == survey.Float64 {
				v = c.F[i]
			} else {
				v = float64(c.I[i])
			}
			if c.IsNull(i) || !(v >= 0 && v < f.box) {
				return nil, &survey.InputError{File: path, Row: int64(i + 1), Byte: -1, Column: cols[ax],
					Msg: fmt.Sprintf("expected a position in [0, %g) for --box %g, found %v", f.box, f.box, v)}
			}
			xyz[3*i+ax] = v
		}
	}
	var w []float64
	if f.cols.m.Weight != "" {
		c := t.Col(f.cols.m.Weight)
		if c == nil || c.Kind != survey.Float64 {
			return nil, usagef("--weight-col %q: no such floating-point column", f.cols.m.Weight)
		}
		for i, v := range c.F {
			if c.IsNull(i) || !(v > 0) || math.IsInf(v, 0) {
				return nil, &survey.InputError{File: path, Row: int64(i + 1), Byte: -1, Column: f.cols.m.Weight, Msg: fmt.Sprintf("expected a positive finite weight, found %v", v)}
			}
		}
		w = c.F
	}
	if err := prov.AddInput(path, int64(n)); err != nil {
		return nil, err
	}
	prov.Params = append(prov.Params, survey.KeyValue{Key: "box_mpch", Value: fmt.Sprint(f.box)})
	return pipeline.RunBox(xyz, f.box, w, opt)
}

// addRunColumns appends filigree's columns (design: conventions).
func addRunColumns(t *survey.Table, res *pipeline.Result, box bool) error {
	n := len(res.Flags)
	var cols []*survey.Column
	flt := func(name, unit, desc string, v []float64) { cols = append(cols, floatColumn(name, unit, desc, v)) }
	if !box {
		flt("comov_dist", "Mpc/h", "line-of-sight comoving distance", res.ComovDist)
		for i, ax := range []string{"x", "y", "z"} {
			flt("cart_"+ax, "Mpc/h", "equatorial Cartesian position, observer at the origin", strided(res.Cart, i))
		}
	}
	wdesc := "mass weight: comoving volume per galaxy 1/(completeness × n̄(z)) × user weight"
	wunit := "(Mpc/h)^3"
	if box {
		wdesc, wunit = "mass weight (the user weight, or 1)", ""
	}
	flt("weight", wunit, wdesc, res.Weight)
	flt("dtfe_density", "(h/Mpc)^3", "DTFE number density of the galaxies at the galaxy (4 / contiguous Voronoi volume)", res.DTFEDensity)
	flt("delta", "", "density contrast of the weighted DTFE field smoothed at R", res.Delta)
	for i, l := range [][]float64{res.L1, res.L2, res.L3} {
		flt(fmt.Sprintf("tidal_l%d", i+1), "", "tidal-tensor eigenvalue (descending) of the smoothed field", l)
	}
	wt := survey.NewColumn("web_tidal", survey.Int64, 0)
	wt.Desc = "web code from the tidal tensor: 0 void, 1 sheet, 2 filament, 3 knot"
	wt.I = make([]int64, n)
	for i, c := range res.Web {
		wt.I[i] = int64(c)
		if c == pipeline.NoLabel {
			wt.I[i] = 0
		}
	}
	for i, c := range res.Web {
		if c == pipeline.NoLabel {
			wt.SetNull(i)
		}
	}
	cols = append(cols, wt)
	if !box {
		flt("edge_dist", "Mpc/h", "distance to the nearest boundary of the surveyed volume (0 outside)", res.EdgeDist)
	}
	fc := survey.NewColumn("flags", survey.Int64, 0)
	fc.Desc = "bits: 1 near edge (< 2R), 2 completeness < 0.5, 4 duplicate position, 8 no weight, 16 on the hull, 32 reconstruction near the edge"
	fc.I = make([]int64, n)
	for i, v := range res.Flags {
		fc.I[i] = int64(v)
	}
	cols = append(cols, fc)
	if err := addColumns(t, cols, "rename it first"); err != nil {
		return err
	}
	return nil
}

// writeFieldsCube writes the smoothed fields with the grid geometry.
func writeFieldsCube(path string, res *pipeline.Result, box float64, prov *survey.Provenance) error {
	g := res.Fields.G
	mode := "survey"
	if box > 0 {
		mode = "box"
	}
	cards := []survey.HeaderCard{
		{Key: "GRIDN", Value: int64(g.N), Comment: "cells per side"},
		{Key: "BOXSIZE", Value: g.L, Comment: "[Mpc/h] side of the grid"},
		{Key: "CELLSIZE", Value: g.H(), Comment: "[Mpc/h] cell size"},
		{Key: "ORIGINX", Value: g.Origin[0], Comment: "[Mpc/h] corner of cell (0,0,0), x"},
		{Key: "ORIGINY", Value: g.Origin[1], Comment: "[Mpc/h] corner of cell (0,0,0), y"},
		{Key: "ORIGINZ", Value: g.Origin[2], Comment: "[Mpc/h] corner of cell (0,0,0), z"},
		{Key: "SAMPLING", Value: "cell centres", Comment: "values are at the centres of the cells"},
		{Key: "SMOOTH", Value: res.R, Comment: "[Mpc/h] Gaussian smoothing radius"},
		{Key: "THRESH", Value: res.Threshold, Comment: "eigenvalue threshold of the web code"},
		{Key: "MODE", Value: mode, Comment: "survey (equatorial, observer at 0) or periodic box"},
	}
	codes := make([]float32, len(res.Codes))
	for i, c := range res.Codes {
		codes[i] = float32(c)
	}
	shape := [3]int{g.N, g.N, g.N}
	cubes := []survey.Cube{
		{Name: "DELTA", Shape: shape, Data: res.Fields.Delta, Cards: cards},
		{Name: "TIDAL_L1", Shape: shape, Data: res.Fields.L1, Cards: cards},
		{Name: "TIDAL_L2", Shape: shape, Data: res.Fields.L2, Cards: cards},
		{Name: "TIDAL_L3", Shape: shape, Data: res.Fields.L3, Cards: cards},
		{Name: "WEB_TIDAL", Shape: shape, Data: codes, Cards: cards},
	}
	if r := res.Recon; r != nil && r.Fields != nil && r.Fields.G == g {
		lc := append(append([]survey.HeaderCard(nil), cards...),
			survey.HeaderCard{Key: "RSMOOTHL", Value: r.R, Comment: "[Mpc/h] smoothing of the Lagrangian classification"},
			survey.HeaderCard{Key: "LTHRESH", Value: r.Threshold, Comment: "eigenvalue threshold of the Lagrangian web code"},
			survey.HeaderCard{Key: "RECON", Value: r.Mode, Comment: "reconstruction method"})
		f32 := func(x []float64) []float32 {
			out := make([]float32, len(x))
			for i, v := range x {
				out[i] = float32(v)
			}
			return out
		}
		lcodes := make([]float32, len(r.Codes))
		for i, c := range r.Codes {
			lcodes[i] = float32(c)
		}
		cubes = append(cubes,
			survey.Cube{Name: "PSI_X", Shape: shape, Data: f32(r.Psi[0]), Unit: "Mpc/h", Cards: lc},
			survey.Cube{Name: "PSI_Y", Shape: shape, Data: f32(r.Psi[1]), Unit: "Mpc/h", Cards: lc},
			survey.Cube{Name: "PSI_Z", Shape: shape, Data: f32(r.Psi[2]), Unit: "Mpc/h", Cards: lc},
			survey.Cube{Name: "DEFORM_L1", Shape: shape, Data: r.Fields.L1, Cards: lc},
			survey.Cube{Name: "DEFORM_L2", Shape: shape, Data: r.Fields.L2, Cards: lc},
			survey.Cube{Name: "DEFORM_L3", Shape: shape, Data: r.Fields.L3, Cards: lc},
			survey.Cube{Name: "WEB_LAGR", Shape: shape, Data: lcodes, Cards: lc})
	}
	if res.InSurvey != nil {
		in := make([]float32, len(res.InSurvey))
		for i, b := range res.InSurvey {
			if b {
				in[i] = 1
			}
		}
		cubes = append(cubes, survey.Cube{Name: "IN_SURVEY", Shape: shape, Data: in, Cards: cards})
	}
	return survey.WriteCubes(path, cubes, cards, prov.Meta())
}

// runPlots draws the run's figures from the results in memory (and the
// fields file, when one was written).
func runPlots(f *runFlags, t *survey.Table, res *pipeline.Result, prov *survey.Provenance) ([]string, error) {
	if err := os.MkdirAll(f.plots, 0o755); err != nil {
		return nil, err
	}
	in := figures.Inputs{Table: t, Name: filepath.Base(f.out)}
	if f.fields != "" {
		cf, err := survey.ReadCubeFile(f.fields)
		if err != nil {
			return nil, err
		}
		in.Fields = cf
	}
	if f.fp != "" {
		fp, err := footprint.Open(f.fp)
		if err != nil {
			return nil, err
		}
		in.Footprint = fp
	}
	vf, mf := map[string]float64{}, map[string]float64{}
	for c, name := range webNames {
		vf[name], mf[name] = res.VolumeFraction[c], res.MassFraction[c]
	}
	in.Summary = &figures.Summary{Rows: t.Len(), Smooth: res.R, SmoothChoice: res.RNote, Threshold: res.Threshold,
		MeanSeparation: res.MeanSeparation, GridCells: res.Fields.G.N, GridCell: res.Fields.G.H(), FillParticles: res.Fill,
		VolumeFractions: vf, MassFractions: mf, NearEdge: res.NearEdge, NoWeight: res.NoWeight, Duplicates: res.Duplicates,
		OnHull: res.Hull, StepSeconds: res.Seconds, Command: "run"}
	return figures.WritePlots(f.plots, in)
}

// addReconColumns adds the reconstruction's columns (design: conventions).
func addReconColumns(a *app, t *survey.Table, res *pipeline.Result) error {
	r := res.Recon
	if r == nil {
		return nil
	}
	var cols []*survey.Column
	flt := func(name, unit, desc string, v []float64) { cols = append(cols, floatColumn(name, unit, desc, v)) }
	for i, ax := range []string{"x", "y", "z"} {
		flt("lagr_"+ax, "Mpc/h", "reconstructed Lagrangian position ("+r.Mode+")", strided(r.Lagr, i))
	}
	for i, ax := range []string{"x", "y", "z"} {
		flt("disp_"+ax, "Mpc/h", "displacement, Eulerian minus Lagrangian", strided(r.Disp, i))
	}
	flt("deform_l1", "", "deformation-tensor eigenvalue 1 (descending) at the Lagrangian position", r.DeformL1)
	flt("deform_l2", "", "deformation-tensor eigenvalue 2", r.DeformL2)
	flt("deform_l3", "", "deformation-tensor eigenvalue 3", r.DeformL3)
	wl := survey.NewColumn("web_lagr", survey.Int64, 0)
	wl.Desc = "Lagrangian web code: deformation eigenvalues above λ_L (0 void, 1 sheet, 2 filament, 3 knot)"
	wl.I = make([]int64, len(r.WebLagr))
	for i, c := range r.WebLagr {
		if c == pipeline.NoLabel {
			wl.SetNull(i)
		} else {
			wl.I[i] = int64(c)
		}
	}
	cols = append(cols, wl)
	if r.WebAgree != nil {
		flt("web_agree", "", fmt.Sprintf("fraction of %d bootstrap resamples drawing the galaxy that give it the same web_lagr", r.Resamples), r.WebAgree)
	}
	if r.VPecLOS != nil && t.Col("vpec_los") == nil {
		flt("vpec_los", "km/s", "linear-theory line-of-sight peculiar velocity f a H Ψ·r̂ from the reconstruction", r.VPecLOS)
		flt("z_cosmo", "", "redshift with the line-of-sight peculiar velocity removed: (1+z) = (1+z_cosmo)(1+v/c)", r.ZCosmo)
	}
	if err := addColumns(t, cols, "rename it first"); err != nil {
		return err
	}
	msg := fmt.Sprintf("reconstruction (%s): Lagrangian web at R_L = %.3g Mpc/h, λ_L = %g; mass fractions %s", r.Mode, r.R, r.Threshold, fractionText(r.MassFraction))
	recSum := map[string]any{}
	if r.WebAgree != nil {
		var s float64
		var c int
		for _, v := range r.WebAgree {
			if !math.IsNaN(v) {
				s += v
				c++
			}
		}
		mean := math.NaN()
		if c > 0 {
			mean = s / float64(c)
		}
		msg += fmt.Sprintf("; web_agree over %d bootstrap resamples: mean %.2f (%.1f s)", r.Resamples, mean, r.ResampleSeconds)
		recSum["resamples"] = r.Resamples
		recSum["resample_seconds"] = r.ResampleSeconds
		if c > 0 { // JSON has no NaN
			recSum["web_agree_mean"] = mean
		}
	}
	if st := r.Transport; st != nil && len(st.Levels) > 0 {
		lv := st.Levels[len(st.Levels)-1]
		last := lv.StartMaxErr
		if len(lv.Iterations) > 0 {
			last = lv.Iterations[len(lv.Iterations)-1].MaxErr
		}
		msg += fmt.Sprintf("; transport of %d points: %d Newton iterations, max relative volume error %.2g, %.1f s", r.Points, len(lv.Iterations), last, st.Seconds)
		a.summary.Set("transport", st)
	}
	a.note("%s", msg)
	mf := map[string]float64{}
	for c, name := range webNames {
		mf[name] = r.MassFraction[c]
	}
	recSum["mode"], recSum["smooth_mpch"], recSum["threshold"], recSum["lagr_mass_fractions"], recSum["points"] = r.Mode, r.R, r.Threshold, mf, r.Points
	a.summary.Set("recon", recSum)
	return nil
}

// floatColumn returns a Float64 column of v in which NaN values are nulls.
func floatColumn(name, unit, desc string, v []float64) *survey.Column {
	c := survey.NewColumn(name, survey.Float64, 0)
	c.F, c.Unit, c.Desc = v, unit, desc
	for i, x := range v {
		if math.IsNaN(x) {
			c.SetNull(i)
		}
	}
	return c
}

// addColumns appends cols to t, refusing a name t already has (hint says
// what to do about it).
func addColumns(t *survey.Table, cols []*survey.Column, hint string) error {
	for _, c := range cols {
		if t.Col(c.Name) != nil {
			return fmt.Errorf("the catalogue already has a column %q; %s", c.Name, hint)
		}
		if err := t.Add(c); err != nil {
			return err
		}
	}
	return nil
}
