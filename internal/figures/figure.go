package figures

import (
	"bytes"
	"fmt"
	"image"
	"image/color"
	"io"
	"math"
	"path/filepath"
	"strings"

	"gonum.org/v1/plot"
	"gonum.org/v1/plot/plotter"
	"gonum.org/v1/plot/vg"
	"gonum.org/v1/plot/vg/draw"
	_ "gonum.org/v1/plot/vg/vgimg" // registers png
	_ "gonum.org/v1/plot/vg/vgpdf" // registers pdf
	_ "gonum.org/v1/plot/vg/vgsvg" // registers svg

	"github.com/filigree-survey/filigree/survey"
)

// Figure is a drawn figure ready to be written in any of the supported
// formats (see Formats).
type Figure struct {
	// Width and Height are the page size.
	Width, Height vg.Length
	main          *plot.Plot
	legend        *plot.Legend // drawn in the side column when non-nil
	bar           *plot.Plot   // colour bar in the side column when non-nil
	note          string       // small print under the side column
	equal         *[4]float64  // x0, x1, y0, y1 to show at equal scales, or nil
}

// Formats are the output formats by file extension.
var Formats = []string{"png", "svg", "pdf"}

// sideWidth is the width of the column right of the plot that holds the
// class legend and the colour bar.
const sideWidth = 1.7 * vg.Inch

// Draw draws the figure onto c.
func (f *Figure) Draw(c draw.Canvas) {
	// A white page: SVG and PDF are transparent otherwise.
	c.SetColor(color.White)
	c.Fill(c.Rectangle.Path())
	mainC := c
	if f.legend != nil || f.bar != nil {
		mainC = draw.Crop(c, 0, -sideWidth, 0, 0)
	}
	if e := f.equal; e != nil {
		// The data area depends on the tick labels, which depend on the
		// ranges: two passes settle it.
		for pass := 0; pass < 2; pass++ {
			da := f.main.DataCanvas(mainC)
			equalAspect(f.main, e[0], e[1], e[2], e[3], da.Max.X-da.Min.X, da.Max.Y-da.Min.Y)
		}
	}
	f.main.Draw(mainC)
	if f.legend == nil && f.bar == nil {
		return
	}
	w := c.Max.X - c.Min.X
	side := draw.Crop(c, w-sideWidth, 0, 0, 0)
	h := side.Max.Y - side.Min.Y
	if f.legend != nil {
		top := draw.Crop(side, 0.1*vg.Inch, 0, h/2, -0.35*vg.Inch)
		f.legend.Draw(top)
	}
	if f.bar != nil {
		low := draw.Crop(side, 0, -0.6*vg.Inch, 0.55*vg.Inch, -h/2-0.1*vg.Inch)
		if f.legend == nil {
			low = draw.Crop(side, 0, -0.6*vg.Inch, 0.55*vg.Inch, -0.35*vg.Inch)
		}
		f.bar.Draw(low)
	}
	if f.note != "" {
		ts := f.main.Title.TextStyle
		ts.Font.Size = 7
		ts.XAlign = draw.XLeft
		ts.YAlign = draw.YBottom
		ts.Color = color.Gray{Y: 0x40}
		side.FillText(ts, vg.Point{X: side.Min.X + 0.1*vg.Inch, Y: side.Min.Y + 0.08*vg.Inch}, f.note)
	}
}

// Encode writes the figure to w in format ("png", "svg" or "pdf").
func (f *Figure) Encode(w io.Writer, format string) error {
	cv, err := draw.NewFormattedCanvas(f.Width, f.Height, format)
	if err != nil {
		return err
	}
	f.Draw(draw.New(cv))
	_, err = cv.WriteTo(w)
	return err
}

// Bytes returns the figure encoded in format.
func (f *Figure) Bytes(format string) ([]byte, error) {
	var b bytes.Buffer
	if err := f.Encode(&b, format); err != nil {
		return nil, err
	}
	return b.Bytes(), nil
}

// FormatOf returns the format named by path's extension, an error for an
// extension other than .png, .svg or .pdf.
func FormatOf(path string) (string, error) {
	ext := strings.ToLower(strings.TrimPrefix(filepath.Ext(path), "."))
	for _, f := range Formats {
		if ext == f {
			return f, nil
		}
	}
	return "", fmt.Errorf("%s: unknown figure format %q (use .png, .svg or .pdf)", path, ext)
}

// Save writes the figure to path in the format of its extension; the file
// appears only when complete (survey.WriteAtomic).
func (f *Figure) Save(path string) error {
	format, err := FormatOf(path)
	if err != nil {
		return err
	}
	return survey.WriteAtomic(path, func(w io.Writer) error { return f.Encode(w, format) })
}

// newPlot returns a plot with the project's common styling.
func newPlot(title, xlabel, ylabel string) *plot.Plot {
	p := plot.New()
	p.Title.Text = title
	p.Title.TextStyle.Font.Size = 11
	p.X.Label.Text = xlabel
	p.Y.Label.Text = ylabel
	p.X.Label.TextStyle.Font.Size = 10
	p.Y.Label.TextStyle.Font.Size = 10
	return p
}

