package figures

import (
	"fmt"
	"image/color"
	"math"
	"strconv"

	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"github.com/filigree-survey/filigree/mask/selection"
	"github.com/filigree-survey/filigree/survey"
)

// NZ draws the redshift distribution of the galaxies as a histogram of
// counts per bin and, over it, the run's fitted selection: the n(z) that
// filigree run estimated from the same redshifts (selection.EstimateNZ with
// the bin range, width and Gaussian smoothing recorded in the provenance
// keys nz.zmin, nz.zmax, nz.bin_width and nz.smooth_sigma). When the
// provenance holds no such keys (the run was given an n(z) table, or the
// table has no provenance) the histogram uses EstimateNZ's default bins and
// no fitted curve is drawn. It is an error for a table without redshifts.
func NZ(in Inputs, opt Options) (*Figure, error) {
	t := in.Table
	_, _, zc := skyCols(t)
	if zc == nil {
		return nil, fmt.Errorf("nz: the table has no redshift column (a box-mode run?)")
	}
	z := make([]float64, 0, len(zc))
	for _, v := range zc {
		if v > 0 && !math.IsInf(v, 0) {
			z = append(z, v)
		}
	}
	if len(z) < 2 {
		return nil, fmt.Errorf("nz: fewer than two positive redshifts")
	}
	eo, fitted := nzOptions(t.Meta)
	if !fitted {
		eo = selection.EstimateOptions{Smooth: -1}
	}
	nz, err := selection.EstimateNZ(z, eo)
	if err != nil {
		return nil, fmt.Errorf("nz: %w", err)
	}
	f := &Figure{Width: 7 * vg.Inch, Height: 4.8 * vg.Inch}
	p := newPlot(fmt.Sprintf("%s: redshift distribution (%d galaxies)\n%s", in.title(), len(z), in.scaleNote()),
		"redshift z", fmt.Sprintf("galaxies per bin (Δz = %.4g)", nz.Binning.Width))
	var hist plotter.XYs
	for i, c := range nz.Raw {
		hist = append(hist, plotter.XY{X: nz.Edges[i], Y: c}, plotter.XY{X: nz.Edges[i+1], Y: c})
	}
	hist = append(plotter.XYs{{X: nz.Edges[0], Y: 0}}, hist...)
	hist = append(hist, plotter.XY{X: nz.Edges[len(nz.Edges)-1], Y: 0})
	poly, err := plotter.NewPolygon(hist)
	if err != nil {
		return nil, err
	}
	poly.Color = color.NRGBA{R: 0xB9, G: 0xD3, B: 0xCF, A: 0xFF}
	poly.LineStyle.Color = color.NRGBA{R: 0x3C, G: 0x78, B: 0x80, A: 0xFF}
	poly.LineStyle.Width = 0.6
	p.Add(poly)
	p.Legend.Add("data (histogram)", poly)
	if fitted {
		var curve plotter.XYs
		for i, c := range nz.Counts {
			curve = append(curve, plotter.XY{X: (nz.Edges[i] + nz.Edges[i+1]) / 2, Y: c})
		}
		l, err := plotter.NewLine(curve)
		if err != nil {
			return nil, err
		}
		l.Color = color.NRGBA{R: 0x1D, G: 0x35, B: 0x6B, A: 0xFF}
		l.Width = 1.6
		p.Add(l)
		p.Legend.Add(fmt.Sprintf("run's fitted n(z) (σ = %.3g in z)", nz.Binning.Smooth), l)
	}
	p.Legend.Top = true
	p.Legend.TextStyle.Font.Size = 9
	p.Y.Min = 0
	top := 0.0
	for i := range nz.Raw {
		top = math.Max(top, math.Max(nz.Raw[i], nz.Counts[i]))
	}
	p.Y.Max = 1.2 * top // headroom for the legend
	f.main = p
	return f, nil
}

// nzOptions recovers the run's n(z) estimate options from the provenance;
// ok is false when the run did not estimate n(z) from the data.
func nzOptions(m survey.Meta) (selection.EstimateOptions, bool) {
	var eo selection.EstimateOptions
	p, ok, err := survey.ProvenanceFromMeta(m)
	if !ok || err != nil {
		return eo, false
	}
	got := 0
	for _, kv := range p.Params {
		v, err := strconv.ParseFloat(kv.Value, 64)
		if err != nil {
			continue
		}
		switch kv.Key {
		case "nz.zmin":
			eo.ZMin = v
			got++
		case "nz.zmax":
			eo.ZMax = v
			got++
		case "nz.bin_width":
			eo.Width = v
			got++
		case "nz.smooth_sigma":
			eo.Smooth = v
			if v == 0 {
				eo.Smooth = -1 // recorded 0 means none
			}
			got++
		}
	}
	return eo, got == 4
}
