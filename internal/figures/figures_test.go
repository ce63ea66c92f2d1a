package figures

import (
	"bytes"
	"image"
	_ "image/png"
	"math"
	"os"
	"path/filepath"
	"strings"
	"testing"

	"gonum.org/v1/plot/vg/draw"
	"gonum.org/v1/plot/vg/vgimg"

	"github.com/filigree-survey/filigree/survey"
)

// synthetic returns a small survey-mode run output and fields cube built in
// memory: galaxies on a cone toward RA 170°, Dec 10°, with web codes and δ
// from a linear density field δ(x) = a·x + b·y + c·z + d on a 16³ grid.
func synthetic(t *testing.T) Inputs {
	t.Helper()
	const n, h = 16, 20.0
	origin := [3]float64{-300, 0, -20}
	cards := []survey.HeaderCard{
		{Key: "GRIDN", Value: int64(n)}, {Key: "BOXSIZE", Value: n * h}, {Key: "CELLSIZE", Value: h},
		{Key: "ORIGINX", Value: origin[0]}, {Key: "ORIGINY", Value: origin[1]}, {Key: "ORIGINZ", Value: origin[2]},
		{Key: "SMOOTH", Value: 5.5}, {Key: "THRESH", Value: 0.3}, {Key: "MODE", Value: "survey"},
	}
	delta := make([]float32, n*n*n)
	web := make([]float32, n*n*n)
	in := make([]float32, n*n*n)
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			for k := 0; k < n; k++ {
				c := (i*n+j)*n + k
				x := origin[0] + (float64(i)+0.5)*h
				y := origin[1] + (float64(j)+0.5)*h
				z := origin[2] + (float64(k)+0.5)*h
				delta[c] = float32(linField(x, y, z))
				web[c] = float32((i + j + k) % 4)
				if j > 1 && j < n-2 {
					in[c] = 1
				}
			}
		}
	}
	shape := [3]int{n, n, n}
	cf := &survey.CubeFile{Primary: cards, Cubes: []survey.Cube{
		{Name: "DELTA", Shape: shape, Data: delta, Cards: cards},
		{Name: "WEB_TIDAL", Shape: shape, Data: web, Cards: cards},
		{Name: "IN_SURVEY", Shape: shape, Data: in, Cards: cards},
	}}
	tab := &survey.Table{Name: "SYN"}
	cols := map[string][]float64{}
	var codes []int64
	for s := 0; s < 3000; s++ {
		ra := 160 + 20*math.Mod(float64(s)*0.618034, 1)
		dec := 4 + 12*math.Mod(float64(s)*0.414214, 1)
		r := 30 + 200*math.Mod(float64(s)*0.732051, 1)
		x := r * math.Cos(dec*deg) * math.Cos(ra*deg)
		y := r * math.Cos(dec*deg) * math.Sin(ra*deg)
		z := r * math.Sin(dec*deg)
		for k, v := range map[string]float64{"ra": ra, "dec": dec, "z": r / 3000, "comov_dist": r,
			"cart_x": x, "cart_y": y, "cart_z": z, "delta": linField(x, y, z), "weight": 1} {
			cols[k] = append(cols[k], v)
		}
		codes = append(codes, int64(s%5)) // 4 stands for "no label" below
	}
	for _, k := range []string{"ra", "dec", "z", "comov_dist", "cart_x", "cart_y", "cart_z", "delta", "weight"} {
		c := survey.NewColumn(k, survey.Float64, 0)
		c.F = cols[k]
		tab.Cols = append(tab.Cols, c)
	}
	wc := survey.NewColumn("web_tidal", survey.Int64, 0)
	wc.I = codes
	for i, c := range codes {
		if c == 4 {
			wc.SetNull(i)
		}
	}
	tab.Cols = append(tab.Cols, wc)
	return Inputs{Table: tab, Fields: cf, Name: "synthetic"}
}

func linField(x, y, z float64) float64 { return 0.002*x - 0.003*y + 0.004*z + 0.5 }

// TestSampleTrilinear: trilinear interpolation reproduces a linear field
// exactly (to float32 storage) anywhere between cell centres.
func TestSampleTrilinear(t *testing.T) {
	in := synthetic(t)
	g, err := in.grid()
	if err != nil {
		t.Fatal(err)
	}
	for _, p := range [][3]float64{{-200, 100, 50}, {-291, 11, -9}, {-1, 300, 280}, {-150.5, 155.25, 130.75}} {
		got := g.sample(g.delta, p)
		if want := linField(p[0], p[1], p[2]); math.Abs(got-want) > 1e-5 {
			t.Errorf("sample at %v = %v, want %v", p, got, want)
		}
	}
	if v := g.sample(g.delta, [3]float64{-400, 0, 0}); !math.IsNaN(v) {
		t.Errorf("outside the grid: %v, want NaN", v)
	}
	if r, th := in.runScales(); r != 5.5 || th != 0.3 {
		t.Errorf("scales from the cube cards: R %v, λ %v", r, th)
	}
}

