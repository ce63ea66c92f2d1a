package main

import (
	"fmt"
	"math"
	"strings"
	"time"

	"github.com/spf13/pflag"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/reconstruct/mock"
	"github.com/filigree-survey/filigree/survey"
)

// mockFlags are the options of the mock command (shared with demo).
type mockFlags struct {
	cf                   cosmoFlags
	nzf                  nzFlags
	out                  string
	n                    int
	box                  float64
	seed                 uint64
	order                int
	noWiggle             bool
	boxOnly              bool
	tracer               string
	density, bias        float64
	redshift             float64
	rsdAxis              string
	fp                   string
	zmin, zmax           float64
	magFaint, magBright  float64
	nzCap                float64
	observer             string
	particles, icCube    string
	biasSmooth, biasKMax float64
}

func (f *mockFlags) register(fs *pflag.FlagSet) {
	fs.StringVarP(&f.out, "output", "o", "", "output catalogue (.fits, .csv, .parquet, .arrow)")
	fs.IntVar(&f.n, "grid", 256, "grid cells (and particles) per side of the box; even")
	fs.Float64Var(&f.box, "box", 600, "side of the periodic box in Mpc/h")
	fs.Uint64Var(&f.seed, "seed", 1, "random seed (same seed, same mock, whatever the number of threads)")
	fs.IntVar(&f.order, "lpt", 2, "Lagrangian perturbation theory order: 1 (Zel'dovich) or 2")
	fs.BoolVar(&f.noWiggle, "no-wiggle", false, "power spectrum without baryon acoustic oscillations (Eisenstein & Hu 1998 no-wiggle fit)")
	fs.BoolVar(&f.boxOnly, "box-only", false, "write the periodic box (Cartesian x, y, z) instead of a light-cone survey")
	fs.StringVar(&f.tracer, "tracer", "galaxies", "box mode: particles (all of them) or galaxies (biased selection)")
	fs.Float64Var(&f.density, "density", 0.005, "box mode: galaxy number density in (h/Mpc)^3")
	fs.Float64Var(&f.bias, "bias", 1.3, "linear galaxy bias requested at the reference redshift")
	fs.Float64Var(&f.redshift, "redshift", -1, "box mode: snapshot redshift (default 0); survey: reference redshift of --bias and of --particles (default the middle of --zmin..--zmax)")
	fs.StringVar(&f.rsdAxis, "rsd-axis", "none", "box mode: redshift-space distortions along x, y or z (plane-parallel), or none")
	fs.StringVar(&f.fp, "footprint", "", "survey mode: footprint (HEALPix map, MOC or region file)")
	fs.Float64Var(&f.zmin, "zmin", 0.005, "survey mode: smallest observed redshift")
	fs.Float64Var(&f.zmax, "zmax", 0.15, "survey mode: largest observed redshift")
	fs.Float64Var(&f.magFaint, "mag-limit", 17.6, "survey mode without --nz/--like: faint apparent-magnitude limit of the flux-limited n(z)")
	fs.Float64Var(&f.magBright, "mag-bright", 14, "survey mode without --nz/--like: bright apparent-magnitude limit")
	fs.Float64Var(&f.nzCap, "nz-cap", 0.02, "survey mode without --nz/--like: cap on n(z) in (h/Mpc)^3 at low redshift")
	fs.StringVar(&f.observer, "observer", "", "survey mode: observer position x,y,z in the box (Mpc/h); default: the survey cone centred in the box")
	fs.StringVar(&f.particles, "particles", "", "also write every particle (box coordinates, at the reference redshift) to this file")
	fs.StringVar(&f.icCube, "ic-cube", "", "also write the linear density contrast today as a FITS cube")
	fs.Float64Var(&f.biasSmooth, "bias-smooth", 0, "Gaussian radius (Mpc/h) of the linear field that galaxy selection responds to (default 1.5 cells)")
	fs.Float64Var(&f.biasKMax, "bias-kmax", 0.08, "largest wavenumber (h/Mpc) of the bias measurement")
	f.nzf.register(fs)
	f.cf.register(fs)
	f.cf.registerPower(fs)
}

