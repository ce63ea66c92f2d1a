package survey

import (
	"fmt"
	"io"
	"math"
	"strings"
)

// Mapping names the columns that hold a galaxy's sky position and redshift,
// and the optional weight and identifier columns. Empty names are guessed by
// Guess. Radians says RA and Dec are stored in radians instead of degrees.
type Mapping struct {
	RA, Dec, Z, Weight, ID string
	Radians                bool

	skyOnly bool // set by GuessSky: no redshift column wanted
}

// GuessSky is Guess for commands that need only sky positions: the
// redshift column is neither required nor guessed (an explicit m.Z is kept
// and checked).
func GuessSky(t *Table, m Mapping) (Mapping, []string, error) {
	m.skyOnly = m.Z == ""
	out, notes, err := Guess(t, m)
	out.skyOnly = false
	return out, notes, err
}

// Common column names, lower case, in order of preference. Matching is
// case-insensitive; the first name present in the table wins.
var (
	raNames     = []string{"ra", "ra_deg", "radeg", "ra_j2000", "raj2000", "ra_icrs", "alpha_j2000", "alpha", "right_ascension", "ra_obj", "target_ra"}
	decNames    = []string{"dec", "dec_deg", "decdeg", "dec_j2000", "dej2000", "decj2000", "dec_icrs", "de", "delta_j2000", "declination", "dec_obj", "target_dec"}
	zNames      = []string{"z", "redshift", "z_obs", "zobs", "z_spec", "zspec", "z_best", "zbest", "z_helio", "zhelio", "z_cmb", "zcmb", "zfinal", "z_final"}
	weightNames = []string{"weight", "weights", "wt", "w_tot", "wtot", "w"}
	idNames     = []string{"id", "objid", "obj_id", "objectid", "object_id", "galaxy_id", "galid", "source_id", "sourceid", "targetid", "target_id", "specobjid", "name"}
)

// Guess fills the empty names of m from common column names of t. RA, Dec
// and Z are required: a missing one is an error listing the table's columns.
// Weight and ID stay empty when nothing matches. Notes describe each guess,
// for printing ("guessed RA column: RAJ2000").
func Guess(t *Table, m Mapping) (Mapping, []string, error) {
	var notes []string
	pick := func(field *string, role string, cands []string, required bool) error {
		if *field != "" {
			c := t.ColFold(*field)
			if c == nil {
				return fmt.Errorf("no column %q for %s; columns are %s", *field, role, columnList(t))
			}
			*field = c.Name
			return nil
		}
		for _, cand := range cands {
			if c := t.ColFold(cand); c != nil && c.Kind != String && c.Kind != Bool {
				*field = c.Name
				notes = append(notes, fmt.Sprintf("guessed %s column: %s", role, c.Name))
				return nil
			}
		}
		if required {
			return fmt.Errorf("cannot guess the %s column (tried %s); name it with --%s-col; columns are %s",
				role, strings.Join(cands, ", "), strings.ToLower(strings.Fields(role)[0]), columnList(t))
		}
		return nil
	}
	if err := pick(&m.RA, "RA", raNames, true); err != nil {
		return m, notes, err
	}
	if err := pick(&m.Dec, "Dec", decNames, true); err != nil {
		return m, notes, err
	}
	if !m.skyOnly {
		if err := pick(&m.Z, "z (redshift)", zNames, true); err != nil {
			return m, notes, err
		}
	}
	if err := pick(&m.Weight, "weight", weightNames, false); err != nil {
		return m, notes, err
	}
	if m.ID != "" {
		if c := t.ColFold(m.ID); c != nil {
			m.ID = c.Name
		} else {
			return m, notes, fmt.Errorf("no column %q for ID; columns are %s", m.ID, columnList(t))
		}
	} else {
		for _, cand := range idNames {
			if c := t.ColFold(cand); c != nil && (c.Kind == Int64 || c.Kind == String) {
				m.ID = c.Name
				notes = append(notes, "guessed ID column: "+c.Name)
				break
			}
		}
	}
	return m, notes, nil
}

