package main

import (
	"errors"
	"fmt"
	"math"
	"strings"
	"text/tabwriter"

	"github.com/spf13/pflag"

	"github.com/filigree-survey/filigree/survey"
)

// colStats summarises one column for inspect.
type colStats struct {
	Name  string  `json:"name"`
	Type  string  `json:"type"`
	Unit  string  `json:"unit,omitempty"`
	Nulls int     `json:"nulls"`
	Min   *string `json:"min,omitempty"`
	Max   *string `json:"max,omitempty"`
}

func statsOf(c *survey.Column) colStats {
	s := colStats{Name: c.Name, Type: c.Kind.String(), Unit: c.Unit, Nulls: c.NullCount()}
	n := c.Len()
	switch c.Kind {
	case survey.Float64, survey.Int64:
		lo, hi := math.Inf(1), math.Inf(-1)
		var ilo, ihi int64 = math.MaxInt64, math.MinInt64
		seen := false
		for i := 0; i < n; i++ {
			if c.IsNull(i) {
				continue
			}
			if c.Kind == survey.Int64 {
				ilo, ihi = min(ilo, c.I[i]), max(ihi, c.I[i])
				seen = true
				continue
			}
			v := c.F[i]
			if math.IsNaN(v) {
				continue
			}
			lo, hi = math.Min(lo, v), math.Max(hi, v)
			seen = true
		}
		if seen {
			var a, b string
			if c.Kind == survey.Int64 {
				a, b = fmt.Sprint(ilo), fmt.Sprint(ihi)
			} else {
				a, b = fmt.Sprintf("%.8g", lo), fmt.Sprintf("%.8g", hi)
			}
			s.Min, s.Max = &a, &b
		}
	case survey.Bool:
		t := 0
		for i := 0; i < n; i++ {
			if !c.IsNull(i) && c.B[i] {
				t++
			}
		}
		a, b := fmt.Sprintf("%d false", n-s.Nulls-t), fmt.Sprintf("%d true", t)
		s.Min, s.Max = &a, &b
	case survey.String:
		w := 0
		for i := 0; i < n; i++ {
			w = max(w, len(c.S[i]))
		}
		a := fmt.Sprintf("len ≤ %d", w)
		s.Min = &a
	}
	return s
}

func init() {
	var (
		cols     columnFlags
		showMeta bool
	)
	register(&command{
		name:    "inspect",
		summary: "columns, types, units, ranges, guessed RA/Dec/redshift and problems of a catalogue",
		usage:   "CATALOGUE [options]",
		example: `  # What is in this file, which columns would be used, and is anything wrong?
  filigree inspect survey.fits

  # Second extension of a FITS file, naming the redshift column, with all metadata:
  filigree inspect survey.fits --hdu 2 --z-col ZHELIO --meta`,
		flags: func(a *app, fs *pflag.FlagSet) {
			cols.register(fs)
			fs.BoolVar(&showMeta, "meta", false, "print every metadata entry (default: a count, and the provenance if any)")
		},
		run: func(a *app, fs *pflag.FlagSet, args []string) error {
			if len(args) != 1 {
				return usagef("inspect takes one catalogue file")
			}
			path := args[0]
			a.progress.Start("reading "+path, 0)
			t, err := survey.Read(path, survey.ReadOptions{HDU: cols.hdu})
			if err != nil {
				return err
			}
			a.progress.Finish()
			w := a.stdout
			fmt.Fprintf(w, "file:    %s (%s", path, survey.FormatOf(path))
			if t.Name != "" {
				fmt.Fprintf(w, ", table %q", t.Name)
			}
			fmt.Fprintf(w, ")\nrows:    %d\ncolumns: %d\n\n", t.Len(), len(t.Cols))
			tw := tabwriter.NewWriter(w, 2, 8, 2, ' ', 0)
			fmt.Fprintln(tw, "  column\ttype\tunit\tnulls\tmin\tmax")
			stats := make([]colStats, len(t.Cols))
			for i, c := range t.Cols {
				s := statsOf(c)
				stats[i] = s
				unit := s.Unit
				if unit == "" {
					unit = "–"
				}
				lo, hi := "–", "–"
				if s.Min != nil {
					lo = *s.Min
				}
				if s.Max != nil {
					hi = *s.Max
				}
				fmt.Fprintf(tw, "  %s\t%s\t%s\t%d\t%s\t%s\n", s.Name, s.Type, unit, s.Nulls, lo, hi)
			}
			tw.Flush()

			fmt.Fprintf(w, "\nmetadata: %d entries\n", len(t.Meta))
			if prov, ok, err := survey.ProvenanceFromMeta(t.Meta); ok && err == nil {
				fmt.Fprintf(w, "  written by filigree %s at %s\n  command: %s\n", prov.Version, prov.Time.Format("2006-01-02 15:04:05 MST"), survey.ShellQuote(prov.Command))
			}
			if showMeta {
				for _, kv := range t.Meta {
					fmt.Fprintf(w, "  %s = %s\n", kv.Key, kv.Value)
				}
			}

			a.summary.Set("file", path)
			a.summary.Set("rows", t.Len())
			a.summary.Set("columns", stats)

			m, notes, err := survey.Guess(t, cols.mapping())
			fmt.Fprintln(w, "\npositions:")
			if err != nil {
				fmt.Fprintf(w, "  %v\n", err)
				a.summary.Set("position_columns", err.Error())
				return nil
			}
			guessed := strings.Join(notes, "; ")
			show := func(role, name string) {
				if name == "" {
					name = "(none)"
				} else if strings.Contains(guessed, ": "+name) {
					name += " (guessed)"
				}
				fmt.Fprintf(w, "  %-7s %s\n", role, name)
			}
			show("RA", m.RA)
			show("Dec", m.Dec)
			show("z", m.Z)
			show("weight", m.Weight)
			show("ID", m.ID)
			unit := "degrees"
			if m.Radians {
				unit = "radians"
			}
			fmt.Fprintf(w, "  RA and Dec read as %s\n", unit)
			a.summary.Set("position_columns", map[string]string{"ra": m.RA, "dec": m.Dec, "z": m.Z, "weight": m.Weight, "id": m.ID})

			opt := cols.validateOptions(path)
			opt.DropBad = true // inspect reports; it never stops at bad rows
			_, rep, err := survey.Validate(t, m, opt)
			var ve *survey.ValidationError
			if err != nil && !errors.As(err, &ve) {
				fmt.Fprintf(w, "\nvalidation: %v\n", err)
				return nil
			}
			fmt.Fprintln(w, "\nvalidation:")
			fmt.Fprintf(w, "  %s\n", indentLines(strings.Replace(rep.String(), fmt.Sprintf(", %d dropped", rep.Dropped), "", 1)))
			if rep.Bad > 0 {
				fmt.Fprintf(w, "  'filigree run' stops on these rows unless given --drop-bad\n")
			}
			a.summary.Set("bad_rows", rep.Bad)
			a.summary.Set("ra_wrapped", rep.Wrapped)
			a.summary.Set("problems", rep.Counts)
			return nil
		},
	})
}
