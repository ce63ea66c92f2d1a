package main

import (
	"path/filepath"
	"strings"

	"github.com/spf13/pflag"

	"github.com/filigree-survey/filigree/internal/figures"
	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/survey"
)

// figureInputs are the input-file flags shared by plot and report.
type figureInputs struct {
	fields, footprint, summary string
}

// register adds the input flags. The run's summary is --run-summary: the
// --summary flag of every command names the JSON file this command writes.
func (f *figureInputs) register(fs *pflag.FlagSet) {
	fs.StringVar(&f.fields, "fields", "", "the run's fields cube (run --fields): density image under the galaxies, survey edges")
	fs.StringVar(&f.footprint, "footprint", "", "the survey footprint (HEALPix map, MOC or region file) for the sky figure")
	fs.StringVar(&f.summary, "run-summary", "", "the run's JSON summary (run --summary): fractions, times, counts")
}

// load reads the run output and the optional inputs.
func (f *figureInputs) load(a *app, path string) (figures.Inputs, error) {
	var in figures.Inputs
	a.progress.Start("reading "+path, 0)
	t, err := survey.Read(path, survey.ReadOptions{})
	a.progress.Finish()
	if err != nil {
		return in, err
	}
	in.Table = t
	in.Name = strings.TrimSuffix(filepath.Base(path), filepath.Ext(path))
	if f.fields != "" {
		a.progress.Start("reading "+f.fields, 0)
		cf, err := survey.ReadCubeFile(f.fields)
		a.progress.Finish()
		if err != nil {
			return in, err
		}
		in.Fields = cf
	}
	if f.footprint != "" {
		fp, err := footprint.Open(f.footprint)
		if err != nil {
			return in, err
		}
		in.Footprint = fp
	}
	if f.summary != "" {
		s, err := figures.ReadSummary(f.summary)
		if err != nil {
			return in, err
		}
		in.Summary = s
	}
	return in, nil
}

func init() {
	var (
		inf       figureInputs
		kind, out string
		axis      string
		centre    float64
		thick     float64
		maxPoints int
	)
	register(&command{
		name:    "plot",
		summary: "draw one figure (wedge, slice, sky, n(z), fractions, density) of a run's output",
		usage:   "OUTPUT --kind KIND -o FILE.(png|svg|pdf) [--fields F] [--footprint F] [--run-summary F] [slab options]",
		example: `  # The cone diagram of the demo survey over its density, a 3° slab at Dec 11°:
  filigree plot lanternfish-web.fits --fields lanternfish-fields.fits --kind wedge \
      --slab-centre 11 --slab-thickness 3 -o wedge.png

  # A slice 20 Mpc/h thick through z = 40 Mpc/h, as SVG:
  filigree plot lanternfish-web.fits --fields lanternfish-fields.fits --kind slice \
      --axis z --slab-centre 40 --slab-thickness 20 -o slice.svg

  # The footprint on the sky, and the fractions from the run's summary:
  filigree plot lanternfish-web.fits --footprint footprint/lanternfish-map.fits --kind sky -o sky.pdf
  filigree plot lanternfish-web.fits --run-summary run-summary.json --kind fractions -o fractions.png`,
		flags: func(a *app, fs *pflag.FlagSet) {
			fs.StringVar(&kind, "kind", "", "the figure: "+strings.Join(figures.Kinds, ", "))
			fs.StringVarP(&out, "output", "o", "", "output figure; the extension picks the format (.png, .svg, .pdf)")
			inf.register(fs)
			fs.Float64Var(&centre, "slab-centre", 0, "slab centre: Dec in degrees (wedge) or the --axis coordinate in Mpc/h (slice); default the galaxies' median")
			fs.Float64Var(&thick, "slab-thickness", 0, "slab thickness: degrees of Dec (wedge, default 4) or Mpc/h (slice, default 2R)")
			fs.StringVar(&axis, "axis", "z", "slice normal: x, y or z")
			fs.IntVar(&maxPoints, "max-points", 40000, "most galaxies drawn per figure (every k-th is kept beyond that)")
		},
		run: func(a *app, fs *pflag.FlagSet, args []string) error {
			if len(args) != 1 {
				return usagef("plot takes one run output table")
			}
			if kind == "" {
				return usagef("plot needs --kind (%s)", strings.Join(figures.Kinds, ", "))
			}
			known := false
			for _, k := range figures.Kinds {
				known = known || k == kind
			}
			if !known {
				return usagef("--kind: expected one of %s, got %q", strings.Join(figures.Kinds, ", "), kind)
			}
			if out == "" {
				return usagef("plot needs -o FILE")
			}
			if _, err := figures.FormatOf(out); err != nil {
				return usagef("-o: %v", err)
			}
			if _, err := figures.ParseAxis(axis); err != nil {
				return usagef("--axis: %v", err)
			}
			if fs.Changed("slab-thickness") && !(thick > 0) {
				return usagef("--slab-thickness must be positive")
			}
			if maxPoints <= 0 {
				return usagef("--max-points must be positive")
			}
			in, err := inf.load(a, args[0])
			if err != nil {
				return err
			}
			opt := figures.Options{SlabCentre: centre, SlabThickness: thick, Axis: axis,
				HasCentre: fs.Changed("slab-centre"), HasThickness: fs.Changed("slab-thickness"), MaxPoints: maxPoints}
			a.progress.Start("drawing the "+kind+" figure", 0)
			f, err := figures.Draw(kind, in, opt)
			a.progress.Finish()
			if err != nil {
				return err
			}
			if err := f.Save(out); err != nil {
				return err
			}
			a.note("wrote the %s figure to %s", kind, out)
			a.summary.Set("figure", out)
			a.summary.Set("kind", kind)
			return nil
		},
	})
}

// missing says which optional inputs were not given, for the report.
func (f *figureInputs) missing() []string {
	var m []string
	if f.fields == "" {
		m = append(m, "no fields cube (--fields): no density image or survey edges")
	}
	if f.footprint == "" {
		m = append(m, "no footprint (--footprint): the sky figure shows galaxies only")
	}
	if f.summary == "" {
		m = append(m, "no run summary (--run-summary): fractions recounted, no step times")
	}
	return m
}