// mockResult is what the mock command made, for demo to report.
type mockResult struct {
	rows    int
	seconds float64
	bias    mock.BiasMeasurement
}

func init() {
	var f mockFlags
	register(&command{
		name:    "mock",
		summary: "synthetic survey (or periodic box) with known truth, from 2LPT initial conditions",
		usage:   "-o CATALOGUE (--footprint FILE | --box-only) [options]",
		example: `  # A light-cone survey over a footprint with a flux-limited n(z), truth columns kept:
  filigree mock --footprint survey.reg --zmax 0.15 --grid 256 --box 600 --seed 3 -o mock.fits

  # A periodic box of biased galaxies in redshift space along z, for simulation-style tests:
  filigree mock --box-only --tracer galaxies --density 0.003 --bias 1.4 --rsd-axis z -o box.parquet`,
		flags: func(a *app, fs *pflag.FlagSet) { f.register(fs) },
		run: func(a *app, fs *pflag.FlagSet, args []string) error {
			if len(args) != 0 {
				return usagef("mock takes no positional arguments (got %q)", args)
			}
			_, err := runMock(a, fs, &f)
			return err
		},
	})
}

func runMock(a *app, fs *pflag.FlagSet, f *mockFlags) (*mockResult, error) {
	if f.out == "" {
		return nil, usagef("mock needs -o OUT")
	}
	if f.boxOnly == (f.fp != "") {
		return nil, usagef("give --footprint FILE for a survey, or --box-only for a periodic box")
	}
	rsdAxis := -1
	switch strings.ToLower(f.rsdAxis) {
	case "none", "":
	case "x":
		rsdAxis = 0
	case "y":
		rsdAxis = 1
	case "z":
		rsdAxis = 2
	default:
		return nil, usagef("--rsd-axis: expected x, y, z or none, got %q", f.rsdAxis)
	}
	if !f.boxOnly && rsdAxis >= 0 {
		return nil, usagef("--rsd-axis is for --box-only; a survey always has radial redshift-space distortions")
	}
	if f.tracer != "particles" && f.tracer != "galaxies" {
		return nil, usagef("--tracer: expected particles or galaxies, got %q", f.tracer)
	}
	m, err := f.cf.model()
	if err != nil {
		return nil, err
	}
	lp, err := m.LinearPower(cosmo.PowerOptions{NoWiggle: f.noWiggle})
	if err != nil {
		return nil, usagef("%v (give --omega-b, --ns and --sigma8, or a --cosmology preset)", err)
	}
	prov := a.newProvenance(fs)
	addCosmology(prov, m)
	prov.Params = append(prov.Params,
		survey.KeyValue{Key: "power_spectrum", Value: map[bool]string{false: "Eisenstein & Hu 1998", true: "Eisenstein & Hu 1998 no-wiggle"}[f.noWiggle]},
		survey.KeyValue{Key: "lpt_order", Value: fmt.Sprint(f.order)})

	t0 := time.Now()
	steps := map[string]string{
		"initial field":             "drawing the Gaussian initial field",
		"first-order displacement":  "computing Zel'dovich displacements",
		"second-order source":       "computing the 2LPT source",
		"second-order displacement": "computing 2LPT displacements",
	}
	real, err := mock.Generate(mock.Config{Model: m, Power: lp, N: f.n, L: f.box, Seed: f.seed, Order: f.order,
		BiasSmooth: f.biasSmooth, KeepDensity: f.icCube != "",
		Progress: func(s string) {
			if s == "" {
				a.progress.Finish()
				return
			}
			a.progress.Finish()
			a.progress.Start(steps[s], 0)
		}})
	if err != nil {
		return nil, err
	}
	a.note("initial conditions: %d³ grid in a %g Mpc/h box, LPT order %d, σ8 = %.4f, rms δ per cell today %.3f (%.1f s)",
		f.n, f.box, f.order, m.Params().Sigma8, real.SigmaGrid, time.Since(t0).Seconds())

	zRef := f.redshift
	if zRef < 0 {
		zRef = 0
		if !f.boxOnly {
			zRef = 0.5 * (f.zmin + f.zmax)
		}
	}
	var t *survey.Table
	var res mockResult
	var gdensity float64
	if f.boxOnly {
		t, gdensity, err = mockBox(a, real, f, zRef, rsdAxis)
	} else {
		t, gdensity, err = mockSurvey(a, real, f, m, zRef, prov)
	}
	if err != nil {
		return nil, err
	}
	res.rows = t.Len()
	if f.boxOnly && f.tracer == "particles" {
		res.bias = mock.BiasMeasurement{Bias: 1}
	} else {
		a.progress.Start("measuring the galaxies' bias in the box", 0)
		res.bias, err = real.MeasureBias(zRef, f.bias, gdensity, f.biasKMax)
		a.progress.Finish()
		if err != nil {
			return nil, err
		}
		a.note("galaxy bias at z = %.3f: requested %.3f, measured %.3f (P_gm/P_mm over %d modes, %.3f ≤ k < %.3f h/Mpc)",
			zRef, f.bias, res.bias.Bias, res.bias.Modes, res.bias.KMin, res.bias.KMax)
	}
	prov.Params = append(prov.Params, survey.KeyValue{Key: "bias_measured", Value: fmt.Sprintf("%.4f", res.bias.Bias)})
	t.Meta = prov.Meta()
	if err := survey.Write(f.out, t, survey.WriteOptions{}); err != nil {
		return nil, err
	}
	if f.particles != "" {
		if err := writeParticles(a, real, f.particles, zRef, prov); err != nil {
			return nil, err
		}
	}
	if f.icCube != "" {
		if err := writeICCube(real, f.icCube, prov); err != nil {
			return nil, err
		}
		a.note("wrote the linear density contrast today to %s", f.icCube)
	}
	res.seconds = time.Since(t0).Seconds()
	a.note("wrote %d rows to %s (%.1f s in all)", res.rows, f.out, res.seconds)
	a.summary.SetProvenance(prov)
	a.summary.Set("rows", res.rows)
	a.summary.Set("seconds", res.seconds)
	a.summary.Set("grid", f.n)
	a.summary.Set("box_mpch", f.box)
	a.summary.Set("sigma_cell_today", real.SigmaGrid)
	a.summary.Set("bias_requested", f.bias)
	a.summary.Set("bias_measured", res.bias.Bias)
	a.summary.Set("reference_redshift", zRef)
	return &res, nil
}

