package main

import (
	"fmt"
	"math"
	"strings"
	"time"

	"github.com/spf13/pflag"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/mask/randoms"
	"github.com/filigree-survey/filigree/mask/selection"
	"github.com/filigree-survey/filigree/survey"
)

// nzFlags choose the radial selection: a table of (z, n) or an estimate
// from a catalogue's redshifts. Later commands (run) share them.
type nzFlags struct {
	table, cols, kind string
	like              string
	width, smooth     float64
}

func (f *nzFlags) register(fs *pflag.FlagSet) {
	fs.StringVar(&f.table, "nz", "", "n(z) table: bin centres in z and counts per bin (or densities with --nz-kind density)")
	fs.StringVar(&f.cols, "nz-cols", "", "the z,n columns of the --nz table (default: its first two columns)")
	fs.StringVar(&f.kind, "nz-kind", "counts", "what the --nz table's n holds: counts (galaxies per bin) or density ((h/Mpc)^3)")
	fs.StringVar(&f.like, "like", "", "estimate n(z) from this catalogue's redshifts")
	fs.Float64Var(&f.width, "nz-width", 0, "bin width in z of the estimated n(z) (default: max(0.005, Rice rule))")
	fs.Float64Var(&f.smooth, "nz-smooth", 0, "Gaussian smoothing of the estimated n(z) in z (default one bin width; negative: none)")
}

// nbar builds n̄(z) under model m over the effective solid angle sr of the
// footprint and records its inputs and binning in the provenance.
func (f *nzFlags) nbar(a *app, cols *columnFlags, m *cosmo.Model, sr float64, prov *survey.Provenance) (*selection.NBar, error) {
	switch {
	case f.table != "" && f.like != "":
		return nil, usagef("give --nz or --like, not both")
	case f.table != "":
		t, err := survey.Read(f.table, survey.ReadOptions{})
		if err != nil {
			return nil, err
		}
		zc, nc := "", ""
		if f.cols != "" {
			p := strings.Split(f.cols, ",")
			if len(p) != 2 {
				return nil, usagef("--nz-cols: expected two names, got %q", f.cols)
			}
			zc, nc = strings.TrimSpace(p[0]), strings.TrimSpace(p[1])
		} else if len(t.Cols) >= 2 {
			zc, nc = t.Cols[0].Name, t.Cols[1].Name
		} else {
			return nil, fmt.Errorf("%s: an n(z) table needs two columns (z and n)", f.table)
		}
		var kind selection.TableKind
		switch f.kind {
		case "counts":
			kind = selection.CountsPerBin
		case "density":
			kind = selection.DensityMpch3
		default:
			return nil, usagef("--nz-kind: expected counts or density, got %q", f.kind)
		}
		if err := prov.AddInput(f.table, int64(t.Len())); err != nil {
			return nil, err
		}
		return selection.NBarFromTable(f.table, t, zc, nc, kind, m, sr)
	case f.like != "":
		t, err := survey.Read(f.like, survey.ReadOptions{HDU: cols.hdu})
		if err != nil {
			return nil, err
		}
		mp, notes, err := survey.Guess(t, cols.mapping())
		if err != nil {
			return nil, fmt.Errorf("%s: %w", f.like, err)
		}
		for _, n := range notes {
			a.note("%s", n)
		}
		pos, rep, err := survey.Validate(t, mp, cols.validateOptions(f.like))
		if err != nil {
			return nil, err
		}
		if rep.Dropped > 0 {
			a.note("dropped %d bad rows of %s", rep.Dropped, f.like)
		}
		nz, err := selection.EstimateNZ(pos.Z, selection.EstimateOptions{Width: f.width, Smooth: f.smooth})
		if err != nil {
			return nil, fmt.Errorf("%s: %w", f.like, err)
		}
		for _, kv := range nz.Binning.KeyValues() {
			prov.Params = append(prov.Params, survey.KeyValue{Key: kv[0], Value: kv[1]})
		}
		a.note("n(z) from %s: %d bins of width %.4g in z, Gaussian smoothing σ = %.4g (%s)", f.like, len(nz.Counts), nz.Binning.Width, nz.Binning.Smooth, nz.Binning.WidthRule)
		if err := prov.AddInput(f.like, int64(rep.Rows)); err != nil {
			return nil, err
		}
		return selection.NewNBar(nz, m, sr)
	}
	return nil, usagef("no n(z): give --nz TABLE or --like CATALOGUE")
}

