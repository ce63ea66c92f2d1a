package figures

import (
	"math"

	"github.com/filigree-survey/filigree/survey"
)

// skyCols returns the RA, Dec (degrees) and redshift columns of a survey
// output: ra, dec, z by name, else the columns survey.Guess recognises
// (radians converted). Missing columns are nil; without RA and Dec all
// three are nil, since a z column is then a Cartesian coordinate (box mode),
// not a redshift.
func skyCols(t *survey.Table) (ra, dec, z []float64) {
	ra, dec, z = floatCol(t, "ra"), floatCol(t, "dec"), floatCol(t, "z")
	if ra != nil && dec != nil && z != nil {
		return ra, dec, z
	}
	m, _, err := survey.Guess(t, survey.Mapping{})
	if err != nil {
		if ra == nil || dec == nil {
			return nil, nil, nil
		}
		return ra, dec, z
	}
	conv := func(v []float64) []float64 {
		if v == nil || !m.Radians {
			return v
		}
		w := make([]float64, len(v))
		for i, x := range v {
			w[i] = x * 180 / math.Pi
		}
		return w
	}
	if ra == nil {
		ra = conv(floatCol(t, m.RA))
	}
	if dec == nil {
		dec = conv(floatCol(t, m.Dec))
	}
	if z == nil {
		z = floatCol(t, m.Z)
	}
	if ra == nil || dec == nil {
		return nil, nil, nil
	}
	return ra, dec, z
}