// Columns returns the non-empty column names of m, for ReadOptions.Columns.
func (m Mapping) Columns() []string {
	var out []string
	for _, n := range []string{m.RA, m.Dec, m.Z, m.Weight, m.ID} {
		if n != "" {
			out = append(out, n)
		}
	}
	return out
}

func columnList(t *Table) string {
	names := make([]string, len(t.Cols))
	for i, c := range t.Cols {
		names[i] = c.Name
	}
	if len(names) > 30 {
		return strings.Join(names[:30], ", ") + fmt.Sprintf(", … (%d in all)", len(names))
	}
	return strings.Join(names, ", ")
}

// degrees returns column c as float64 degrees (converting from radians when asked).
func degrees(c *Column, radians bool, i int) (float64, bool) {
	v, ok := c.Float(i)
	if !ok {
		return math.NaN(), false
	}
	if radians {
		v *= 180 / math.Pi
	}
	return v, true
}

// xyzNames are common Cartesian column triples, in order of preference.
var xyzNames = [][3]string{
	{"x", "y", "z"}, {"cart_x", "cart_y", "cart_z"}, {"pos_x", "pos_y", "pos_z"},
	{"px", "py", "pz"}, {"x_mpch", "y_mpch", "z_mpch"}, {"pos0", "pos1", "pos2"},
}

// GuessXYZ names the three Cartesian position columns of a table with the
// given column names: spec "a,b,c" names them (matched case-insensitively),
// an empty spec tries common triples (x,y,z; cart_x,…; pos_x,…; px,…). The
// note describes a guess for printing; it is empty when spec named them.
func GuessXYZ(file string, have []string, spec string) (cols [3]string, note string, err error) {
	if spec != "" {
		parts := strings.Split(spec, ",")
		if len(parts) != 3 {
			return cols, "", fmt.Errorf("--xyz-cols: expected three comma-separated names, got %q", spec)
		}
		idx, err := ResolveColumns(file, have, []string{strings.TrimSpace(parts[0]), strings.TrimSpace(parts[1]), strings.TrimSpace(parts[2])})
		if err != nil {
			return cols, "", err
		}
		for i, j := range idx {
			cols[i] = have[j]
		}
		return cols, "", nil
	}
	for _, cand := range xyzNames {
		idx, err := ResolveColumns(file, have, cand[:])
		if err != nil {
			continue
		}
		for i, j := range idx {
			cols[i] = have[j]
		}
		return cols, fmt.Sprintf("guessed position columns: %s, %s, %s", cols[0], cols[1], cols[2]), nil
	}
	return cols, "", fmt.Errorf("%s: cannot guess the x, y, z columns; name them with --xyz-cols; columns are %s", file, strings.Join(have, ", "))
}

// ReadXYZ reads the three named columns of a catalogue into one flat slice
// (x0, y0, z0, x1, …), streaming. A null or non-finite value is an
// InputError naming the file, row and column.
func ReadXYZ(path string, opt ReadOptions, cols [3]string) ([]float64, error) {
	opt.Columns = cols[:]
	r, err := Open(path, opt)
	if err != nil {
		return nil, err
	}
	defer r.Close()
	for _, c := range r.Schema().Cols {
		if c.Kind == String || c.Kind == Bool {
			return nil, &InputError{File: path, Byte: -1, Column: c.Name, Msg: "expected a numeric position column, found " + c.Kind.String()}
		}
	}
	n := r.NumRows()
	xyz := make([]float64, 0, 3*max(0, min(n, maxPrealloc)))
	var row int64
	for {
		b, err := r.Next(0)
		if err == io.EOF {
			return xyz, nil
		}
		if err != nil {
			return nil, err
		}
		m := b.Len()
		for i := 0; i < m; i++ {
			row++
			for k := 0; k < 3; k++ {
				c := b.Cols[k]
				v, ok := c.Float(i)
				if !ok || math.IsNaN(v) || math.IsInf(v, 0) {
					found := c.Format(i)
					if c.IsNull(i) {
						found = "a missing value"
					}
					return nil, inputErr(path, row, c.Name, "expected a finite position, found "+found, nil)
				}
				xyz = append(xyz, v)
			}
		}
	}
}
