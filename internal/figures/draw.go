package figures

import (
	"fmt"
	"os"
	"path/filepath"
	"strings"
)

// Draw draws the figure of the given kind (one of Kinds) from in.
func Draw(kind string, in Inputs, opt Options) (*Figure, error) {
	if in.Table == nil {
		return nil, fmt.Errorf("figures: no table")
	}
	switch kind {
	case "wedge":
		return Wedge(in, opt)
	case "slice":
		return Slice(in, opt)
	case "sky":
		return Sky(in, opt)
	case "nz":
		return NZ(in, opt)
	case "fractions":
		return Fractions(in, opt)
	case "density":
		return Density(in, opt)
	}
	return nil, fmt.Errorf("figures: unknown kind %q (want one of %s)", kind, strings.Join(Kinds, ", "))
}

// WritePlots draws every figure that in supports, with the default
// options, as PNG files named KIND.png in dir (created if needed), and
// returns their paths in the order of Kinds. A figure whose inputs are
// missing (the wedge, sky and n(z) of a box run) is skipped; any other
// failure is returned with the paths written so far.
func WritePlots(dir string, in Inputs) ([]string, error) {
	if err := os.MkdirAll(dir, 0o755); err != nil {
		return nil, err
	}
	var paths []string
	for _, k := range Applicable(in) {
		f, err := Draw(k, in, Options{})
		if err != nil {
			return paths, err
		}
		path := filepath.Join(dir, k+".png")
		if err := f.Save(path); err != nil {
			return paths, err
		}
		paths = append(paths, path)
	}
	return paths, nil
}

// Applicable returns the kinds that in has the inputs for: the wedge needs
// RA, Dec and comoving distance; the sky needs RA and Dec; n(z) needs
// redshifts; fractions need a summary, a fields cube or web labels; the
// slice needs positions; the density needs delta or dtfe_density.
func Applicable(in Inputs) []string {
	t := in.Table
	if t == nil {
		return nil
	}
	ra, dec, z := skyCols(t)
	var out []string
	for _, k := range Kinds {
		ok := true
		switch k {
		case "wedge":
			ok = ra != nil && dec != nil && floatCol(t, "comov_dist") != nil
		case "sky":
			ok = ra != nil && dec != nil
		case "nz":
			ok = z != nil
		case "slice":
			_, _, _, err := positions(t)
			ok = err == nil
		case "fractions":
			ok = in.Summary != nil || in.Fields != nil || t.ColFold("web_tidal") != nil
		case "density":
			ok = t.ColFold("delta") != nil || t.ColFold("dtfe_density") != nil
		}
		if ok {
			out = append(out, k)
		}
	}
	return out
}
