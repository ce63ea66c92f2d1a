package survey

import (
	"fmt"
	"math"
	"strings"
)

// Positions holds the validated sky positions of the galaxies kept from a
// catalogue, in input order.
type Positions struct {
	RA, Dec []float64 // ICRS degrees; RA in [0, 360), Dec in [−90, 90]
	Z       []float64 // observed redshift, finite and > 0
	Weight  []float64 // user weight column, finite and > 0; nil when there is none
	Row     []int     // 0-based row of each kept galaxy in the input table
}

// Len returns the number of galaxies.
func (p *Positions) Len() int { return len(p.RA) }

// ValidateOptions set the policy for bad rows.
type ValidateOptions struct {
	File    string // input file name for messages
	Strict  bool   // reject RA outside [0, 360) instead of wrapping it
	DropBad bool   // drop bad rows (and say how many) instead of failing
	// MaxListed is how many problems are listed individually; 0 means 10.
	MaxListed int
}

// Problem is one bad value, at a 1-based data row of a column.
type Problem struct {
	Row    int64
	Column string
	Value  string
	Msg    string
}

// ProblemCount counts the rows with one kind of problem.
type ProblemCount struct {
	Msg   string
	Count int
}

// Report is the outcome of Validate.
type Report struct {
	File    string
	Rows    int            // rows read
	Wrapped int            // RA values wrapped into [0, 360)
	Bad     int            // rows with at least one problem
	Dropped int            // rows dropped (DropBad)
	Counts  []ProblemCount // per kind of problem, in order of first appearance
	First   []Problem      // the first problems, in row order
}

// String describes the report in a few lines for people.
func (r *Report) String() string {
	var b strings.Builder
	fmt.Fprintf(&b, "%s: %d rows", r.File, r.Rows)
	if r.Wrapped > 0 {
		fmt.Fprintf(&b, "; %d RA values outside [0, 360) wrapped", r.Wrapped)
	}
	if r.Bad == 0 {
		b.WriteString("; no bad rows")
		return b.String()
	}
	fmt.Fprintf(&b, "; %d bad rows", r.Bad)
	if r.Dropped > 0 {
		fmt.Fprintf(&b, ", %d dropped", r.Dropped)
	}
	for _, c := range r.Counts {
		fmt.Fprintf(&b, "\n  %d × %s", c.Count, c.Msg)
	}
	for _, p := range r.First {
		fmt.Fprintf(&b, "\n  %s: row %d: column %q: value %s: %s", r.File, p.Row, p.Column, p.Value, p.Msg)
	}
	if len(r.First) < r.Bad {
		fmt.Fprintf(&b, "\n  … and more")
	}
	return b.String()
}

// ValidationError is returned by Validate when bad rows are found and the
// policy is to stop. It carries the whole Report.
type ValidationError struct{ Report *Report }

func (e *ValidationError) Error() string {
	return e.Report.String() + "\n  (use --drop-bad to drop these rows)"
}

// Problem messages, shared so that counts group by kind.
const (
	msgNull      = "missing value"
	msgRA        = "RA outside [0, 360) degrees"
	msgDec       = "Dec outside [−90, 90] degrees"
	msgZ         = "redshift must be finite and > 0"
	msgWeight    = "weight must be finite and > 0"
	msgDuplicate = "duplicate ID"
)

