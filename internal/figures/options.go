package figures

import (
	"fmt"
	"math"
	"sort"
	"strings"
)

// Kinds are the figures by name, in the order of the report.
var Kinds = []string{"wedge", "slice", "sky", "nz", "fractions", "density"}

// Options choose the slab of the wedge and slice figures and the page size.
// The zero value asks for the defaults; NaN is also "default".
type Options struct {
	// SlabCentre is the centre of the slab: the declination in degrees for
	// the wedge (default: the galaxies' median declination), the coordinate
	// along Axis in Mpc/h for the slice (default: the galaxies' median).
	SlabCentre float64
	// SlabThickness is the full thickness of the slab: degrees of
	// declination for the wedge (default 4°), Mpc/h for the slice
	// (default: 2R, at least two grid cells, else 10 Mpc/h).
	SlabThickness float64
	// Axis is the slice's normal: "x", "y" or "z" ("" means z).
	Axis string
	// HasCentre and HasThickness say that SlabCentre and SlabThickness
	// were given; otherwise the defaults apply.
	HasCentre, HasThickness bool
	// MaxPoints caps the galaxies drawn in one figure (every k-th is kept;
	// the figure says so); 0 means 40000.
	MaxPoints int
}

// ParseAxis returns the axis index (0, 1, 2) of "x", "y" or "z", case
// insensitive; "" gives 2 (z).
func ParseAxis(s string) (int, error) {
	switch strings.ToLower(strings.TrimSpace(s)) {
	case "x":
		return 0, nil
	case "y":
		return 1, nil
	case "z", "":
		return 2, nil
	}
	return 0, fmt.Errorf("axis must be x, y or z, not %q", s)
}

func (o Options) maxPoints() int {
	if o.MaxPoints <= 0 {
		return 40000
	}
	return o.MaxPoints
}

// median returns the median of the finite values of v (NaN when none);
// v is not modified.
func median(v []float64) float64 {
	w := make([]float64, 0, len(v))
	for _, x := range v {
		if !math.IsNaN(x) && !math.IsInf(x, 0) {
			w = append(w, x)
		}
	}
	if len(w) == 0 {
		return math.NaN()
	}
	sort.Float64s(w)
	return w[len(w)/2]
}

// niceStep returns a round step (1, 2 or 5 × 10^k) giving about n ticks
// over span.
func niceStep(span float64, n int) float64 {
	raw := span / float64(n)
	p := math.Pow(10, math.Floor(math.Log10(raw)))
	for _, m := range []float64{1, 2, 5, 10} {
		if m*p >= raw {
			return m * p
		}
	}
	return 10 * p
}

// densityValue maps δ to the colour scale's variable log10(1+δ), with
// 1+δ floored at 10⁻² (empty cells).
func densityValue(delta float64) float64 {
	return math.Log10(math.Max(1+delta, 1e-2))
}

// the fixed colour range of log10(1+δ), the same in every figure so that
// figures of different runs compare.
const densLo, densHi = -1.0, 1.0

func densityScale(delta float64) float64 {
	if math.IsNaN(delta) {
		return math.NaN()
	}
	return (densityValue(delta) - densLo) / (densHi - densLo)
}
