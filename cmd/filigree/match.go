package main

import (
	"errors"
	"fmt"
	"math"
	"strconv"
	"strings"
	"time"

	"github.com/spf13/pflag"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/survey"
	"github.com/filigree-survey/filigree/survey/match"
)

// matchFlags are the options of `filigree match`.
type matchFlags struct {
	cols                  columnFlags
	cf                    cosmoFlags
	radius                string
	radiusMpc             float64
	all, inner            bool
	dz, dv                float64
	on, suffix, out       string
	rightRA, rightDec     string
	rightZ, rightHDU      string
	mode                  string // "sky", "3d" or "key", set by check
	radiusDeg             float64
	leftKey, rightKeyName string
	renamed               []string // right columns given the suffix
}

func (f *matchFlags) register(fs *pflag.FlagSet) {
	fs.StringVar(&f.radius, "radius", "1arcsec", "sky match radius with its unit: arcsec, arcmin or deg (e.g. 1.5arcsec)")
	fs.Float64Var(&f.radiusMpc, "radius-mpc", 0, "match in 3-d instead, within this comoving distance in Mpc/h (positions from RA, Dec, z and the cosmology)")
	fs.StringVar(&f.on, "on", "", "match by equal key values instead: LEFT_COL=RIGHT_COL, or COL for the same name on both sides (integer or text columns)")
	fs.BoolVar(&f.all, "all", false, "one output row per counterpart instead of the nearest only")
	fs.BoolVar(&f.inner, "inner", false, "inner join: drop left rows without a counterpart (default: keep them with nulls)")
	fs.Float64Var(&f.dz, "dz", 0, "sky match: also require |z_left − z_right| ≤ DZ")
	fs.Float64Var(&f.dv, "dv", 0, "sky match: also require c|z_left − z_right|/(1 + z_left) ≤ DV km/s")
	fs.StringVar(&f.suffix, "suffix", "_r", "suffix for right columns whose names clash with left ones")
	fs.StringVar(&f.rightRA, "right-ra-col", "", "RA column of RIGHT (guessed when absent)")
	fs.StringVar(&f.rightDec, "right-dec-col", "", "Dec column of RIGHT (guessed when absent)")
	fs.StringVar(&f.rightZ, "right-z-col", "", "redshift column of RIGHT (guessed when needed and absent)")
	fs.StringVar(&f.rightHDU, "right-hdu", "", "FITS extension of RIGHT by 0-based index or EXTNAME (default: the first table)")
	fs.StringVarP(&f.out, "output", "o", "", "output catalogue (.fits, .csv, .parquet or .arrow)")
	f.cols.register(fs)
	// Weights and IDs play no part in matching: their columns are carried
	// through like any other, and their duplicate and sign checks would
	// only reject valid catalogues.
	_ = fs.MarkHidden("weight-col")
	_ = fs.MarkHidden("id-col")
	for name, usage := range map[string]string{
		"ra-col":   "RA column of LEFT (guessed from common names when absent)",
		"dec-col":  "Dec column of LEFT (guessed when absent)",
		"z-col":    "redshift column of LEFT (guessed when needed and absent)",
		"hdu":      "FITS extension of LEFT by 0-based index or EXTNAME (default: the first table)",
		"radians":  "RA and Dec of both catalogues are in radians (default degrees)",
		"strict":   "reject RA outside [0, 360) in either catalogue instead of wrapping it",
		"drop-bad": "leave out bad rows of either catalogue (and say how many) instead of stopping",
	} {
		fs.Lookup(name).Usage = usage
	}
	f.cf.register(fs)
}