// classLegend is a legend of the web classes (name and code), with the
// unlabelled entry when some rows have no label.
func classLegend(withUnlabelled bool) *plot.Legend {
	l := plot.NewLegend()
	l.Top, l.Left = true, true
	l.TextStyle.Font.Size = 9
	l.ThumbnailWidth = 0.25 * vg.Inch
	for c := 3; c >= 0; c-- {
		l.Add(ClassLabel(c), classThumb{c})
	}
	if withUnlabelled {
		l.Add(ClassLabel(-1), classThumb{-1})
	}
	return &l
}

// classThumb draws a class's marker in the legend.
type classThumb struct{ c int }

// Thumbnail draws the marker of the class at the centre of c.
func (t classThumb) Thumbnail(c *draw.Canvas) {
	pt := c.Center()
	galaxyGlyph(t.c, 3.2).drawAt(c, pt)
}

// glyph is a galaxy's marker: a filled disc of the class colour with a thin
// dark rim (so that the pale void colour stays visible on white), and an
// open grey ring for galaxies without a label (a shape cue besides colour).
type glyph struct {
	fill   color.Color
	radius vg.Length
	open   bool
}

func galaxyGlyph(code int, r vg.Length) glyph {
	return glyph{fill: ClassColor(code), radius: r, open: code < 0 || code > 3}
}

func (g glyph) drawAt(c *draw.Canvas, pt vg.Point) {
	var p vg.Path
	p.Move(vg.Point{X: pt.X + g.radius, Y: pt.Y})
	p.Arc(pt, g.radius, 0, 2*3.141592653589793)
	p.Close()
	if g.open {
		c.SetLineWidth(0.6)
		c.SetColor(g.fill)
		c.Stroke(p)
		return
	}
	c.SetColor(g.fill)
	c.Fill(p)
	c.SetLineWidth(0.25)
	c.SetColor(color.NRGBA{R: 0x30, G: 0x30, B: 0x30, A: 0xB0})
	c.Stroke(p)
}

// galaxies is a plotter of galaxy markers coloured by web class; knots are
// drawn last so that the rare dense classes are not buried.
type galaxies struct {
	x, y   []float64
	code   []int8
	radius vg.Length
}

// Plot draws the markers in class order (unlabelled, void … knot).
func (g *galaxies) Plot(c draw.Canvas, p *plot.Plot) {
	trX, trY := p.Transforms(&c)
	for _, want := range []int8{-1, 0, 1, 2, 3} {
		gl := galaxyGlyph(int(want), g.radius)
		for i := range g.x {
			if g.code[i] != want {
				continue
			}
			pt := vg.Point{X: trX(g.x[i]), Y: trY(g.y[i])}
			if !c.Contains(pt) {
				continue
			}
			gl.drawAt(&c, pt)
		}
	}
}

// DataRange returns the extent of the markers.
func (g *galaxies) DataRange() (xmin, xmax, ymin, ymax float64) {
	return plotter.XYRange(plotter.XYs(xyPairs(g.x, g.y)))
}

func xyPairs(x, y []float64) plotter.XYs {
	xy := make(plotter.XYs, 0, len(x))
	for i := range x {
		if x[i] == x[i] && y[i] == y[i] {
			xy = append(xy, plotter.XY{X: x[i], Y: y[i]})
		}
	}
	return xy
}

// markerRadius shrinks the galaxy markers as their number grows so that a
// dense figure does not turn into a solid sheet of colour.
func markerRadius(n int, base vg.Length) vg.Length {
	r := base * vg.Length(math.Sqrt(4000/math.Max(float64(n), 1)))
	return max(0.55, min(base, r))
}

// thin keeps at most max of the indices idx, every k-th in order (a
// deterministic, spatially unbiased subsample of a file-ordered catalogue),
// and returns k (1 when all are kept).
func thin(idx []int, max int) ([]int, int) {
	if max <= 0 || len(idx) <= max {
		return idx, 1
	}
	k := (len(idx) + max - 1) / max
	out := make([]int, 0, len(idx)/k+1)
	for i := 0; i < len(idx); i += k {
		out = append(out, idx[i])
	}
	return out, k
}

// colourBar is a vertical bar of the density ramp from lo to hi with the
// axis label ylabel.
func colourBar(lo, hi float64, ylabel string) *plot.Plot {
	return colourBarPart(lo, hi, 0, 1, ylabel)
}

// colourBarPart is a colour bar of the part t0…t1 of the density ramp,
// labelled lo…hi.
func colourBarPart(lo, hi, t0, t1 float64, ylabel string) *plot.Plot {
	p := plot.New()
	const n = 256
	img := image.NewNRGBA(image.Rect(0, 0, 1, n))
	for j := 0; j < n; j++ {
		img.SetNRGBA(0, n-1-j, DensityColor(t0+(t1-t0)*(float64(j)+0.5)/n))
	}
	p.Add(plotter.NewImage(img, 0, lo, 1, hi))
	p.HideX()
	p.Y.Min, p.Y.Max = lo, hi
	p.Y.Label.Text = ylabel
	p.Y.Label.TextStyle.Font.Size = 9
	p.Y.Tick.Label.Font.Size = 8
	return p
}

// rasterImage places img over the data rectangle (xmin, ymin)–(xmax,
// ymax), its first row at the top.
func rasterImage(img image.Image, xmin, ymin, xmax, ymax float64) *plotter.Image {
	return plotter.NewImage(img, xmin, ymin, xmax, ymax)
}