// TestWritePlots draws every figure from in-memory inputs and reads the
// PNGs back; the n(z) has no provenance and so draws without a fit.
func TestWritePlots(t *testing.T) {
	in := synthetic(t)
	dir := t.TempDir()
	paths, err := WritePlots(dir, in)
	if err != nil {
		t.Fatal(err)
	}
	if len(paths) != len(Kinds) {
		t.Fatalf("wrote %v, want all of %v", paths, Kinds)
	}
	for _, p := range paths {
		b, err := os.ReadFile(p)
		if err != nil {
			t.Fatal(err)
		}
		if _, f, err := image.Decode(bytes.NewReader(b)); err != nil || f != "png" {
			t.Errorf("%s: %v", p, err)
		}
	}
	if filepath.Base(paths[0]) != "wedge.png" {
		t.Errorf("first figure %s", paths[0])
	}
	// A box-mode table (x, y, z only) has no wedge, sky or n(z).
	box := &survey.Table{}
	for _, k := range []string{"x", "y", "z", "delta"} {
		c := survey.NewColumn(k, survey.Float64, 0)
		c.F = []float64{1, 2, 3}
		box.Cols = append(box.Cols, c)
	}
	if got := strings.Join(Applicable(Inputs{Table: box}), ","); got != "slice,density" {
		t.Errorf("box table: applicable %s, want slice,density", got)
	}
	if _, err := Draw("pie", in, Options{}); err == nil {
		t.Error("unknown kind accepted")
	}
	// Options: a wedge slab with no galaxies is an error, not an empty figure.
	if _, err := Wedge(in, Options{SlabCentre: -60, HasCentre: true}); err == nil {
		t.Error("empty wedge slab accepted")
	}
}

// TestFractionsRecount: without a summary the fractions are recounted,
// volume from the cube's cells inside the survey and mass from the
// labelled galaxies' weights; codes cycle 0–3 over the cells and 0–4 (4 =
// null) over the galaxies, so every class holds a quarter of each.
func TestFractionsRecount(t *testing.T) {
	in := synthetic(t)
	vol, mass, _ := fractions(in)
	for c := 0; c < 4; c++ {
		if math.Abs(vol[c]-0.25) > 1e-12 || math.Abs(mass[c]-0.25) > 1e-12 {
			t.Errorf("class %d: volume %v, mass %v, want 0.25", c, vol[c], mass[c])
		}
	}
}

// TestEqualScales: the wedge, slice and sky show one unit the same length
// along both axes (a cone diagram that stretched one axis would misstate
// distances).
func TestEqualScales(t *testing.T) {
	in := synthetic(t)
	for _, k := range []string{"wedge", "slice", "sky"} {
		f, err := Draw(k, in, Options{})
		if err != nil {
			t.Fatal(err)
		}
		c := draw.New(vgimg.New(f.Width, f.Height))
		f.Draw(c)
		da := f.main.DataCanvas(draw.Crop(c, 0, -sideWidth, 0, 0))
		sx := float64(da.Max.X-da.Min.X) / (f.main.X.Max - f.main.X.Min)
		sy := float64(da.Max.Y-da.Min.Y) / (f.main.Y.Max - f.main.Y.Min)
		if math.Abs(sx/sy-1) > 1e-3 {
			t.Errorf("%s: x scale %v, y scale %v per unit", k, sx, sy)
		}
	}
}

// TestClassColoursDrawn is the plot check: each figure that draws
// galaxies by class is a readable PNG, and the galaxies of every class are
// drawn in that class's colour in the plotted region: the number of pixels
// of each class colour is larger than in the same figure drawn with the
// galaxies of that class removed (legend swatches are in both).
func TestClassColoursDrawn(t *testing.T) {
	count := func(in Inputs, kind string) ([4]int, image.Rectangle) {
		t.Helper()
		dir := t.TempDir()
		paths, err := WritePlots(dir, in)
		if err != nil {
			t.Fatal(err)
		}
		var found [4]int
		var bd image.Rectangle
		for _, p := range paths {
			if filepath.Base(p) != kind+".png" {
				continue
			}
			b, err := os.ReadFile(p)
			if err != nil {
				t.Fatal(err)
			}
			img, _, err := image.Decode(bytes.NewReader(b))
			if err != nil {
				t.Fatal(err)
			}
			bd = img.Bounds()
			for y := bd.Min.Y; y < bd.Max.Y; y++ {
				for x := bd.Min.X; x < bd.Max.X; x++ {
					r, g, bl, _ := img.At(x, y).RGBA()
					for c := 0; c < 4; c++ {
						want := ClassColor(c)
						if uint8(r>>8) == want.R && uint8(g>>8) == want.G && uint8(bl>>8) == want.B {
							found[c]++
						}
					}
				}
			}
		}
		return found, bd
	}
	for _, kind := range []string{"wedge", "slice", "sky"} {
		full, bd := count(synthetic(t), kind)
		if bd.Dx() < 400 || bd.Dy() < 300 {
			t.Errorf("%s: %d × %d pixels, too small to read", kind, bd.Dx(), bd.Dy())
		}
		for c := 0; c < 4; c++ {
			in := synthetic(t)
			wc := in.Table.Col("web_tidal")
			for i, v := range wc.I {
				if v == int64(c) {
					wc.SetNull(i)
				}
			}
			without, _ := count(in, kind)
			if !(full[c] > without[c]) {
				t.Errorf("%s: class %d (%s) colour covers %d pixels with its galaxies and %d without", kind, c, ClassLabel(c), full[c], without[c])
			}
		}
	}
}
