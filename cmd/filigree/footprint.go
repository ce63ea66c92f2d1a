package main

import (
	"fmt"
	"math"

	"github.com/spf13/pflag"

	"github.com/filigree-survey/filigree/mask/edge"
	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/mask/selection"
	"github.com/filigree-survey/filigree/survey"
)

// fullSkyDeg2 is the whole sky, 4π sr in deg².
const fullSkyDeg2 = 41252.96124941928

func init() {
	var (
		cols    columnFlags
		out     string
		weights bool
		cf      cosmoFlags
		nzf     nzFlags
		comb    combineFlags
	)
	register(&command{
		name:    "footprint",
		summary: "footprint information, or applying a footprint to a catalogue",
		usage:   "info FOOTPRINT | apply FOOTPRINT CATALOGUE -o OUT",
		example: `  # Area, effective area and resolution of a HEALPix completeness map, a MOC or a region file:
  filigree footprint info completeness.fits
  filigree footprint info fields.reg

  # A survey mask minus a bright-star mask, intersected with a MOC:
  filigree footprint info survey_map.fits --minus stars.reg --and coverage_moc.fits

  # Add 'completeness' and 'in_footprint' columns to a catalogue:
  filigree footprint apply completeness.fits galaxies.parquet -o galaxies_fp.parquet

FOOTPRINT is a HEALPix map in FITS (values: completeness in [0, 1]), an IVOA
MOC in FITS, or a region file (see the README for the region format).`,
		flags: func(a *app, fs *pflag.FlagSet) {
			cols.register(fs)
			fs.StringVarP(&out, "output", "o", "", "output catalogue (apply)")
			fs.BoolVar(&weights, "weights", false, "apply: also add comov_dist, cart_x/y/z, weight (1/(completeness × n̄)) and edge_dist; n(z) from --nz, --like, or this catalogue")
			comb.register(fs)
			nzf.register(fs)
			cf.register(fs)
		},
		run: func(a *app, fs *pflag.FlagSet, args []string) error {
			if len(args) == 0 {
				return usagef("footprint needs an action: info or apply")
			}
			switch args[0] {
			case "info":
				if len(args) != 2 {
					return usagef("footprint info takes one footprint file")
				}
				return footprintInfo(a, fs, &comb, args[1])
			case "apply":
				if len(args) != 3 {
					return usagef("footprint apply takes a footprint file and a catalogue")
				}
				if out == "" {
					return usagef("footprint apply needs -o OUT")
				}
				var wo *weightOptions
				if weights {
					wo = &weightOptions{cf: &cf, nz: &nzf}
				}
				return footprintApply(a, fs, &cols, &comb, wo, args[1], args[2], out)
			}
			return usagef("unknown footprint action %q; expected info or apply", args[0])
		},
	})
}

// combineFlags combine the footprint with others: first every --or
// (union, completeness the maximum), then every --and (intersection,
// completeness multiplied), then every --minus (subtraction: zero where the
// other footprint is positive).
type combineFlags struct {
	or, and, minus []string
}

func (c *combineFlags) register(fs *pflag.FlagSet) {
	fs.StringArrayVar(&c.or, "or", nil, "union with another footprint file (repeatable)")
	fs.StringArrayVar(&c.and, "and", nil, "intersection with another footprint file (repeatable)")
	fs.StringArrayVar(&c.minus, "minus", nil, "subtract another footprint file, e.g. a star mask (repeatable)")
}

// open opens path and combines it as the flags say, noting every file
// in the provenance.
func (c *combineFlags) open(path string, prov *survey.Provenance) (footprint.Footprint, error) {
	f, err := footprint.Open(path)
	if err != nil {
		return nil, err
	}
	if err := prov.AddInput(path, -1); err != nil {
		return nil, err
	}
	for _, step := range []struct {
		files []string
		op    func(a, b footprint.Footprint) *footprint.Combined
	}{{c.or, footprint.Union}, {c.and, footprint.Intersect}, {c.minus, footprint.Subtract}} {
		for _, p := range step.files {
			g, err := footprint.Open(p)
			if err != nil {
				return nil, err
			}
			if err := prov.AddInput(p, -1); err != nil {
				return nil, err
			}
			f = step.op(f, g)
		}
	}
	return f, nil
}

