package figures

import (
	"fmt"
	"image/color"
	"math"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
)

// Fractions draws the volume and mass fractions of the four web classes as
// pairs of bars, each class in its colour (volume solid, mass hatched so
// that the pair is told apart without colour). The numbers come from the
// run's summary; without one, the volume fractions are recounted from the
// fields cube (cells inside the survey) and the mass fractions from the
// table (weighted share of labelled galaxies), which is how filigree run
// computes them; a missing source leaves its bars out.
func Fractions(in Inputs, opt Options) (*Figure, error) {
	vol, mass, src := fractions(in)
	if vol == nil && mass == nil {
		return nil, fmt.Errorf("fractions: no summary, no fields cube and no web_tidal column")
	}
	f := &Figure{Width: 7 * vg.Inch, Height: 4.8 * vg.Inch}
	p := newPlot(fmt.Sprintf("%s: web-class fractions (%s)\n%s", in.title(), src, in.scaleNote()), "", "fraction")
	w := vg.Points(26)
	p.Add(plotter.NewGrid())
	var vals [2][4]float64
	have := [2]bool{vol != nil, mass != nil}
	for c := 0; c < 4; c++ {
		if vol != nil {
			vals[0][c] = vol[c]
		}
		if mass != nil {
			vals[1][c] = mass[c]
		}
	}
	for k, name := range []string{"volume", "mass"} {
		if !have[k] {
			continue
		}
		b := &fractionBars{vals: vals[k], width: w, offset: vg.Length(2*k-1) * w / 2, hatched: k == 1}
		p.Add(b)
		p.Legend.Add(name, fractionThumb{hatched: k == 1})
	}
	p.NominalX(ClassLabel(0), ClassLabel(1), ClassLabel(2), ClassLabel(3))
	p.Y.Min = 0
	top := 0.0
	for k := range vals {
		for _, v := range vals[k] {
			if !math.IsNaN(v) {
				top = math.Max(top, v)
			}
		}
	}
	p.Y.Max = math.Max(0.1, top*1.15)
	p.Legend.Top = true
	p.Legend.TextStyle.Font.Size = 9
	f.main = p
	return f, nil
}

// fractions returns the volume and mass fractions by code and their source.
func fractions(in Inputs) (vol, mass []float64, src string) {
	if s := in.Summary; s != nil && (len(s.VolumeFractions) > 0 || len(s.MassFractions) > 0) {
		get := func(m map[string]float64) []float64 {
			if len(m) == 0 {
				return nil
			}
			v := make([]float64, 4)
			for c, n := range ClassNames {
				x, ok := m[n]
				if !ok {
					x = math.NaN()
				}
				v[c] = x
			}
			return v
		}
		return get(s.VolumeFractions), get(s.MassFractions), "from the run summary"
	}
	src = "recounted from the table and fields"
	if g, err := in.grid(); err == nil && g != nil && g.web != nil {
		var n [4]float64
		var tot float64
		for i, c := range g.web {
			if g.inSur != nil && g.inSur[i] < 0.5 {
				continue
			}
			tot++
			if c >= 0 && c <= 3 {
				n[int(c)]++
			}
		}
		if tot > 0 {
			vol = make([]float64, 4)
			for c := range n {
				vol[c] = n[c] / tot
			}
		}
	}
	if t := in.Table; t != nil && t.ColFold("web_tidal") != nil {
		codes := classes(t)
		w := floatCol(t, "weight")
		var m [4]float64
		var tot float64
		for i, c := range codes {
			if c < 0 {
				continue
			}
			wi := 1.0
			if w != nil {
				wi = w[i]
			}
			if !(wi > 0) {
				continue
			}
			m[c] += wi
			tot += wi
		}
		if tot > 0 {
			mass = make([]float64, 4)
			for c := range m {
				mass[c] = m[c] / tot
			}
		}
	}
	return vol, mass, src
}

// fractionBars draws one bar per class at x = code, shifted by offset.
type fractionBars struct {
	vals    [4]float64
	width   vg.Length
	offset  vg.Length
	hatched bool
}

// Plot draws the bars and their values.
func (b *fractionBars) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	for k, v := range b.vals {
		if math.IsNaN(v) {
			continue
		}
		x := trX(float64(k)) + b.offset
		r := vg.Rectangle{Min: vg.Point{X: x - b.width/2, Y: trY(0)}, Max: vg.Point{X: x + b.width/2, Y: trY(v)}}
		drawBar(&c, r, ClassColors[k], b.hatched)
		ts := p.Title.TextStyle
		ts.Font.Size = 8
		ts.XAlign, ts.YAlign = draw.XCenter, draw.YBottom
		c.FillText(ts, vg.Point{X: x, Y: r.Max.Y + 2}, fmt.Sprintf("%.3f", v))
	}
}

// DataRange covers the four classes and the bars' heights.
func (b *fractionBars) DataRange() (xmin, xmax, ymin, ymax float64) {
	ymax = 0
	for _, v := range b.vals {
		if !math.IsNaN(v) {
			ymax = math.Max(ymax, v)
		}
	}
	return -0.5, 3.5, 0, ymax
}

func drawBar(c *draw.Canvas, r vg.Rectangle, col color.Color, hatched bool) {
	c.SetColor(col)
	c.Fill(r.Path())
	if hatched {
		// white diagonal hatching: the mass bars differ from the volume
		// bars by pattern as well as position.
		c.Push()
		c.SetColor(color.White)
		c.SetLineWidth(1.2)
		h := r.Max.Y - r.Min.Y
		for x := r.Min.X - h; x < r.Max.X; x += 5 {
			x0, y0 := x, r.Min.Y
			x1, y1 := x+h, r.Max.Y
			// clip the segment to the bar
			if x0 < r.Min.X {
				y0 += r.Min.X - x0
				x0 = r.Min.X
			}
			if x1 > r.Max.X {
				y1 -= x1 - r.Max.X
				x1 = r.Max.X
			}
			if x1 <= x0 {
				continue
			}
			var pth vg.Path
			pth.Move(vg.Point{X: x0, Y: y0})
			pth.Line(vg.Point{X: x1, Y: y1})
			c.Stroke(pth)
		}
		c.Pop()
	}
	c.SetColor(color.NRGBA{R: 0x20, G: 0x20, B: 0x20, A: 0xFF})
	c.SetLineWidth(0.5)
	c.Stroke(r.Path())
}

// fractionThumb is the legend entry of the volume (solid) or mass
// (hatched) bars, in a neutral grey.
type fractionThumb struct{ hatched bool }

// Thumbnail draws a small bar.
func (t fractionThumb) Thumbnail(c *draw.Canvas) {
	drawBar(c, c.Rectangle, color.NRGBA{R: 0x70, G: 0x70, B: 0x70, A: 0xFF}, t.hatched)
}