// mockBox makes the box-mode table.
func mockBox(a *app, real *mock.Realisation, f *mockFlags, z float64, rsdAxis int) (*survey.Table, float64, error) {
	gal := f.tracer == "galaxies"
	cat, err := real.Box(mock.BoxOptions{Redshift: z, Galaxies: gal, Bias: f.bias, Density: f.density, RSDAxis: rsdAxis})
	if err != nil {
		return nil, 0, err
	}
	space := "real space"
	if rsdAxis >= 0 {
		space = "redshift space along " + f.rsdAxis
	}
	a.note("box at z = %.3f: %d %s in %s", z, cat.Len(), f.tracer, space)
	t := &survey.Table{Name: "MOCKBOX"}
	addInt(t, "id", "", "particle number (cell index i·N² + j·N + k)", cat.ID)
	for i, ax := range []string{"x", "y", "z"} {
		addFloat(t, ax, "Mpc/h", "position in the periodic box ("+space+")", strided(cat.Pos, i))
	}
	for i, ax := range []string{"x", "y", "z"} {
		addFloat(t, "true_"+ax, "Mpc/h", "real-space position in the box", strided(cat.RealPos, i))
	}
	for i, ax := range []string{"x", "y", "z"} {
		addFloat(t, "true_lagr_"+ax, "Mpc/h", "Lagrangian position (grid point)", strided(cat.Lagr, i))
	}
	for i, ax := range []string{"x", "y", "z"} {
		addFloat(t, "true_v"+ax, "km/s", "peculiar velocity", strided(cat.Vel, i))
	}
	density := f.density
	return t, density, nil
}