// parseRadius reads an angle with its unit (arcsec, arcmin or deg, spaces
// allowed between) and returns degrees.
func parseRadius(s string) (float64, error) {
	t := strings.TrimSpace(s)
	for _, u := range []struct {
		name  string
		scale float64
	}{{"arcsec", 1.0 / 3600}, {"arcmin", 1.0 / 60}, {"deg", 1}} {
		if v, ok := strings.CutSuffix(t, u.name); ok {
			x, err := strconv.ParseFloat(strings.TrimSpace(v), 64)
			if err != nil || !(x >= 0) || math.IsInf(x, 0) {
				return 0, usagef("--radius %q: expected a number ≥ 0 before %s", s, u.name)
			}
			return x * u.scale, nil
		}
	}
	return 0, usagef("--radius %q: give a unit: arcsec, arcmin or deg (e.g. 1.5arcsec)", s)
}

// check validates the combination of options and sets the mode.
func (f *matchFlags) check(fs *pflag.FlagSet) error {
	if f.out == "" {
		return usagef("match needs -o OUT")
	}
	if f.dz < 0 || f.dv < 0 || math.IsNaN(f.dz) || math.IsNaN(f.dv) {
		return usagef("--dz and --dv must be ≥ 0")
	}
	if f.suffix == "" {
		return usagef("--suffix must not be empty")
	}
	switch {
	case f.on != "":
		f.mode = "key"
		for _, n := range []string{"radius", "radius-mpc", "dz", "dv"} {
			if fs.Changed(n) {
				return usagef("--on matches by key; --%s does not apply", n)
			}
		}
		l, r, ok := strings.Cut(f.on, "=")
		if !ok {
			r = l
		}
		f.leftKey, f.rightKeyName = strings.TrimSpace(l), strings.TrimSpace(r)
		if f.leftKey == "" || f.rightKeyName == "" {
			return usagef("--on %q: expected LEFT_COL=RIGHT_COL or COL", f.on)
		}
	case fs.Changed("radius-mpc"):
		f.mode = "3d"
		if fs.Changed("radius") {
			return usagef("give --radius (sky) or --radius-mpc (3-d), not both")
		}
		if fs.Changed("dz") || fs.Changed("dv") {
			return usagef("--dz and --dv apply to sky matches; a 3-d match already uses the redshifts")
		}
		if !(f.radiusMpc >= 0) || math.IsInf(f.radiusMpc, 0) {
			return usagef("--radius-mpc must be a finite number ≥ 0")
		}
	default:
		f.mode = "sky"
		var err error
		if f.radiusDeg, err = parseRadius(f.radius); err != nil {
			return err
		}
	}
	return nil
}

// side is one catalogue read for matching.
type side struct {
	file string
	tab  *survey.Table     // the whole table as read
	pos  *survey.Positions // sky and 3-d modes: the rows taking part (bad rows dropped with --drop-bad)
	m    survey.Mapping
	rows int // rows in the file
}

// load reads a catalogue and, for sky and 3-d matches, maps and validates
// its positions; needZ asks for the redshift column too.
func (f *matchFlags) load(a *app, file, hdu string, m survey.Mapping, needZ bool) (*side, error) {
	t, err := survey.Read(file, survey.ReadOptions{HDU: hdu})
	if err != nil {
		return nil, err
	}
	s := &side{file: file, tab: t, rows: t.Len()}
	if f.mode == "key" {
		return s, nil
	}
	var notes []string
	if needZ {
		m, notes, err = survey.Guess(t, m)
	} else {
		m, notes, err = survey.GuessSky(t, m)
	}
	if err != nil {
		return nil, fmt.Errorf("%s: %w", file, err)
	}
	for _, n := range notes {
		if !strings.HasPrefix(n, "guessed weight column") && !strings.HasPrefix(n, "guessed ID column") {
			a.note("%s: %s", file, n)
		}
	}
	m.Weight, m.ID = "", ""
	pos, rep, err := survey.Validate(t, m, f.cols.validateOptions(file))
	if err != nil {
		return nil, err
	}
	if rep.Wrapped > 0 {
		a.note("%s: %d RA values outside [0, 360) wrapped", file, rep.Wrapped)
	}
	if rep.Dropped > 0 {
		a.note("dropped %d bad rows of %s", rep.Dropped, file)
	}
	s.pos, s.m = pos, m
	return s, nil
}