func footprintInfo(a *app, fs *pflag.FlagSet, comb *combineFlags, path string) error {
	a.progress.Start("reading "+path, 0)
	prov := a.newProvenance(fs)
	f, err := comb.open(path, prov)
	if err != nil {
		return err
	}
	area, eff, res := f.Area(), f.EffectiveArea(), f.Resolution()
	a.progress.Finish()
	w := a.stdout
	fmt.Fprintf(w, "footprint:      %s\n", path)
	fmt.Fprintf(w, "kind:           %s\n", f.Describe())
	fmt.Fprintf(w, "area:           %.6g deg² (completeness > 0)\n", area)
	fmt.Fprintf(w, "effective area: %.6g deg² (completeness-weighted)\n", eff)
	fmt.Fprintf(w, "coverage:       %.6g of the sky\n", area/fullSkyDeg2)
	if res > 0 {
		fmt.Fprintf(w, "resolution:     %.6g deg\n", res)
	} else {
		fmt.Fprintf(w, "resolution:     exact shapes\n")
	}
	a.summary.SetProvenance(prov)
	a.summary.Set("footprint", path)
	a.summary.Set("kind", f.Describe())
	a.summary.Set("area_deg2", area)
	a.summary.Set("effective_area_deg2", eff)
	a.summary.Set("coverage_fraction", area/fullSkyDeg2)
	a.summary.Set("resolution_deg", res)
	return nil
}

// weightOptions ask footprint apply for distances, mass weights and edge distances.
type weightOptions struct {
	cf *cosmoFlags
	nz *nzFlags
}

func footprintApply(a *app, fs *pflag.FlagSet, cols *columnFlags, comb *combineFlags, wo *weightOptions, fpPath, catPath, out string) error {
	prov := a.newProvenance(fs)
	f, err := comb.open(fpPath, prov)
	if err != nil {
		return err
	}
	a.progress.Start("reading "+catPath, 0)
	t, err := survey.Read(catPath, survey.ReadOptions{HDU: cols.hdu})
	if err != nil {
		return err
	}
	guess := survey.GuessSky
	if wo != nil {
		guess = survey.Guess // distances need the redshift
	}
	m, notes, err := guess(t, cols.mapping())
	if err != nil {
		return fmt.Errorf("%s: %w", catPath, err)
	}
	for _, n := range notes {
		a.note("%s", n)
	}
	m.ID = "" // duplicates do not matter here
	if wo == nil {
		m.Z, m.Weight = "", "" // only the sky position matters
	}
	pos, rep, err := survey.Validate(t, m, cols.validateOptions(catPath))
	if err != nil {
		return err
	}
	if rep.Dropped > 0 {
		a.note("dropped %d bad rows", rep.Dropped)
		t = t.Select(pos.Row)
	}
	if rep.Wrapped > 0 {
		a.note("%d RA values outside [0, 360) wrapped", rep.Wrapped)
	}
	n := pos.Len()
	comp := survey.NewColumn("completeness", survey.Float64, n)
	comp.F = comp.F[:n]
	comp.Desc = "footprint completeness at the galaxy's position, 0 outside"
	footprint.CompletenessMany(f, comp.F, pos.RA, pos.Dec)
	in := survey.NewColumn("in_footprint", survey.Bool, n)
	inside := 0
	for _, c := range comp.F {
		in.B = append(in.B, c > 0)
		if c > 0 {
			inside++
		}
	}
	in.Desc = "completeness > 0"
	for _, c := range []*survey.Column{comp, in} {
		if old := t.Col(c.Name); old != nil {
			return fmt.Errorf("%s: already has a column %q; rename it first", catPath, c.Name)
		}
		if err := t.Add(c); err != nil {
			return err
		}
	}
	if err := prov.AddInput(catPath, int64(rep.Rows)); err != nil {
		return err
	}
	if wo != nil {
		if err := addWeights(a, t, pos, comp.F, f, wo, prov); err != nil {
			return err
		}
	}
	t.Meta = mergeMeta(t.Meta, prov.Meta())
	if err := survey.Write(out, t, survey.WriteOptions{}); err != nil {
		return err
	}
	a.note("%d of %d galaxies inside the footprint; wrote %s", inside, n, out)
	a.summary.SetProvenance(prov)
	a.summary.Set("rows", n)
	a.summary.Set("in_footprint", inside)
	a.summary.Set("dropped", rep.Dropped)
	return nil
}

// mergeMeta keeps the input's own metadata, except an earlier run's
// provenance, and appends this run's.
func mergeMeta(in, prov survey.Meta) survey.Meta {
	var out survey.Meta
	for _, kv := range in {
		if len(kv.Key) >= 9 && kv.Key[:9] == "filigree." {
			continue
		}
		out = append(out, kv)
	}
	return append(out, prov...)
}