// mockSurvey makes the light-cone table.
func mockSurvey(a *app, real *mock.Realisation, f *mockFlags, m *cosmo.Model, zRef float64, prov *survey.Provenance) (*survey.Table, float64, error) {
	fp, err := footprint.Open(f.fp)
	if err != nil {
		return nil, 0, err
	}
	if err := prov.AddInput(f.fp, -1); err != nil {
		return nil, 0, err
	}
	var nbar func(z float64) float64
	nzDesc := ""
	if f.nzf.table != "" || f.nzf.like != "" {
		sr := fp.EffectiveArea() * (math.Pi / 180) * (math.Pi / 180)
		nb, err := f.nzf.nbar(a, &columnFlags{}, m, sr, prov)
		if err != nil {
			return nil, 0, err
		}
		nbar = nb.At
		nzDesc = "n(z) from " + f.nzf.table + f.nzf.like
	} else {
		fl := mock.FluxLimited{LF: mock.DefaultSchechter, Bright: f.magBright, Faint: f.magFaint, Cap: f.nzCap, Model: m}
		if err := fl.Validate(); err != nil {
			return nil, 0, usagef("%v", err)
		}
		nbar = fl.NBar
		nzDesc = fmt.Sprintf("flux-limited n(z): %.2f ≤ m ≤ %.2f, Schechter φ* = %g, M* − 5 log h = %g, α = %g, capped at %g (h/Mpc)³",
			f.magBright, f.magFaint, fl.LF.PhiStar, fl.LF.MStar, fl.LF.Alpha, f.nzCap)
	}
	prov.Params = append(prov.Params, survey.KeyValue{Key: "nz_model", Value: nzDesc})
	opt := mock.SurveyOptions{Footprint: fp, NBar: nbar, ZMin: f.zmin, ZMax: f.zmax, Bias: f.bias, ZRef: zRef}
	if f.observer != "" {
		v, err := parseFloatList("observer", f.observer)
		if err != nil {
			return nil, 0, err
		}
		if len(v) != 3 {
			return nil, 0, usagef("--observer: expected x,y,z, got %q", f.observer)
		}
		copy(opt.Observer[:], v)
	} else {
		ra, dec, _, err := footprint.Centre(fp)
		if err != nil {
			return nil, 0, fmt.Errorf("%s: %w", f.fp, err)
		}
		opt.AutoObserver, opt.Centre = true, [2]float64{ra, dec}
	}
	a.progress.Start("observing the light cone", 0)
	s, err := real.Survey(opt)
	a.progress.Finish()
	if err != nil {
		return nil, 0, err
	}
	a.note("observer at (%.1f, %.1f, %.1f) Mpc/h in the box; %d galaxies with %.3f ≤ z ≤ %.3f; %s",
		s.Observer[0], s.Observer[1], s.Observer[2], s.Len(), f.zmin, f.zmax, nzDesc)
	if s.Repeats > 0 {
		a.note("caution: %d galaxies are periodic images of particles that appear elsewhere in the survey: the survey is larger than the box, so some structures are seen twice (use a larger --box)", s.Repeats)
	}
	prov.Params = append(prov.Params, survey.KeyValue{Key: "observer_mpch", Value: fmt.Sprintf("%.4f,%.4f,%.4f", s.Observer[0], s.Observer[1], s.Observer[2])})
	a.summary.Set("observer_mpch", s.Observer[:])
	a.summary.Set("repeated_images", s.Repeats)
	a.summary.Set("parent_density", s.ParentDensity)
	t := &survey.Table{Name: "MOCK"}
	addInt(t, "id", "", "particle number + image × N³", s.ID)
	addFloat(t, "ra", "deg", "right ascension (ICRS)", s.RA)
	addFloat(t, "dec", "deg", "declination (ICRS)", s.Dec)
	addFloat(t, "z", "", "observed redshift (1+z) = (1+z_cosmo)(1+v_los/c)", s.Z)
	for i, ax := range []string{"x", "y", "z"} {
		addFloat(t, "true_"+ax, "Mpc/h", "real-space equatorial Cartesian position, observer at the origin", strided(s.TruePos, i))
	}
	for i, ax := range []string{"x", "y", "z"} {
		addFloat(t, "true_lagr_"+ax, "Mpc/h", "Lagrangian position (grid point), observer at the origin", strided(s.TrueLagr, i))
	}
	addFloat(t, "true_vpec_los", "km/s", "line-of-sight peculiar velocity (positive receding)", s.VLos)
	addFloat(t, "true_z_cosmo", "", "cosmological redshift (no peculiar velocity)", s.ZCosmo)
	return t, s.ParentDensity, nil
}