func init() {
	var (
		cf   cosmoFlags
		cols columnFlags
		nzf  nzFlags
		n    int
		seed uint64
		out  string
	)
	register(&command{
		name:    "randoms",
		summary: "random catalogue following a footprint's completeness and an n(z)",
		usage:   "FOOTPRINT (--nz TABLE | --like CATALOGUE) -n N -o OUT",
		example: `  # Ten times as many randoms as galaxies, with the n(z) estimated from the galaxies:
  filigree randoms completeness.fits --like galaxies.fits -n 5000000 -o randoms.parquet

  # From a table of bin centres and counts, in a region file's footprint:
  filigree randoms fields.reg --nz nz.csv --nz-cols zmid,count -n 100000 --seed 7 -o r.fits`,
		flags: func(a *app, fs *pflag.FlagSet) {
			nzf.register(fs)
			fs.IntVarP(&n, "number", "n", 0, "number of randoms")
			fs.Uint64Var(&seed, "seed", 1, "random seed (same seed, same randoms, whatever the number of threads)")
			fs.StringVarP(&out, "output", "o", "", "output catalogue")
			cols.register(fs)
			cf.register(fs)
		},
		run: func(a *app, fs *pflag.FlagSet, args []string) error {
			if len(args) != 1 {
				return usagef("randoms takes one footprint file")
			}
			if n <= 0 {
				return usagef("-n must be a positive number of randoms")
			}
			if out == "" {
				return usagef("randoms needs -o OUT")
			}
			fp, err := footprint.Open(args[0])
			if err != nil {
				return err
			}
			prov := a.newProvenance(fs)
			if err := prov.AddInput(args[0], -1); err != nil {
				return err
			}
			m, err := cf.model()
			if err != nil {
				return err
			}
			addCosmology(prov, m)
			sr := fp.EffectiveArea() * (math.Pi / 180) * (math.Pi / 180)
			nbar, err := nzf.nbar(a, &cols, m, sr, prov)
			if err != nil {
				return err
			}
			a.progress.Start(fmt.Sprintf("drawing %d randoms", n), 0)
			t0 := time.Now()
			s, err := randoms.NewSampler(fp, nbar, m, 0)
			if err != nil {
				return err
			}
			ra, dec, z, err := s.Sample(n, seed)
			if err != nil {
				return err
			}
			secs := time.Since(t0).Seconds()
			a.progress.Finish()
			if v := s.Stats().EnvelopeViolations; v > 0 {
				a.note("warning: %d draws exceeded their pixel's completeness envelope (a footprint feature finer than the sampling grid); those regions are slightly under-sampled", v)
			}
			t := &survey.Table{Name: "RANDOMS", Meta: prov.Meta()}
			for _, c := range []struct {
				name, unit, desc string
				v                []float64
			}{
				{"ra", "deg", "right ascension (ICRS)", ra},
				{"dec", "deg", "declination (ICRS)", dec},
				{"z", "", "redshift drawn from n(z)", z},
			} {
				col := survey.NewColumn(c.name, survey.Float64, 0)
				col.F, col.Unit, col.Desc = c.v, c.unit, c.desc
				t.Cols = append(t.Cols, col)
			}
			if err := survey.Write(out, t, survey.WriteOptions{}); err != nil {
				return err
			}
			a.note("wrote %d randoms to %s in %.2f s", n, out, secs)
			a.summary.SetProvenance(prov)
			a.summary.Set("rows", n)
			a.summary.Set("seconds", secs)
			a.summary.Set("effective_area_deg2", fp.EffectiveArea())
			a.summary.Set("envelope_violations", s.Stats().EnvelopeViolations)
			return nil
		},
	})
}