// libError turns an error of the match package, which counts rows of the
// position arrays, into one naming the file, its 1-based row and column.
func libError(err error, left, right *side) error {
	var ie *match.InputError
	if !errors.As(err, &ie) {
		return err
	}
	s := left
	if ie.Side == "right" {
		s = right
	}
	row := int64(ie.Row + 1)
	if s.pos != nil && ie.Row < len(s.pos.Row) {
		row = int64(s.pos.Row[ie.Row] + 1)
	}
	col := ie.Coord
	switch ie.Coord {
	case "ra":
		col = s.m.RA
	case "dec":
		col = s.m.Dec
	}
	return &survey.InputError{File: s.file, Row: row, Column: col, Msg: ie.Msg, Byte: -1}
}

// comovingXYZ returns the 3-d positions in Mpc/h of a validated side.
func comovingXYZ(m *cosmo.Model, s *side) ([]float64, error) {
	d := make([]float64, s.pos.Len())
	if err := m.ComovingDistancesMpch(d, s.pos.Z); err != nil {
		var de *cosmo.DomainError
		if errors.As(err, &de) && de.Index >= 0 {
			return nil, &survey.InputError{File: s.file, Row: int64(s.pos.Row[de.Index] + 1), Column: s.m.Z, Byte: -1,
				Msg: fmt.Sprintf("redshift %v beyond the cosmology's range [0, %.6g]", de.Value, de.Max)}
		}
		return nil, fmt.Errorf("%s: %w", s.file, err)
	}
	return match.XYZ(s.pos.RA, s.pos.Dec, d), nil
}

// keyMatch matches by the --on columns.
func (f *matchFlags) keyMatch(left, right *side) (*match.Result, error) {
	get := func(s *side, name string) (*survey.Column, error) {
		c := s.tab.ColFold(name)
		if c == nil {
			names := make([]string, len(s.tab.Cols))
			for i, c := range s.tab.Cols {
				names[i] = c.Name
			}
			return nil, fmt.Errorf("%s: no key column %q; columns are %s", s.file, name, strings.Join(names, ", "))
		}
		if c.Kind != survey.Int64 && c.Kind != survey.String {
			return nil, &survey.InputError{File: s.file, Column: c.Name, Byte: -1,
				Msg: fmt.Sprintf("key columns must hold integers or text, found %s", c.Kind)}
		}
		return c, nil
	}
	lc, err := get(left, f.leftKey)
	if err != nil {
		return nil, err
	}
	rc, err := get(right, f.rightKeyName)
	if err != nil {
		return nil, err
	}
	if lc.Kind != rc.Kind {
		return nil, &survey.InputError{File: right.file, Column: rc.Name, Byte: -1,
			Msg: fmt.Sprintf("key holds %s but the key of %s (column %q) holds %s", rc.Kind, left.file, lc.Name, lc.Kind)}
	}
	if lc.Kind == survey.Int64 {
		return match.Key(lc.I, rc.I, lc.Null, rc.Null, f.all)
	}
	return match.Key(lc.S, rc.S, lc.Null, rc.Null, f.all)
}

