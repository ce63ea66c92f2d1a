package main

import (
	"fmt"
	"strconv"
	"strings"
	"time"

	"github.com/spf13/pflag"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/survey"
)

// cosmoFlags are the cosmology options shared by every command that needs
// distances: a preset by name, or explicit parameters.
type cosmoFlags struct {
	fs                               *pflag.FlagSet
	preset                           string
	h0, om, ok, ol, w0, wa, tc, neff float64
	ob, ns, s8                       float64
	power                            bool // registerPower was called
}

// registerPower adds the parameters that only the linear power spectrum
// uses (commands that draw initial conditions): Ωb, n_s and σ8. They
// override the preset's values and never switch to explicit mode.
func (c *cosmoFlags) registerPower(fs *pflag.FlagSet) {
	c.power = true
	fs.Float64Var(&c.ob, "omega-b", 0, "baryon density Ωb today (default: the preset's)")
	fs.Float64Var(&c.ns, "ns", 0, "primordial spectral index n_s (default: the preset's)")
	fs.Float64Var(&c.s8, "sigma8", 0, "rms linear density fluctuation in 8 Mpc/h spheres today (default: the preset's)")
}

func (c *cosmoFlags) register(fs *pflag.FlagSet) {
	c.fs = fs
	fs.StringVar(&c.preset, "cosmology", "", "named cosmology: "+strings.Join(cosmo.PresetNames(), ", ")+" (default planck2018 unless explicit parameters are given)")
	fs.Float64Var(&c.h0, "h0", 0, "Hubble constant H0 in km/s/Mpc")
	fs.Float64Var(&c.om, "omega-m", 0, "matter density Ωm today")
	fs.Float64Var(&c.ok, "omega-k", 0, "curvature density Ωk today (Ω_Λ = 1 − Ωm − Ωk − Ωr)")
	fs.Float64Var(&c.ol, "omega-l", 0, "dark-energy density Ω_Λ today; then Ωk = 1 − Ωm − Ω_Λ − Ωr (not with --omega-k)")
	fs.Float64Var(&c.w0, "w0", -1, "dark-energy equation of state today (CPL w0)")
	fs.Float64Var(&c.wa, "wa", 0, "dark-energy equation-of-state evolution (CPL wa)")
	fs.Float64Var(&c.tc, "tcmb", 0, "CMB temperature in K; switches on radiation (photons + massless neutrinos)")
	fs.Float64Var(&c.neff, "neff", 3.046, "effective number of massless neutrino species (with --tcmb)")
}

// model builds the cosmology the flags describe. With --cosmology, explicit
// flags override the preset's values. Without it, any explicit parameter
// defines a model from scratch (needing --h0 and --omega-m), without
// radiation unless --tcmb is given; with none, the default preset is used.
func (c *cosmoFlags) model() (*cosmo.Model, error) {
	explicit := []string{"h0", "omega-m", "omega-k", "omega-l", "w0", "wa", "tcmb", "neff"}
	var changed []string
	for _, n := range explicit {
		if c.fs.Changed(n) {
			changed = append(changed, n)
		}
	}
	if c.fs.Changed("omega-k") && c.fs.Changed("omega-l") {
		return nil, usagef("give --omega-k or --omega-l, not both: the other follows from Ωm + Ωk + Ω_Λ + Ωr = 1")
	}
	var p cosmo.Params
	switch {
	case c.preset != "" || len(changed) == 0:
		name := c.preset
		if name == "" {
			name = "planck2018"
		}
		var err error
		if p, err = cosmo.Preset(name); err != nil {
			return nil, usagef("%v", err)
		}
		if len(changed) > 0 {
			p.Name = name + "+custom"
		}
	default:
		if !c.fs.Changed("h0") || !c.fs.Changed("omega-m") {
			return nil, usagef("explicit cosmology parameters need at least --h0 and --omega-m (or choose --cosmology NAME)")
		}
		p = cosmo.Params{Name: "custom", W0: -1, Neff: c.neff}
	}
	set := func(name string, dst *float64, v float64) {
		if c.fs.Changed(name) {
			*dst = v
		}
	}
	set("h0", &p.H0, c.h0)
	set("omega-m", &p.OmegaM, c.om)
	set("omega-k", &p.OmegaK, c.ok)
	if c.fs.Changed("omega-l") {
		p.OmegaL, p.FixOmegaL = c.ol, true
	} else if c.fs.Changed("omega-k") {
		p.FixOmegaL = false
	}
	set("w0", &p.W0, c.w0)
	set("wa", &p.Wa, c.wa)
	set("tcmb", &p.TCMB, c.tc)
	set("neff", &p.Neff, c.neff)
	if c.power {
		for _, n := range []string{"omega-b", "ns", "sigma8"} {
			if c.fs.Changed(n) && !strings.HasSuffix(p.Name, "custom") {
				p.Name += "+custom"
			}
		}
		set("omega-b", &p.OmegaB, c.ob)
		set("ns", &p.Ns, c.ns)
		set("sigma8", &p.Sigma8, c.s8)
	}
	m, err := cosmo.New(p)
	if err != nil {
		return nil, fmt.Errorf("cosmology: %w", err)
	}
	return m, nil
}