// writeParticles writes every particle of the box at redshift z.
func writeParticles(a *app, real *mock.Realisation, path string, z float64, prov *survey.Provenance) error {
	cat, err := real.Box(mock.BoxOptions{Redshift: z, RSDAxis: -1})
	if err != nil {
		return err
	}
	t := &survey.Table{Name: "PARTICLES", Meta: prov.Meta()}
	t.Meta.Set("snapshot_redshift", fmt.Sprint(z))
	addInt(t, "id", "", "particle number (cell index i·N² + j·N + k)", cat.ID)
	for i, ax := range []string{"x", "y", "z"} {
		addFloat(t, ax, "Mpc/h", "real-space position in the periodic box", strided(cat.RealPos, i))
	}
	for i, ax := range []string{"x", "y", "z"} {
		addFloat(t, "v"+ax, "km/s", "peculiar velocity", strided(cat.Vel, i))
	}
	if err := survey.Write(path, t, survey.WriteOptions{}); err != nil {
		return err
	}
	a.note("wrote %d particles at z = %.3f to %s", cat.Len(), z, path)
	return nil
}

// writeICCube writes δ_L(q) today with the grid geometry in the header.
func writeICCube(real *mock.Realisation, path string, prov *survey.Provenance) error {
	g := real.Geometry
	cards := []survey.HeaderCard{
		{Key: "GRIDN", Value: int64(g.N), Comment: "cells per side"},
		{Key: "BOXSIZE", Value: g.L, Comment: "[Mpc/h] side of the periodic box"},
		{Key: "CELLSIZE", Value: g.H(), Comment: "[Mpc/h] cell size"},
		{Key: "ORIGINX", Value: g.Origin[0], Comment: "[Mpc/h] corner of cell (0,0,0), x"},
		{Key: "ORIGINY", Value: g.Origin[1], Comment: "[Mpc/h] corner of cell (0,0,0), y"},
		{Key: "ORIGINZ", Value: g.Origin[2], Comment: "[Mpc/h] corner of cell (0,0,0), z"},
		{Key: "SAMPLING", Value: "cell centres", Comment: "values are at the centres of the cells"},
		{Key: "REDSHIFT", Value: 0.0, Comment: "linear field scaled to today"},
	}
	c := survey.Cube{Name: "DELTA_LIN", Shape: [3]int{g.N, g.N, g.N}, Data: real.Density, Unit: "", Cards: cards}
	return survey.WriteCubes(path, []survey.Cube{c}, nil, prov.Meta())
}

func addFloat(t *survey.Table, name, unit, desc string, v []float64) {
	c := survey.NewColumn(name, survey.Float64, 0)
	c.F, c.Unit, c.Desc = v, unit, desc
	t.Cols = append(t.Cols, c)
}

func addInt(t *survey.Table, name, unit, desc string, v []int64) {
	c := survey.NewColumn(name, survey.Int64, 0)
	c.I, c.Unit, c.Desc = v, unit, desc
	t.Cols = append(t.Cols, c)
}

// strided returns component i of flat x, y, z triples.
func strided(v []float64, i int) []float64 {
	out := make([]float64, len(v)/3)
	for j := range out {
		out[j] = v[3*j+i]
	}
	return out
}
