package figures

import (
	"fmt"
	"math"
	"sort"

	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
)

// classDashes tell the class curves apart by pattern as well as colour.
var classDashes = [4][]vg.Length{{}, {6, 2}, {2, 2}, {6, 2, 1.5, 2}}

// Density draws the distribution of the galaxies' smoothed density per web
// class: histograms of log10(1+δ) (the table's delta column; 1+δ floored
// at 10⁻²), each normalised to unit area so that the shapes compare whatever
// the class sizes, over 60 bins between the 0.5th and 99.5th percentiles of
// all labelled galaxies. Without a delta column it uses log10 of
// dtfe_density over its mean. It is an error when neither column exists or
// no galaxy is labelled.
func Density(in Inputs, opt Options) (*Figure, error) {
	t := in.Table
	v := floatCol(t, "delta")
	xlabel := "log10(1 + δ) at the galaxy, smoothed"
	if v == nil {
		d := floatCol(t, "dtfe_density")
		if d == nil {
			return nil, fmt.Errorf("density: the table has neither delta nor dtfe_density")
		}
		var s float64
		var n int
		for _, x := range d {
			if x > 0 && !math.IsInf(x, 0) {
				s += x
				n++
			}
		}
		if n == 0 {
			return nil, fmt.Errorf("density: no positive dtfe_density")
		}
		mean := s / float64(n)
		v = make([]float64, len(d))
		for i, x := range d {
			v[i] = x/mean - 1
		}
		xlabel = "log10(ρ_DTFE / mean ρ_DTFE) at the galaxy"
	}
	codes := classes(t)
	var all []float64
	for i, c := range codes {
		if c >= 0 && !math.IsNaN(v[i]) {
			all = append(all, densityValue(v[i]))
		}
	}
	if len(all) == 0 {
		return nil, fmt.Errorf("density: no labelled galaxy with a density")
	}
	sort.Float64s(all)
	lo, hi := all[int(0.005*float64(len(all)-1))], all[int(0.995*float64(len(all)-1))]
	if !(hi > lo) {
		lo, hi = lo-0.5, hi+0.5
	}
	const nb = 60
	wbin := (hi - lo) / nb
	var h [4][nb]float64
	var n [4]float64
	for i, c := range codes {
		if c < 0 || math.IsNaN(v[i]) {
			continue
		}
		x := densityValue(v[i])
		k := int((x - lo) / wbin)
		if k < 0 || k >= nb {
			continue
		}
		h[c][k]++
		n[c]++
	}
	f := &Figure{Width: 7 * vg.Inch, Height: 4.8 * vg.Inch}
	p := newPlot(fmt.Sprintf("%s: density distribution per web class (%d labelled galaxies)\n%s", in.title(), len(all), in.scaleNote()),
		xlabel, "probability density per unit log10(1 + δ)")
	for c := 0; c < 4; c++ {
		if n[c] == 0 {
			continue
		}
		var xy plotter.XYs
		xy = append(xy, plotter.XY{X: lo, Y: 0})
		for k := 0; k < nb; k++ {
			y := h[c][k] / (n[c] * wbin)
			xy = append(xy, plotter.XY{X: lo + float64(k)*wbin, Y: y}, plotter.XY{X: lo + float64(k+1)*wbin, Y: y})
		}
		xy = append(xy, plotter.XY{X: hi, Y: 0})
		l, err := plotter.NewLine(xy)
		if err != nil {
			return nil, err
		}
		l.Color = ClassColors[c]
		l.Width = 1.8
		l.Dashes = classDashes[c]
		p.Add(l)
		p.Legend.Add(fmt.Sprintf("%s, %d galaxies", ClassLabel(c), int(n[c])), l)
	}
	p.Legend.Top = true
	p.Legend.TextStyle.Font.Size = 9
	p.Legend.ThumbnailWidth = 0.45 * vg.Inch
	p.Y.Min = 0
	// Headroom for the legend above the tallest curve.
	top := 0.0
	for c := range h {
		for k := range h[c] {
			if n[c] > 0 {
				top = math.Max(top, h[c][k]/(n[c]*wbin))
			}
		}
	}
	p.Y.Max = 1.3 * top
	f.main = p
	return f, nil
}
