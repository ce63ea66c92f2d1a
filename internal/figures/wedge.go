package figures

import (
	"errors"
	"fmt"
	"image"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"

	"github.com/filigree-survey/filigree/internal/parallel"
)

// errNoSky is returned by figures that need sky positions of a box run.
var errNoSky = errors.New("the table has no ra/dec/comov_dist columns (a box-mode run?)")

// Wedge draws the cone diagram of a declination slab: every galaxy with
// |dec − centre| ≤ thickness/2 at polar angle RA and radius comoving
// distance (Mpc/h), observer at the origin, RA increasing to the left,
// coloured by web class. Under the galaxies lies the smoothed density
// log10(1+δ) of the fields cube sampled (trilinearly) on the wedge's
// central declination at every pixel; parts outside the survey (IN_SURVEY
// below ½, or the footprint's zero completeness when the cube has no
// IN_SURVEY) are grey and the survey's edges and holes are outlined.
// Without a fields cube only the galaxies and the footprint's angular edges
// are drawn. It is an error for a table without ra, dec and comov_dist.
func Wedge(in Inputs, opt Options) (*Figure, error) {
	t := in.Table
	ra, dec, _ := skyCols(t)
	dist := floatCol(t, "comov_dist")
	if ra == nil || dec == nil || dist == nil {
		return nil, fmt.Errorf("wedge: %w", errNoSky)
	}
	g, err := in.grid()
	if err != nil {
		return nil, err
	}
	dc := opt.SlabCentre
	if !opt.HasCentre || math.IsNaN(dc) {
		dc = median(dec)
	}
	th := opt.SlabThickness
	if !opt.HasThickness || !(th > 0) {
		th = 4
	}
	if math.Abs(dc) > 90 {
		return nil, fmt.Errorf("wedge: slab centre %g° is not a declination", dc)
	}
	var sel []int
	var sx, sy float64
	for i := range ra {
		if math.Abs(dec[i]-dc) <= th/2 && dist[i] > 0 {
			sel = append(sel, i)
			sx += math.Cos(ra[i] * math.Pi / 180)
			sy += math.Sin(ra[i] * math.Pi / 180)
		}
	}
	if len(sel) == 0 {
		return nil, fmt.Errorf("wedge: no galaxies with declination within %g° of %g°", th/2, dc)
	}
	rac := math.Atan2(sy, sx) * 180 / math.Pi
	// Angular extent and depth of the wedge from the selected galaxies.
	dmin, dmax, rmax := math.Inf(1), math.Inf(-1), 0.0
	for _, i := range sel {
		d := wrapDeg(ra[i] - rac)
		dmin, dmax = math.Min(dmin, d), math.Max(dmax, d)
		rmax = math.Max(rmax, dist[i])
	}
	pad := 0.02 * (dmax - dmin)
	dmin, dmax = math.Max(dmin-pad, -180), math.Min(dmax+pad, 180)
	rmax *= 1.02
	toXY := func(d, r float64) (float64, float64) {
		a := d * math.Pi / 180
		return -r * math.Sin(a), r * math.Cos(a)
	}
	// Bounding box of the sector.
	x0, x1, y0, y1 := 0.0, 0.0, 0.0, 0.0
	for s := 0; s <= 64; s++ {
		x, y := toXY(dmin+(dmax-dmin)*float64(s)/64, rmax)
		x0, x1, y0, y1 = math.Min(x0, x), math.Max(x1, x), math.Min(y0, y), math.Max(y1, y)
	}
	f := &Figure{Width: 9 * vg.Inch, Height: 7 * vg.Inch}
	p := newPlot(fmt.Sprintf("%s: wedge, Dec %.2f° ± %.2f° (%d galaxies)\n%s", in.title(), dc, th/2, len(sel), in.scaleNote()),
		"transverse comoving distance (Mpc/h)", fmt.Sprintf("comoving distance toward RA %.1f° (Mpc/h)", normDeg(rac)))

	// The density image, one sample per pixel on the slab's central
	// declination.
	if g != nil || in.Footprint != nil {
		const nx = 720
		ny := int(math.Ceil(nx * (y1 - y0) / (x1 - x0)))
		ny = max(32, min(ny, 1400))
		img := image.NewNRGBA(image.Rect(0, 0, nx, ny))
		inside := make([]int8, nx*ny) // −1 not in the wedge, 0 outside the survey, 1 inside
		cd, sd := math.Cos(dc*math.Pi/180), math.Sin(dc*math.Pi/180)
		parallel.For(ny, 8, func(lo, hi int) {
			for j := lo; j < hi; j++ {
				y := y1 - (float64(j)+0.5)*(y1-y0)/float64(ny)
				for k := 0; k < nx; k++ {
					x := x0 + (float64(k)+0.5)*(x1-x0)/float64(nx)
					r := math.Hypot(x, y)
					d := math.Atan2(-x, y) * 180 / math.Pi
					if r > rmax || d < dmin || d > dmax {
						inside[j*nx+k] = -1
						continue
					}
					a := (rac + d) * math.Pi / 180
					pos := [3]float64{r * cd * math.Cos(a), r * cd * math.Sin(a), r * sd}
					in1 := true
					dv := math.NaN()
					if g != nil {
						dv = g.sample(g.delta, pos)
						if g.inSur != nil {
							in1 = g.sample(g.inSur, pos) >= 0.5
						} else if in.Footprint != nil {
							in1 = in.Footprint.Completeness(normDeg(rac+d), dc) > 0
						}
						in1 = in1 && !math.IsNaN(dv)
					} else {
						in1 = in.Footprint.Completeness(normDeg(rac+d), dc) > 0
					}
					c := OutsideColor
					if in1 {
						inside[j*nx+k] = 1
						if g != nil {
							c = DensityColor(densityScale(dv))
						} else {
							c = color.NRGBA{R: 0xFF, G: 0xFF, B: 0xFF, A: 0xFF}
						}
					}
					img.SetNRGBA(k, j, c)
				}
			}
		})
		outline(img, inside, nx, ny)
		p.Add(rasterImage(img, x0, y0, x1, y1))
		if g != nil {
			f.bar = colourBar(densLo, densHi, "log10(1 + δ), smoothed")
		}
	}
	// The sector's frame and RA labels.
	var arc plotter.XYs
	arc = append(arc, plotter.XY{})
	for s := 0; s <= 128; s++ {
		x, y := toXY(dmin+(dmax-dmin)*float64(s)/128, rmax)
		arc = append(arc, plotter.XY{X: x, Y: y})
	}
	arc = append(arc, plotter.XY{})
	if l, err := plotter.NewLine(arc); err == nil {
		l.Color = color.Gray{Y: 0x60}
		l.Width = 0.6
		p.Add(l)
	}
	step := niceStep(dmax-dmin, 6)
	var labs plotter.XYLabels
	for d := math.Ceil((dmin+rac)/step) * step; d <= dmax+rac; d += step {
		x, y := toXY(d-rac, rmax*1.035)
		labs.XYs = append(labs.XYs, plotter.XY{X: x, Y: y})
		labs.Labels = append(labs.Labels, fmt.Sprintf("%g°", normDeg(d)))
		// a tick on the arc
		xa, ya := toXY(d-rac, rmax)
		xb, yb := toXY(d-rac, rmax*0.985)
		if l, err := plotter.NewLine(plotter.XYs{{X: xa, Y: ya}, {X: xb, Y: yb}}); err == nil {
			l.Width = 0.6
			p.Add(l)
		}
	}
	if lb, err := plotter.NewLabels(labs); err == nil {
		for i := range lb.TextStyle {
			lb.TextStyle[i].Font.Size = 8
			lb.TextStyle[i].XAlign = -0.5
			lb.TextStyle[i].YAlign = -0.5
		}
		p.Add(lb)
	}
	sel, k := thin(sel, opt.maxPoints())
	gx := &galaxies{radius: markerRadius(len(sel), 1.8)}
	codes := classes(t)
	hasNull := false
	for _, i := range sel {
		x, y := toXY(wrapDeg(ra[i]-rac), dist[i])
		gx.x, gx.y, gx.code = append(gx.x, x), append(gx.y, y), append(gx.code, codes[i])
		hasNull = hasNull || codes[i] < 0
	}
	p.Add(gx)
	f.legend = classLegend(hasNull)
	f.main = p
	f.equal = &[4]float64{x0, x1, y0, y1 * 1.06}
	f.note = "RA labels on the arc (deg)"
	if k > 1 {
		f.note += fmt.Sprintf("\n1 in %d galaxies drawn", k)
	}
	if g == nil {
		f.note += "\nno fields cube: galaxies only"
	}
	return f, nil
}

