package figures

import (
	"fmt"
	"image"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"github.com/filigree-survey/filigree/internal/parallel"
)

const deg = math.Pi / 180

// skyT0 and skyT1 are the part of the density ramp that shows completeness
// 0 to 1: its lighter half, so that the dark knot and filament markers
// keep their contrast over a complete survey.
const skyT0, skyT1 = 0.1, 0.55

// Sky draws the footprint's completeness on the sky in the Mollweide
// equal-area projection (see Mollweide) centred on the galaxies' mean RA,
// RA increasing to the left as on the sky seen from inside, with a
// graticule and the galaxies coloured by web class. The window is the
// projected extent of the footprint (found on a 0.5° grid) and the
// galaxies, padded; a footprint spread over more than about a hemisphere
// shows the whole sky. Without a footprint only the galaxies are drawn.
// It is an error for a table without ra and dec.
func Sky(in Inputs, opt Options) (*Figure, error) {
	t := in.Table
	ra, dec, _ := skyCols(t)
	if ra == nil || dec == nil {
		return nil, fmt.Errorf("sky: %w", errNoSky)
	}
	var sx, sy float64
	var all []int
	for i := range ra {
		if !math.IsNaN(ra[i]) && !math.IsNaN(dec[i]) {
			sx += math.Cos(ra[i] * deg)
			sy += math.Sin(ra[i] * deg)
			all = append(all, i)
		}
	}
	if len(all) == 0 {
		return nil, fmt.Errorf("sky: no galaxies with RA and Dec")
	}
	ra0 := normDeg(math.Atan2(sy, sx) / deg)
	proj := func(r, d float64) (float64, float64) {
		return Mollweide(-wrapDeg(r-ra0)*deg, d*deg)
	}
	x0, x1, y0, y1 := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	grow := func(x, y float64) {
		x0, x1, y0, y1 = math.Min(x0, x), math.Max(x1, x), math.Min(y0, y), math.Max(y1, y)
	}
	for _, i := range all {
		grow(proj(ra[i], dec[i]))
	}
	fp := in.Footprint
	if fp != nil {
		const step = 0.5
		nra, ndec := int(360/step), int(180/step)
		hit := make([]bool, nra*ndec)
		parallel.For(ndec, 8, func(lo, hi int) {
			for j := lo; j < hi; j++ {
				d := -90 + (float64(j)+0.5)*step
				for k := 0; k < nra; k++ {
					hit[j*nra+k] = fp.Completeness((float64(k)+0.5)*step, d) > 0
				}
			}
		})
		for j := 0; j < ndec; j++ {
			for k := 0; k < nra; k++ {
				if hit[j*nra+k] {
					d := -90 + (float64(j)+0.5)*step
					r := (float64(k) + 0.5) * step
					for _, c := range [4][2]float64{{-1, -1}, {-1, 1}, {1, -1}, {1, 1}} {
						grow(proj(r+c[0]*step/2, math.Max(-90, math.Min(90, d+c[1]*step/2))))
					}
				}
			}
		}
	}
	sq2 := math.Sqrt2
	padX, padY := 0.08*(x1-x0)+0.02, 0.08*(y1-y0)+0.02
	x0, x1, y0, y1 = math.Max(x0-padX, -2*sq2), math.Min(x1+padX, 2*sq2), math.Max(y0-padY, -sq2), math.Min(y1+padY, sq2)
	if (x1-x0)*(y1-y0) > 0.5*8*sq2*sq2 {
		x0, x1, y0, y1 = -2*sq2, 2*sq2, -sq2, sq2
	}
	f := &Figure{Width: 9 * vg.Inch, Height: 6 * vg.Inch}
	p := newPlot(fmt.Sprintf("%s: footprint and galaxies, Mollweide equal-area projection centred on RA %.1f°\n%s", in.title(), ra0, in.scaleNote()), "", "")
	p.HideAxes()
	// Completeness image over the window.
	{
		const nx = 800
		ny := max(16, min(1600, int(math.Ceil(nx*(y1-y0)/(x1-x0)))))
		img := image.NewNRGBA(image.Rect(0, 0, nx, ny))
		parallel.For(ny, 8, func(lo, hi int) {
			for j := lo; j < hi; j++ {
				y := y1 - (float64(j)+0.5)*(y1-y0)/float64(ny)
				for k := 0; k < nx; k++ {
					x := x0 + (float64(k)+0.5)*(x1-x0)/float64(nx)
					lam, phi, ok := MollweideInverse(x, y)
					if !ok {
						continue // off the sphere: transparent
					}
					c := color.NRGBA{R: 0xFF, G: 0xFF, B: 0xFF, A: 0xFF}
					if fp != nil {
						if v := fp.Completeness(normDeg(ra0-lam/deg), phi/deg); v > 0 {
							c = DensityColor(skyT0 + (skyT1-skyT0)*v)
						} else {
							c = OutsideColor
						}
					}
					img.SetNRGBA(k, j, c)
				}
			}
		})
		p.Add(rasterImage(img, x0, y0, x1, y1))
		if fp != nil {
			f.bar = colourBarPart(0, 1, skyT0, skyT1, "completeness")
		}
	}
	addGraticule(p, ra0, x0, x1, y0, y1)
	sel, k := thin(all, opt.maxPoints())
	codes := classes(t)
	gx := &galaxies{radius: markerRadius(len(sel), 1.6)}
	hasNull := false
	for _, i := range sel {
		x, y := proj(ra[i], dec[i])
		gx.x, gx.y, gx.code = append(gx.x, x), append(gx.y, y), append(gx.code, codes[i])
		hasNull = hasNull || codes[i] < 0
	}
	p.Add(gx)
	f.main = p
	f.legend = classLegend(hasNull)
	f.equal = &[4]float64{x0, x1, y0, y1}
	f.note = "graticule: RA and Dec (deg)"
	if k > 1 {
		f.note += fmt.Sprintf("\n1 in %d galaxies drawn", k)
	}
	if fp == nil {
		f.note += "\nno footprint given"
	}
	return f, nil
}

