package main

import (
	"fmt"
	"math"
	"time"

	"github.com/spf13/pflag"

	"github.com/filigree-survey/filigree/reconstruct/dtfe"
	"github.com/filigree-survey/filigree/reconstruct/grid"
	"github.com/filigree-survey/filigree/reconstruct/tess"
	"github.com/filigree-survey/filigree/survey"
)

func init() {
	var (
		xyzCols, weightCol, out, cube, hdu string
		box                                float64
		n                                  int
		average                            bool
		seed                               uint64
	)
	register(&command{
		name:    "density",
		summary: "DTFE density at every point of a 3D point set, and optionally on a grid",
		usage:   "POINTS -o OUT [--xyz-cols x,y,z] [--weight-col W] [--box L] [--grid N --cube FILE.fits]",
		example: `  # Densities of a simulation's haloes in a periodic box, and a 256³ cube:
  filigree density halos.parquet --xyz-cols px,py,pz --box 500 --grid 256 --cube rho.fits -o halos-rho.parquet

  # A catalogue already in Cartesian coordinates (cart_x, cart_y, cart_z guessed), weighted:
  filigree density weighted.fits --weight-col weight -o density.fits`,
		flags: func(a *app, fs *pflag.FlagSet) {
			fs.StringVarP(&out, "output", "o", "", "output table: the input's columns plus dtfe_density and dtfe_hull")
			fs.StringVar(&xyzCols, "xyz-cols", "", "the x,y,z position columns (guessed when absent)")
			fs.StringVar(&weightCol, "weight-col", "", "mass of each point (default 1)")
			fs.Float64Var(&box, "box", 0, "periodic box of side L (Mpc/h): points in [0, L)^3")
			fs.IntVar(&n, "grid", 0, "also grid the field on N³ cells (over the box, or the points' bounding cube)")
			fs.StringVar(&cube, "cube", "", "FITS file for the grid (needs --grid)")
			fs.BoolVar(&average, "average-cells", false, "grid values are cell averages (2³ sub-samples) instead of values at cell centres")
			fs.StringVar(&hdu, "hdu", "", "FITS extension by 0-based index or EXTNAME")
			fs.Uint64Var(&seed, "seed", 1, "seed of the insertion order (the result does not depend on it)")
		},
		run: func(a *app, fs *pflag.FlagSet, args []string) error {
			if len(args) != 1 {
				return usagef("density takes one points file")
			}
			if out == "" {
				return usagef("density needs -o OUT")
			}
			if fs.Changed("box") && (!(box > 0) || math.IsInf(box, 0)) {
				return usagef("--box must be a positive length")
			}
			if (cube != "") != (n > 0) {
				return usagef("--grid N and --cube FILE go together")
			}
			if n > 0 && (n < 2 || n%2 == 1 || n > 2048) {
				return usagef("--grid must be an even number from 2 to 2048")
			}
			path := args[0]
			t, err := survey.Read(path, survey.ReadOptions{HDU: hdu})
			if err != nil {
				return err
			}
			var have []string
			for _, c := range t.Cols {
				have = append(have, c.Name)
			}
			cols, note, err := survey.GuessXYZ(path, have, xyzCols)
			if err != nil {
				return err
			}
			if note != "" {
				a.note("%s", note)
			}
			xyz, err := survey.ReadXYZ(path, survey.ReadOptions{HDU: hdu}, cols)
			if err != nil {
				return err
			}
			np := len(xyz) / 3
			if box > 0 {
				for i, v := range xyz {
					if !(v >= 0 && v < box) {
						return &survey.InputError{File: path, Row: int64(i/3 + 1), Byte: -1, Column: cols[i%3],
							Msg: fmt.Sprintf("expected a position in [0, %g) for --box %g, found %g", box, box, v)}
					}
				}
			}
			var w []float64
			if weightCol != "" {
				c := t.Col(weightCol)
				if c == nil || c.Kind != survey.Float64 {
					return usagef("--weight-col %q: no such floating-point column in %s", weightCol, path)
				}
				for i, v := range c.F {
					if c.IsNull(i) || !(v >= 0) || math.IsInf(v, 0) {
						return &survey.InputError{File: path, Row: int64(i + 1), Byte: -1, Column: weightCol, Msg: fmt.Sprintf("expected a finite mass ≥ 0, found %v", v)}
					}
				}
				w = c.F
			}
			prov := a.newProvenance(fs)
			if err := prov.AddInput(path, int64(np)); err != nil {
				return err
			}
			t0 := time.Now()
			a.progress.Start(fmt.Sprintf("tessellating %d points", np), 0)
			tz, err := tess.New(xyz, tess.Options{Seed: seed, Periodic: box > 0, L: box})
			a.progress.Finish()
			if err != nil {
				return fmt.Errorf("%s: %w", path, err)
			}
			tTess := time.Since(t0).Seconds()
			a.progress.Start("DTFE densities", 0)
			f, err := dtfe.New(tz, xyz, w)
			a.progress.Finish()
			if err != nil {
				return fmt.Errorf("%s: %w", path, err)
			}
			tDens := time.Since(t0).Seconds() - tTess
			dc := survey.NewColumn("dtfe_density", survey.Float64, 0)
			dc.F, dc.Unit, dc.Desc = f.Density(), "(h/Mpc)^3", "DTFE density 4 m / (contiguous Voronoi volume), m the point's mass (1 without --weight-col)"
			hc := survey.NewColumn("dtfe_hull", survey.Bool, 0)
			hc.Desc = "the point's Voronoi cell is cut by the convex hull: its density is biased high"
			hc.B = make([]bool, np)
			onHull := 0
			if h := f.Hull(); h != nil {
				copy(hc.B, h)
				for _, b := range h {
					if b {
						onHull++
					}
				}
			}
			for _, c := range []*survey.Column{dc, hc} {
				if t.Col(c.Name) != nil {
					return fmt.Errorf("%s already has a column %q; rename it first", path, c.Name)
				}
				if err := t.Add(c); err != nil {
					return err
				}
			}
			t.Meta = mergeMeta(t.Meta, prov.Meta())
			if err := survey.Write(out, t, survey.WriteOptions{}); err != nil {
				return err
			}
			a.note("%d points (%d exact duplicates merged, %d on the hull): DTFE densities in %.2f s after a %.2f s tessellation; wrote %s",
				np, tz.Duplicates(), onHull, tDens, tTess, out)
			a.summary.SetProvenance(prov)
			a.summary.Set("points", np)
			a.summary.Set("duplicates", tz.Duplicates())
			a.summary.Set("on_hull", onHull)
			a.summary.Set("tessellation_seconds", tTess)
			a.summary.Set("density_seconds", tDens)
			a.summary.Set("integral", f.Integral())
			if n > 0 {
				g := grid.Geometry{N: n, L: box}
				if box == 0 {
					lo, hi := [3]float64{math.Inf(1), math.Inf(1), math.Inf(1)}, [3]float64{math.Inf(-1), math.Inf(-1), math.Inf(-1)}
					for i := 0; i < len(xyz); i += 3 {
						for ax := 0; ax < 3; ax++ {
							lo[ax], hi[ax] = math.Min(lo[ax], xyz[i+ax]), math.Max(hi[ax], xyz[i+ax])
						}
					}
					for ax := 0; ax < 3; ax++ {
						g.L = math.Max(g.L, hi[ax]-lo[ax])
					}
					for ax := 0; ax < 3; ax++ {
						g.Origin[ax] = 0.5*(lo[ax]+hi[ax]) - 0.5*g.L
					}
				}
				t1 := time.Now()
				a.progress.Start(fmt.Sprintf("DTFE on a %d³ grid", n), 0)
				rho := make([]float64, g.Len())
				var outside int
				sampling := "cell centres"
				if average {
					outside = f.AverageCells(rho, g, 2)
					sampling = "cell averages of 2x2x2 sub-samples"
				} else {
					outside = f.SampleNodes(rho, g)
				}
				a.progress.Finish()
				data := make([]float32, len(rho))
				for i, v := range rho {
					data[i] = float32(v) // NaN outside the hull stays NaN (blank)
				}
				cards := []survey.HeaderCard{
					{Key: "GRIDN", Value: int64(g.N), Comment: "cells per side"},
					{Key: "BOXSIZE", Value: g.L, Comment: "[Mpc/h] side of the grid"},
					{Key: "CELLSIZE", Value: g.H(), Comment: "[Mpc/h] cell size"},
					{Key: "ORIGINX", Value: g.Origin[0], Comment: "[Mpc/h] corner of cell (0,0,0), x"},
					{Key: "ORIGINY", Value: g.Origin[1], Comment: "[Mpc/h] corner of cell (0,0,0), y"},
					{Key: "ORIGINZ", Value: g.Origin[2], Comment: "[Mpc/h] corner of cell (0,0,0), z"},
					{Key: "SAMPLING", Value: sampling, Comment: "how grid values relate to the field"},
					{Key: "PERIODIC", Value: box > 0, Comment: "periodic box"},
				}
				if err := survey.WriteCubes(cube, []survey.Cube{{Name: "DTFE_DENSITY", Shape: [3]int{n, n, n}, Data: data, Unit: "(h/Mpc)^3", Cards: cards}}, cards, prov.Meta()); err != nil {
					return err
				}
				a.note("grid: %d³ cells of %.4g Mpc/h (%s) in %.2f s; %d cells outside the hull are blank (NaN); wrote %s",
					n, g.H(), sampling, time.Since(t1).Seconds(), outside, cube)
				a.summary.Set("grid_seconds", time.Since(t1).Seconds())
				a.summary.Set("grid_outside", outside)
			}
			return nil
		},
	})
}
