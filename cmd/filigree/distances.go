package main

import (
	"fmt"
	"math"

	"github.com/spf13/pflag"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/survey"
)

func init() {
	var (
		cf         cosmoFlags
		zlist      string
		zmin, zmax float64
		steps      int
		area       float64
		out        string
	)
	register(&command{
		name:    "distances",
		summary: "cosmology calculator: distances, volumes, lookback time and growth as a table",
		usage:   "(--z LIST | --zmin A --zmax B --steps N) [cosmology options] [-o FILE]",
		example: `  # Distances to three redshifts in the default cosmology (Planck 2018), CSV on stdout:
  filigree distances --z 0.1,0.5,1

  # A w0wa model with curvature, 50 steps to z = 2, written as FITS:
  filigree distances --h0 70 --omega-m 0.3 --omega-k 0.05 --w0 -0.9 --wa 0.1 \
      --zmin 0 --zmax 2 --steps 50 -o distances.fits`,
		flags: func(a *app, fs *pflag.FlagSet) {
			fs.StringVar(&zlist, "z", "", "comma-separated redshifts")
			fs.Float64Var(&zmin, "zmin", 0, "first redshift of an evenly spaced range")
			fs.Float64Var(&zmax, "zmax", 0, "last redshift of the range")
			fs.IntVar(&steps, "steps", 0, "number of redshifts in the range (at least 2)")
			fs.Float64Var(&area, "area", 41252.96124941928, "sky area in deg² for the vol_mpch3 column (default: the whole sky, 4π sr)")
			fs.StringVarP(&out, "output", "o", "", "output file (.csv, .fits, .parquet, .arrow); default CSV on stdout")
			cf.register(fs)
		},
		run: func(a *app, fs *pflag.FlagSet, args []string) error {
			if len(args) > 0 {
				return usagef("unexpected argument %q", args[0])
			}
			var zs []float64
			switch {
			case zlist != "" && fs.Changed("steps"):
				return usagef("give --z or --zmin/--zmax/--steps, not both")
			case zlist != "":
				var err error
				if zs, err = parseFloatList("z", zlist); err != nil {
					return err
				}
			case fs.Changed("steps"):
				n := steps
				if n < 2 || n > 10_000_000 {
					return usagef("--steps must be from 2 to 10^7")
				}
				if !(zmax > zmin) {
					return usagef("--zmax must be larger than --zmin")
				}
				for i := 0; i < n; i++ {
					zs = append(zs, zmin+(zmax-zmin)*float64(i)/float64(n-1))
				}
			default:
				return usagef("no redshifts: give --z 0.1,0.5,1 or --zmin/--zmax/--steps")
			}
			for _, z := range zs {
				if !(z >= 0) || math.IsInf(z, 0) {
					return usagef("redshift %v: must be finite and ≥ 0", z)
				}
			}
			if !(area > 0 && area <= 41252.96124941928*(1+1e-12)) {
				return usagef("--area must be in (0, 41252.96] deg²")
			}
			m, err := cf.model()
			if err != nil {
				return err
			}
			prov := a.newProvenance(fs)
			addCosmology(prov, m)
			t := distanceTable(m, zs, area)
			t.Meta = prov.Meta()
			a.summary.SetProvenance(prov)
			a.summary.Set("cosmology", m.String())
			a.summary.Set("rows", len(zs))
			if out == "" {
				// A terminal table: one comment line for the model instead of
				// the full provenance, which files carry.
				t.Meta = survey.Meta{{Key: "cosmology", Value: m.String()}}
				return survey.Encode(a.stdout, t, survey.FormatCSV)
			}
			if err := survey.Write(out, t, survey.WriteOptions{}); err != nil {
				return err
			}
			a.note("wrote %d redshifts to %s (%s)", len(zs), out, m)
			return nil
		},
	})
}

// distanceTable computes the distances command's columns at each redshift.
func distanceTable(m *cosmo.Model, zs []float64, areaDeg2 float64) *survey.Table {
	h := m.LittleH()
	sr := areaDeg2 * (math.Pi / 180) * (math.Pi / 180)
	type colDef struct {
		name, unit, desc string
		f                func(z float64) float64
	}
	defs := []colDef{
		{"z", "", "redshift", func(z float64) float64 { return z }},
		{"comov_dist", "Mpc/h", "line-of-sight comoving distance", func(z float64) float64 { return m.ComovingDistance(z) * h }},
		{"comov_dist_mpc", "Mpc", "line-of-sight comoving distance", m.ComovingDistance},
		{"transverse_dist_mpc", "Mpc", "transverse comoving distance D_M", m.TransverseComovingDistance},
		{"ang_dist_mpc", "Mpc", "angular-diameter distance", m.AngularDiameterDistance},
		{"lum_dist_mpc", "Mpc", "luminosity distance", m.LuminosityDistance},
		{"dist_mod", "mag", "distance modulus 5 log10(D_L / 10 pc)", m.DistanceModulus},
		{"lookback_gyr", "Gyr", "lookback time", m.LookbackTime},
		{"hubble_e", "", "dimensionless Hubble rate E(z) = H(z)/H0", m.E},
		{"vol_mpch3", "(Mpc/h)^3", fmt.Sprintf("comoving volume from z = 0 over %.6g deg²", areaDeg2), func(z float64) float64 { return m.ComovingVolume(0, z, sr) * h * h * h }},
		{"growth", "", "linear growth factor D(z), D(0) = 1", m.Growth},
		{"growth_rate", "", "linear growth rate f = dlnD/dlna", m.GrowthRate},
	}
	t := &survey.Table{Name: "DISTANCES"}
	for _, d := range defs {
		c := survey.NewColumn(d.name, survey.Float64, len(zs))
		c.Unit, c.Desc = d.unit, d.desc
		for _, z := range zs {
			v := d.f(z)
			if z == 0 && d.name == "dist_mod" {
				v = math.Inf(-1) // D_L = 0: the modulus is −∞; written as a null
			}
			c.F = append(c.F, v)
		}
		for i, v := range c.F {
			if math.IsInf(v, 0) || math.IsNaN(v) {
				c.SetNull(i)
			}
		}
		t.Cols = append(t.Cols, c)
	}
	return t
}
