package survey

import (
	"fmt"
	"math"
	"strings"
)

// Mapping names the columns that hold a galaxy's sky position and redshift,
// and the optional weight and identifier columns. Empty names are guessed by
// Guess. Radians says RA and Dec are stored in radians instead of degrees.
type Mapping struct {
	RA, Dec, Z, Weight, ID string
	Radians                bool
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
	if err := pick(&m.Z, "z (redshift)", zNames, true); err != nil {
		return m, notes, err
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