// outline paints the boundary pixels of the inside mask (inside next to
// outside, within the wedge) in EdgeColor: the survey edges and holes.
func outline(img *image.NRGBA, inside []int8, nx, ny int) {
	for j := 0; j < ny; j++ {
		for k := 0; k < nx; k++ {
			if inside[j*nx+k] != 1 {
				continue
			}
			for _, d := range [4][2]int{{1, 0}, {-1, 0}, {0, 1}, {0, -1}} {
				jj, kk := j+d[0], k+d[1]
				if jj < 0 || jj >= ny || kk < 0 || kk >= nx {
					continue
				}
				if inside[jj*nx+kk] == 0 {
					img.SetNRGBA(k, j, EdgeColor)
					break
				}
			}
		}
	}
}

// equalAspect sets the axis ranges to cover x0…x1, y0…y1 with one unit
// of the same length along x and y on a data area of w × h.
func equalAspect(pl *plot.Plot, x0, x1, y0, y1 float64, w, h vg.Length) {
	sx, sy := x1-x0, y1-y0
	want := float64(w) / float64(h)
	if sx/sy < want {
		c := (x0 + x1) / 2
		sx = sy * want
		x0, x1 = c-sx/2, c+sx/2
	} else {
		c := (y0 + y1) / 2
		sy = sx / want
		y0, y1 = c-sy/2, c+sy/2
	}
	pl.X.Min, pl.X.Max, pl.Y.Min, pl.Y.Max = x0, x1, y0, y1
}

// wrapDeg wraps an angle in degrees into [−180, 180).
func wrapDeg(a float64) float64 {
	a = math.Mod(a+180, 360)
	if a < 0 {
		a += 360
	}
	return a - 180
}

// normDeg wraps an angle in degrees into [0, 360).
func normDeg(a float64) float64 {
	a = math.Mod(a, 360)
	if a < 0 {
		a += 360
	}
	return a
}
