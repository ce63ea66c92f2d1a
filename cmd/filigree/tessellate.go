package main

import (
	"errors"
	"fmt"
	"math"
	"os"
	"runtime"
	"strconv"
	"strings"
	"time"

	"github.com/spf13/pflag"

	"github.com/filigree-survey/filigree/reconstruct/tess"
	"github.com/filigree-survey/filigree/survey"
)

func init() {
	var (
		xyzCols string
		box     float64
		out     string
		hdu     string
		seed    uint64
	)
	register(&command{
		name:    "tessellate",
		summary: "Delaunay tessellation of 3D points: a summary, or the tetrahedra as a table",
		usage:   "POINTS [--xyz-cols x,y,z] [--box L] [-o TETS]",
		example: `  # Tessellate a simulation snapshot in a periodic box of side 500 Mpc/h:
  filigree tessellate halos.parquet --xyz-cols px,py,pz --box 500 --summary tess.json

  # Write the tetrahedra (0-based row numbers of the input) as a table:
  filigree tessellate points.csv -o tets.parquet`,
		flags: func(a *app, fs *pflag.FlagSet) {
			fs.StringVar(&xyzCols, "xyz-cols", "", "the x,y,z position columns (guessed when absent)")
			fs.Float64Var(&box, "box", 0, "periodic box of side L (Mpc/h): points in [0, L)^3")
			fs.StringVarP(&out, "output", "o", "", "write one row per tetrahedron (v0..v3) to this table file")
			fs.StringVar(&hdu, "hdu", "", "FITS extension by 0-based index or EXTNAME")
			fs.Uint64Var(&seed, "seed", 1, "seed of the randomised insertion order (the tessellation itself does not depend on it)")
		},
		run: func(a *app, fs *pflag.FlagSet, args []string) error {
			if len(args) != 1 {
				return usagef("tessellate takes one points file")
			}
			if fs.Changed("box") && !(box > 0) || math.IsInf(box, 0) {
				return usagef("--box must be a positive length")
			}
			path := args[0]
			sch, err := survey.Open(path, survey.ReadOptions{HDU: hdu})
			if err != nil {
				return err
			}
			var have []string
			for _, c := range sch.Schema().Cols {
				have = append(have, c.Name)
			}
			sch.Close()
			cols, note, err := survey.GuessXYZ(path, have, xyzCols)
			if err != nil {
				return err
			}
			if note != "" {
				a.note("%s", note)
			}
			a.progress.Start("reading "+path, 0)
			xyz, err := survey.ReadXYZ(path, survey.ReadOptions{HDU: hdu}, cols)
			if err != nil {
				return err
			}
			n := len(xyz) / 3
			if box > 0 {
				for i, v := range xyz {
					if !(v >= 0 && v < box) {
						return &survey.InputError{File: path, Row: int64(i/3 + 1), Byte: -1, Column: cols[i%3],
							Msg: fmt.Sprintf("expected a position in [0, %g) for --box %g, found %g", box, box, v)}
					}
				}
			}
			a.progress.Start(fmt.Sprintf("tessellating %d points", n), 0)
			t0 := time.Now()
			tz, err := tess.New(xyz, tess.Options{Seed: seed, Periodic: box > 0, L: box})
			secs := time.Since(t0).Seconds()
			a.progress.Finish()
			var te *tess.InputError
			if errors.As(err, &te) {
				return &survey.InputError{File: path, Row: int64(te.Row + 1), Byte: -1, Column: cols[te.Col],
					Msg: fmt.Sprintf("value %g: %s", te.Value, te.Reason)}
			}
			if err != nil {
				return fmt.Errorf("%s: %w", path, err)
			}
			peak := peakBytes()
			prov := a.newProvenance(fs)
			if err := prov.AddInput(path, int64(n)); err != nil {
				return err
			}
			tets := tz.Tets()
			nt := len(tets) / 4
			a.summary.SetProvenance(prov)
			a.summary.Set("points", n)
			a.summary.Set("duplicates_merged", tz.Duplicates())
			a.summary.Set("tetrahedra", nt)
			a.summary.Set("tetrahedra_per_point", float64(nt)/float64(n))
			a.summary.Set("seconds", secs)
			a.summary.Set("peak_bytes", peak)
			a.summary.Set("periodic_box", box)
			fmt.Fprintf(a.stdout, "%s: %d points (%d exact duplicates merged), %d tetrahedra (%.4f per point) in %.3f s; peak memory %.0f MiB\n",
				path, n, tz.Duplicates(), nt, float64(nt)/float64(n), secs, float64(peak)/(1<<20))
			if out == "" {
				return nil
			}
			t := &survey.Table{Name: "TETRAHEDRA", Meta: prov.Meta()}
			for k := 0; k < 4; k++ {
				c := survey.NewColumn("v"+strconv.Itoa(k), survey.Int64, nt)
				c.Desc = "0-based row of the input points file"
				for j := 0; j < nt; j++ {
					c.I = append(c.I, int64(tets[4*j+k]))
				}
				t.Cols = append(t.Cols, c)
			}
			if err := survey.Write(out, t, survey.WriteOptions{}); err != nil {
				return err
			}
			a.note("wrote %d tetrahedra to %s", nt, out)
			return nil
		},
	})
}

// peakBytes returns the process's peak resident memory (VmHWM) where the
// system reports it, else the Go runtime's total obtained from the OS.
func peakBytes() int64 {
	if b, err := os.ReadFile("/proc/self/status"); err == nil {
		for _, line := range strings.Split(string(b), "\n") {
			if f := strings.Fields(line); len(f) >= 2 && f[0] == "VmHWM:" {
				if kb, err := strconv.ParseInt(f[1], 10, 64); err == nil {
					return kb << 10
				}
			}
		}
	}
	var ms runtime.MemStats
	runtime.ReadMemStats(&ms)
	return int64(ms.Sys)
}