// addGraticule draws meridians and parallels at round steps that fit the
// window x0…x1, y0…y1 of the projection centred on ra0, labelled along the
// window's lower and left edges.
func addGraticule(p *plot.Plot, ra0, x0, x1, y0, y1 float64) {
	lmin, lmax, pmin, pmax := math.Inf(1), math.Inf(-1), math.Inf(1), math.Inf(-1)
	for a := 0; a <= 60; a++ {
		for b := 0; b <= 60; b++ {
			lam, phi, ok := MollweideInverse(x0+(x1-x0)*float64(a)/60, y0+(y1-y0)*float64(b)/60)
			if !ok {
				continue
			}
			lmin, lmax = math.Min(lmin, lam), math.Max(lmax, lam)
			pmin, pmax = math.Min(pmin, phi), math.Max(pmax, phi)
		}
	}
	if math.IsInf(lmin, 0) {
		return
	}
	lmin, lmax, pmin, pmax = lmin/deg, lmax/deg, pmin/deg, pmax/deg
	rs := niceStep(lmax-lmin, 6)
	if rs > 60 {
		rs = 60
	}
	ds := niceStep(pmax-pmin, 5)
	if ds > 30 {
		ds = 30
	}
	grey := color.NRGBA{R: 0x70, G: 0x70, B: 0x70, A: 0xA0}
	var labs plotter.XYLabels
	// The label rows: a little inside the lower and left edges.
	yl := y0 + 0.025*(y1-y0)
	xl := x0 + 0.01*(x1-x0)
	_, phiL, okL := MollweideInverse(0, yl)
	// Meridians: RA = ra0 − λ, so λ from lmin to lmax covers RA from
	// ra0 − lmax to ra0 − lmin.
	for r := math.Ceil((ra0-lmax)/rs) * rs; r <= ra0-lmin+1e-9; r += rs {
		lam := -wrapDeg(r - ra0)
		var line plotter.XYs
		for s := 0; s <= 90; s++ {
			ph := pmin + (pmax-pmin)*float64(s)/90
			x, y := Mollweide(lam*deg, ph*deg)
			line = append(line, plotter.XY{X: x, Y: y})
		}
		if l, err := plotter.NewLine(line); err == nil {
			l.Color, l.Width = grey, 0.5
			l.Dashes = []vg.Length{2, 2}
			p.Add(l)
		}
		if okL {
			x, y := Mollweide(lam*deg, phiL)
			if x >= x0 && x <= x1 {
				labs.XYs = append(labs.XYs, plotter.XY{X: x, Y: y})
				labs.Labels = append(labs.Labels, fmt.Sprintf("%g°", normDeg(r)))
			}
		}
	}
	for d := math.Ceil(pmin/ds) * ds; d <= pmax+1e-9; d += ds {
		if d == 0 {
			d = 0 // not −0 in the label
		}
		if math.Abs(d) >= 90 {
			continue
		}
		var line plotter.XYs
		for s := 0; s <= 90; s++ {
			lam := lmin + (lmax-lmin)*float64(s)/90
			x, y := Mollweide(lam*deg, d*deg)
			line = append(line, plotter.XY{X: x, Y: y})
		}
		if l, err := plotter.NewLine(line); err == nil {
			l.Color, l.Width = grey, 0.5
			l.Dashes = []vg.Length{2, 2}
			p.Add(l)
		}
		th := mollweideTheta(d * deg)
		if c := math.Cos(th); c > 1e-9 {
			lam := math.Pi * xl / (2 * math.Sqrt2 * c)
			if math.Abs(lam) <= math.Pi {
				labs.XYs = append(labs.XYs, plotter.XY{X: xl, Y: math.Sqrt2 * math.Sin(th)})
				labs.Labels = append(labs.Labels, fmt.Sprintf("%+g°", d))
			}
		}
	}
	if len(labs.XYs) == 0 {
		return
	}
	if lb, err := plotter.NewLabels(labs); err == nil {
		for i := range lb.TextStyle {
			lb.TextStyle[i].Font.Size = 8
			lb.TextStyle[i].Color = color.Gray{Y: 0x30}
		}
		p.Add(lb)
	}
}