// Validate checks the mapped columns of t row by row: RA outside [0, 360)
// (wrapped with a count, or a problem when Strict), Dec outside [−90, 90],
// redshift ≤ 0 or not finite, weights ≤ 0 or not finite, missing values, and
// duplicate IDs (every occurrence after the first is a problem). With
// DropBad the bad rows are left out of the Positions and counted; otherwise
// any bad row gives a *ValidationError listing the count and the first rows.
// m must name existing columns (see Guess); with m.Z empty the redshift
// checks are skipped and Positions.Z holds zeros (sky-only catalogues).
func Validate(t *Table, m Mapping, opt ValidateOptions) (*Positions, *Report, error) {
	maxListed := opt.MaxListed
	if maxListed <= 0 {
		maxListed = 10
	}
	get := func(name string) (*Column, error) {
		c := t.Col(name)
		if c == nil {
			return nil, fmt.Errorf("%s: no column %q", opt.File, name)
		}
		if c.Kind == String {
			return nil, &InputError{File: opt.File, Column: name, Byte: -1, Msg: "expected a numeric column, found text"}
		}
		return c, nil
	}
	ra, err := get(m.RA)
	if err != nil {
		return nil, nil, err
	}
	dec, err := get(m.Dec)
	if err != nil {
		return nil, nil, err
	}
	var zc *Column // nil when m.Z is empty: a sky-only catalogue
	if m.Z != "" {
		if zc, err = get(m.Z); err != nil {
			return nil, nil, err
		}
	}
	var wc, idc *Column
	if m.Weight != "" {
		if wc, err = get(m.Weight); err != nil {
			return nil, nil, err
		}
	}
	if m.ID != "" {
		if idc = t.Col(m.ID); idc == nil {
			return nil, nil, fmt.Errorf("%s: no column %q", opt.File, m.ID)
		}
	}

	n := t.Len()
	rep := &Report{File: opt.File, Rows: n}
	pos := &Positions{
		RA: make([]float64, 0, n), Dec: make([]float64, 0, n), Z: make([]float64, 0, n),
		Row: make([]int, 0, n),
	}
	if wc != nil {
		pos.Weight = make([]float64, 0, n)
	}
	countIdx := map[string]int{}
	var rowBad bool
	// add records a problem of kind msg; detail, when set, replaces msg in
	// the listed problem (so duplicates name their first row but count as one kind).
	add := func(i int, col, value, msg string, detail ...string) {
		if !rowBad {
			rowBad = true
			rep.Bad++
		}
		k, ok := countIdx[msg]
		if !ok {
			k = len(rep.Counts)
			countIdx[msg] = k
			rep.Counts = append(rep.Counts, ProblemCount{Msg: msg})
		}
		rep.Counts[k].Count++
		if len(rep.First) < maxListed {
			p := Problem{Row: int64(i + 1), Column: col, Value: value, Msg: msg}
			if len(detail) > 0 {
				p.Msg = detail[0]
			}
			rep.First = append(rep.First, p)
		}
	}
	var firstInt map[int64]int
	var firstStr map[string]int
	if idc != nil {
		if idc.Kind == String {
			firstStr = make(map[string]int, n)
		} else {
			firstInt = make(map[int64]int, n)
		}
	}
	for i := 0; i < n; i++ {
		rowBad = false
		a, okA := degrees(ra, m.Radians, i)
		d, okD := degrees(dec, m.Radians, i)
		z, okZ := 0.0, true
		if zc != nil {
			z, okZ = zc.Float(i)
		}
		switch {
		case !okA:
			add(i, m.RA, "null", msgNull)
		case math.IsNaN(a) || math.IsInf(a, 0):
			add(i, m.RA, formatFloat(a), msgRA)
		case a < 0 || a >= 360:
			if opt.Strict {
				add(i, m.RA, formatFloat(a), msgRA)
			} else {
				a = math.Mod(a, 360)
				if a < 0 {
					a += 360
				}
				if a >= 360 { // −tiny mod 360 rounds up to 360
					a = 0
				}
				rep.Wrapped++
			}
		}
		switch {
		case !okD:
			add(i, m.Dec, "null", msgNull)
		case !(d >= -90 && d <= 90):
			add(i, m.Dec, formatFloat(d), msgDec)
		}
		switch {
		case zc == nil:
		case !okZ:
			add(i, m.Z, "null", msgNull)
		case !(z > 0) || math.IsInf(z, 0):
			add(i, m.Z, formatFloat(z), msgZ)
		}
		var w float64
		if wc != nil {
			var okW bool
			w, okW = wc.Float(i)
			switch {
			case !okW:
				add(i, m.Weight, "null", msgNull)
			case !(w > 0) || math.IsInf(w, 0):
				add(i, m.Weight, formatFloat(w), msgWeight)
			}
		}
		if idc != nil {
			switch {
			case idc.IsNull(i):
				add(i, m.ID, "null", msgNull)
			case firstStr != nil:
				if j, dup := firstStr[idc.S[i]]; dup {
					add(i, m.ID, idc.S[i], msgDuplicate, fmt.Sprintf("%s (first at row %d)", msgDuplicate, j+1))
				} else {
					firstStr[idc.S[i]] = i
				}
			default:
				var key int64
				switch idc.Kind {
				case Int64:
					key = idc.I[i]
				case Float64:
					key = int64(math.Float64bits(idc.F[i] + 0)) // +0 folds −0 onto 0
				case Bool:
					if idc.B[i] {
						key = 1
					}
				}
				if j, dup := firstInt[key]; dup {
					add(i, m.ID, idc.Format(i), msgDuplicate, fmt.Sprintf("%s (first at row %d)", msgDuplicate, j+1))
				} else {
					firstInt[key] = i
				}
			}
		}
		if rowBad {
			continue
		}
		pos.RA = append(pos.RA, a)
		pos.Dec = append(pos.Dec, d)
		pos.Z = append(pos.Z, z)
		if wc != nil {
			pos.Weight = append(pos.Weight, w)
		}
		pos.Row = append(pos.Row, i)
	}
	if rep.Bad > 0 {
		if !opt.DropBad {
			return nil, rep, &ValidationError{Report: rep}
		}
		rep.Dropped = rep.Bad
	}
	return pos, rep, nil
}