// joined builds the output table: the left columns, the right columns
// (renamed with the suffix where their names clash) and the added
// columns, one row per pair, plus one row with nulls on the right for each
// unmatched left row unless inner. Rows of res are rows of the validated
// positions in sky and 3-d modes (rows dropped by --drop-bad are left out).
func (f *matchFlags) joined(left, right *side, res *match.Result) (*survey.Table, error) {
	var li, ri, lc []int // left table row, right table row (−1: none), left result row
	var sep []float64
	p := 0
	for i := range res.Count {
		lrow := i
		if left.pos != nil {
			lrow = left.pos.Row[i]
		}
		if p < len(res.Left) && int(res.Left[p]) == i {
			for ; p < len(res.Left) && int(res.Left[p]) == i; p++ {
				j := int(res.Right[p])
				if right.pos != nil {
					j = right.pos.Row[j]
				}
				li, ri, lc = append(li, lrow), append(ri, j), append(lc, i)
				if res.Sep != nil {
					sep = append(sep, res.Sep[p])
				}
			}
		} else if !f.inner {
			li, ri, lc = append(li, lrow), append(ri, -1), append(lc, i)
			sep = append(sep, math.NaN())
		}
	}
	out := &survey.Table{Name: left.tab.Name}
	taken := map[string]bool{}
	for _, c := range left.tab.Cols {
		out.Cols = append(out.Cols, gather(c, c.Name, li))
		taken[c.Name] = true
	}
	var renamed []string
	for _, c := range right.tab.Cols {
		name := c.Name
		if taken[name] {
			name += f.suffix
			renamed = append(renamed, c.Name)
			if taken[name] {
				return nil, fmt.Errorf("%s: column %q clashes with a left column and %q is taken too; choose another --suffix", right.file, c.Name, name)
			}
		}
		taken[name] = true
		out.Cols = append(out.Cols, gather(c, name, ri))
	}
	add := func(c *survey.Column) error {
		if taken[c.Name] {
			return fmt.Errorf("the inputs already have a column %q, which match adds; rename it first", c.Name)
		}
		taken[c.Name] = true
		out.Cols = append(out.Cols, c)
		return nil
	}
	if res.Sep != nil {
		c := survey.NewColumn("match_sep_arcsec", survey.Float64, len(sep))
		c.Unit, c.Desc = "arcsec", "great-circle separation to the counterpart (Vincenty)"
		scale := 3600.0
		if f.mode == "3d" {
			c.Name, c.Unit, c.Desc = "match_sep_mpc", "Mpc/h", "comoving distance to the counterpart"
			scale = 1
		}
		for _, s := range sep {
			c.F = append(c.F, s*scale)
		}
		for k := range sep {
			if ri[k] < 0 {
				c.SetNull(k) // after the rows are in place, as SetNull asks
			}
		}
		if err := add(c); err != nil {
			return nil, err
		}
	}
	cnt := survey.NewColumn("match_count", survey.Int64, len(li))
	cnt.Desc = "number of right rows within the radius (or with an equal key) for this left row"
	for _, i := range lc {
		cnt.I = append(cnt.I, int64(res.Count[i]))
	}
	if err := add(cnt); err != nil {
		return nil, err
	}
	f.renamed = renamed
	return out, nil
}

// gather returns column c at rows (−1: null), named name.
func gather(c *survey.Column, name string, rows []int) *survey.Column {
	d := survey.NewColumn(name, c.Kind, len(rows))
	d.Unit, d.Desc = c.Unit, c.Desc
	for k, i := range rows {
		if i >= 0 {
			d.AppendFrom(c, i)
			continue
		}
		switch c.Kind {
		case survey.Float64:
			d.F = append(d.F, math.NaN())
		case survey.Int64:
			d.I = append(d.I, 0)
		case survey.Bool:
			d.B = append(d.B, false)
		case survey.String:
			d.S = append(d.S, "")
		}
		if d.Null == nil {
			d.Null = make([]bool, k, len(rows))
		}
		d.Null = append(d.Null, true)
	}
	return d
}