// columnFlags are the column-mapping and validation options shared by every
// command that reads a survey catalogue.
type columnFlags struct {
	m        survey.Mapping
	hdu      string
	strict   bool
	dropBad  bool
	radians  bool
	maxListN int
}

func (c *columnFlags) register(fs *pflag.FlagSet) {
	fs.StringVar(&c.m.RA, "ra-col", "", "RA column (guessed from common names when absent)")
	fs.StringVar(&c.m.Dec, "dec-col", "", "Dec column (guessed when absent)")
	fs.StringVar(&c.m.Z, "z-col", "", "redshift column (guessed when absent)")
	fs.StringVar(&c.m.Weight, "weight-col", "", "optional per-galaxy weight column (guessed from 'weight' etc.)")
	fs.StringVar(&c.m.ID, "id-col", "", "optional ID column (guessed from 'id', 'objid' etc.)")
	fs.BoolVar(&c.radians, "radians", false, "RA and Dec are in radians (default degrees)")
	fs.StringVar(&c.hdu, "hdu", "", "FITS extension by 0-based index or EXTNAME (default: the first table)")
	fs.BoolVar(&c.strict, "strict", false, "reject RA outside [0, 360) instead of wrapping it")
	fs.BoolVar(&c.dropBad, "drop-bad", false, "drop bad rows (and say how many) instead of stopping")
}

func (c *columnFlags) validateOptions(file string) survey.ValidateOptions {
	return survey.ValidateOptions{File: file, Strict: c.strict, DropBad: c.dropBad}
}

func (c *columnFlags) mapping() survey.Mapping {
	m := c.m
	m.Radians = c.radians
	return m
}

// newProvenance starts the provenance record of this run: version, command
// line, time, and every flag of fs with its value (defaults included).
func (a *app) newProvenance(fs *pflag.FlagSet) *survey.Provenance {
	p := &survey.Provenance{Version: fullVersion(), Command: a.argv, Time: time.Now().UTC().Truncate(time.Second)}
	fs.VisitAll(func(f *pflag.Flag) {
		switch f.Name {
		case "quiet", "help":
			return
		}
		p.Params = append(p.Params, survey.KeyValue{Key: f.Name, Value: f.Value.String()})
	})
	return p
}

// addCosmology records the model's parameters in p.
func addCosmology(p *survey.Provenance, m *cosmo.Model) {
	for _, kv := range m.KeyValues() {
		p.Cosmology = append(p.Cosmology, survey.KeyValue{Key: kv[0], Value: kv[1]})
	}
}

// parseFloatList parses "0.1,0.5,1" (spaces allowed).
func parseFloatList(flag, s string) ([]float64, error) {
	var out []float64
	for _, f := range strings.Split(s, ",") {
		f = strings.TrimSpace(f)
		if f == "" {
			continue
		}
		v, err := strconv.ParseFloat(f, 64)
		if err != nil {
			return nil, usagef("--%s: %q is not a number", flag, f)
		}
		out = append(out, v)
	}
	return out, nil
}

// note prints an informational line on stderr (kept even with --quiet:
// guesses and policy notices change results and must be seen).
func (a *app) note(format string, args ...any) {
	fmt.Fprintf(a.stderr, "filigree: "+format+"\n", args...)
}