// addWeights adds comov_dist, cart_x/y/z, weight and edge_dist to t (whose rows are
// pos): the mass weight 1/(completeness × n̄(z)) × the user weight, with
// n̄ from the n(z) options or estimated from the galaxies inside the
// footprint, and the distance to the nearest boundary of the surveyed
// volume (footprint edges and holes, and the n(z) range's radial limits).
func addWeights(a *app, t *survey.Table, pos *survey.Positions, comp []float64, f footprint.Footprint, wo *weightOptions, prov *survey.Provenance) error {
	m, err := wo.cf.model()
	if err != nil {
		return err
	}
	addCosmology(prov, m)
	n := pos.Len()
	sr := f.EffectiveArea() * (math.Pi / 180) * (math.Pi / 180)
	if !(sr > 0) {
		return fmt.Errorf("footprint has no area; no weights")
	}
	var nbar *selection.NBar
	if wo.nz.table != "" || wo.nz.like != "" {
		if nbar, err = wo.nz.nbar(a, &columnFlags{}, m, sr, prov); err != nil {
			return err
		}
	} else {
		var zin []float64
		for i, c := range comp {
			if c > 0 {
				zin = append(zin, pos.Z[i])
			}
		}
		nz, err := selection.EstimateNZ(zin, selection.EstimateOptions{Width: wo.nz.width, Smooth: wo.nz.smooth})
		if err != nil {
			return fmt.Errorf("n(z) of the galaxies inside the footprint: %w", err)
		}
		for _, kv := range nz.Binning.KeyValues() {
			prov.Params = append(prov.Params, survey.KeyValue{Key: kv[0], Value: kv[1]})
		}
		a.note("n(z) from the %d galaxies inside the footprint: %d bins of width %.4g, smoothing σ = %.4g (%s)", len(zin), len(nz.Counts), nz.Binning.Width, nz.Binning.Smooth, nz.Binning.WidthRule)
		if nbar, err = selection.NewNBar(nz, m, sr); err != nil {
			return err
		}
	}
	dist := survey.NewColumn("comov_dist", survey.Float64, n)
	dist.F, dist.Unit, dist.Desc = make([]float64, n), "Mpc/h", "line-of-sight comoving distance"
	if err := m.ComovingDistancesMpch(dist.F, pos.Z); err != nil {
		return err
	}
	w := survey.NewColumn("weight", survey.Float64, n)
	w.F, w.Unit, w.Desc = make([]float64, n), "(Mpc/h)^3", "mass weight: comoving volume per galaxy, 1/(completeness × n̄(z)) × user weight"
	werr := selection.Weights(w.F, pos.Z, comp, pos.Weight, nbar)
	noWeight := 0
	for i, v := range w.F {
		if math.IsNaN(v) {
			w.SetNull(i)
			noWeight++
		}
	}
	if werr != nil {
		a.note("%d galaxies have no weight (outside the footprint or the n(z) range); first: %v", noWeight, werr)
	}
	rmin, rmax := nbar.DistEdges[0], nbar.DistEdges[len(nbar.DistEdges)-1]
	vol, err := edge.NewVolume(f, rmin, rmax, 0)
	if err != nil {
		return err
	}
	ed := survey.NewColumn("edge_dist", survey.Float64, n)
	ed.F, ed.Unit, ed.Desc = make([]float64, n), "Mpc/h", "distance to the nearest boundary of the surveyed volume (0 outside)"
	vol.Distances(ed.F, pos.RA, pos.Dec, dist.F)
	a.note("edge_dist: radial limits %.1f–%.1f Mpc/h from the n(z) range; error at most %.2f Mpc/h at %.0f Mpc/h", rmin, rmax, vol.ErrorBound(rmax), rmax)
	// Equatorial Cartesian positions, observer at the origin (design
	// conventions: x toward RA 0, Dec 0; z to the north celestial pole).
	var cart [3]*survey.Column
	for i, ax := range []string{"x", "y", "z"} {
		cart[i] = survey.NewColumn("cart_"+ax, survey.Float64, n)
		cart[i].F, cart[i].Unit, cart[i].Desc = make([]float64, n), "Mpc/h", "equatorial Cartesian position, observer at the origin"
	}
	for i := range n {
		ra, dec := pos.RA[i]*math.Pi/180, pos.Dec[i]*math.Pi/180
		r := dist.F[i]
		cart[0].F[i] = r * math.Cos(dec) * math.Cos(ra)
		cart[1].F[i] = r * math.Cos(dec) * math.Sin(ra)
		cart[2].F[i] = r * math.Sin(dec)
	}
	for _, c := range []*survey.Column{dist, cart[0], cart[1], cart[2], w, ed} {
		if t.Col(c.Name) != nil {
			return fmt.Errorf("the catalogue already has a column %q; rename it first", c.Name)
		}
		if err := t.Add(c); err != nil {
			return err
		}
	}
	prov.Params = append(prov.Params, survey.KeyValue{Key: "edge.error_at_rmax_mpch", Value: fmt.Sprint(vol.ErrorBound(rmax))})
	a.summary.Set("weights_missing", noWeight)
	a.summary.Set("survey_volume_mpch3", nbar.TotalVolume())
	return nil
}