func init() {
	var f matchFlags
	register(&command{
		name:    "match",
		summary: "cross-match two catalogues by sky position (and redshift), 3-d position or key",
		usage:   "LEFT RIGHT -o OUT [--radius 1arcsec | --radius-mpc R | --on LEFT_COL=RIGHT_COL]",
		example: `  # Nearest spectroscopic counterpart within 1.5" for every photometric galaxy (left join):
  filigree match photometry.fits spectra.fits --radius 1.5arcsec -o matched.parquet

  # All pairs within 5" that also agree within 500 km/s, matched rows only:
  filigree match groups.csv galaxies.fits --radius 5arcsec --dv 500 --all --inner -o pairs.csv

  # 3-d match within 2 Mpc/h (Planck 2018 distances), and a match by ID:
  filigree match voids.fits galaxies.fits --radius-mpc 2 -o near.fits
  filigree match a.fits b.fits --on objid=OBJID -o joined.fits`,
		flags: func(a *app, fs *pflag.FlagSet) { f.register(fs) },
		run: func(a *app, fs *pflag.FlagSet, args []string) error {
			if len(args) != 2 {
				return usagef("match takes two catalogues, LEFT and RIGHT")
			}
			if err := f.check(fs); err != nil {
				return err
			}
			needZ := f.mode == "3d" || f.dz > 0 || f.dv > 0
			var model *cosmo.Model
			if f.mode == "3d" {
				var err error
				if model, err = f.cf.model(); err != nil {
					return err
				}
			}
			prov := a.newProvenance(fs)
			left, err := f.load(a, args[0], f.cols.hdu, f.cols.mapping(), needZ)
			if err != nil {
				return err
			}
			rm := survey.Mapping{RA: f.rightRA, Dec: f.rightDec, Z: f.rightZ, Radians: f.cols.radians}
			right, err := f.load(a, args[1], f.rightHDU, rm, needZ)
			if err != nil {
				return err
			}
			for _, s := range []*side{left, right} {
				if err := prov.AddInput(s.file, int64(s.rows)); err != nil {
					return err
				}
			}
			if model != nil {
				addCosmology(prov, model)
			}

			a.progress.Start("matching", 0)
			t0 := time.Now()
			var res *match.Result
			switch f.mode {
			case "key":
				res, err = f.keyMatch(left, right)
			case "3d":
				var lx, rx []float64
				if lx, err = comovingXYZ(model, left); err != nil {
					return err
				}
				if rx, err = comovingXYZ(model, right); err != nil {
					return err
				}
				res, err = match.Cartesian(lx, rx, f.radiusMpc, match.Options{All: f.all})
			default:
				opt := match.Options{All: f.all}
				if f.dz > 0 || f.dv > 0 {
					opt.Z = &match.Redshifts{Left: left.pos.Z, Right: right.pos.Z, DZ: f.dz, DV: f.dv}
				}
				res, err = match.Sky(left.pos.RA, left.pos.Dec, right.pos.RA, right.pos.Dec, f.radiusDeg, opt)
			}
			if err != nil {
				return libError(err, left, right)
			}
			secs := time.Since(t0).Seconds()
			a.progress.Finish()

			out, err := f.joined(left, right, res)
			if err != nil {
				return err
			}
			if len(f.renamed) > 0 {
				a.note("right columns renamed with suffix %q: %s", f.suffix, strings.Join(f.renamed, ", "))
			}
			out.Meta = prov.Meta()
			if err := survey.Write(f.out, out, survey.WriteOptions{}); err != nil {
				return err
			}
			matched := res.Matched()
			a.note("matched %d of %d left rows (%d pairs) in %.3f s; wrote %d rows to %s", matched, len(res.Count), len(res.Left), secs, out.Len(), f.out)
			a.summary.SetProvenance(prov)
			a.summary.Set("mode", f.mode)
			switch f.mode {
			case "sky":
				a.summary.Set("radius_arcsec", f.radiusDeg*3600)
			case "3d":
				a.summary.Set("radius_mpch", f.radiusMpc)
			}
			a.summary.Set("seconds", secs)
			a.summary.Set("left_rows", len(res.Count))
			a.summary.Set("right_rows", right.tab.Len())
			a.summary.Set("matched_left_rows", matched)
			a.summary.Set("pairs", len(res.Left))
			a.summary.Set("output_rows", out.Len())
			return nil
		},
	})
}
