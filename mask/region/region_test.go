package region

import (
	"errors"
	"math"
	"math/rand/v2"
	"runtime"
	"strconv"
	"strings"
	"testing"

	"github.com/filigree-survey/filigree/survey"
)

func mustParse(t testing.TB, text string) *Region {
	t.Helper()
	r, err := Parse("test.reg", strings.NewReader(text))
	if err != nil {
		t.Fatal(err)
	}
	return r
}

func near(a, b, tol float64) bool { return math.Abs(a-b) <= tol }

// Spherical cap area 2π(1 − cos θ) (Archimedes' hat-box theorem; any
// spherical-geometry text); the whole sky 4π sr = 41 252.96 deg²
// (/work/shared/checks.md).
func TestCapArea(t *testing.T) {
	for _, r := range []float64{0.01, 1, 10, 60, 90, 135, 179.9, 180} {
		reg, err := New(Shape{Kind: Cap, RA: 30, Dec: -20, Radius: r})
		if err != nil {
			t.Fatal(err)
		}
		m := reg.Measure()
		want := 2 * math.Pi * (1 - math.Cos(r*math.Pi/180)) * SqDegPerSr
		// 1 − cos θ loses digits for small θ: about 1e-16/(θ²/2) relative.
		tol := 1e-12 + 2e-16/(1-math.Cos(r*math.Pi/180))
		if !m.Exact || !near(m.Area, want, tol*want) || m.EffectiveArea != m.Area {
			t.Errorf("cap radius %v: got %+v, want area %v exactly", r, m, want)
		}
	}
	whole := mustParse(t, "include cap centre=0,0 radius=180").Area()
	if !near(whole, 41252.96, 0.005) {
		t.Errorf("whole sky = %v deg², want 41252.96", whole)
	}
}

// RA/Dec box area (α₂ − α₁)(sin δ₂ − sin δ₁) sr (integral of cos δ dδ dα).
func TestBoxArea(t *testing.T) {
	for _, c := range []struct {
		text          string
		width, d1, d2 float64
	}{
		{"include box ra=10,50 dec=-5,30", 40, -5, 30},
		{"include box ra=350,10 dec=-5,5", 20, -5, 5}, // wraps
		{"include box ra=0,360 dec=60,90", 360, 60, 90},
		{"include box ra=300,100 dec=-90,-80 completeness=0.5", 160, -90, -80},
	} {
		reg := mustParse(t, c.text)
		m := reg.Measure()
		want := c.width * math.Pi / 180 * (math.Sin(c.d2*math.Pi/180) - math.Sin(c.d1*math.Pi/180)) * SqDegPerSr
		if !m.Exact || !near(m.Area, want, 1e-12*want) {
			t.Errorf("%s: got %+v, want %v", c.text, m, want)
		}
	}
}

// sphTriangleArea returns the area in sr of the spherical triangle a, b, c
// (RA, Dec pairs in degrees) by Girard's theorem, E = A + B + C − π, with
// the angles from the spherical law of cosines for sides
// (cos A = (cos a − cos b cos c)/(sin b sin c)).
func sphTriangleArea(v [3][2]float64) float64 {
	side := func(p, q [2]float64) float64 {
		return angle(unitVec(p[0], p[1]), unitVec(q[0], q[1]))
	}
	a, b, c := side(v[1], v[2]), side(v[2], v[0]), side(v[0], v[1])
	ang := func(a, b, c float64) float64 {
		return math.Acos((math.Cos(a) - math.Cos(b)*math.Cos(c)) / (math.Sin(b) * math.Sin(c)))
	}
	return ang(a, b, c) + ang(b, c, a) + ang(c, a, b) - math.Pi
}

func TestPolygonAreaGirard(t *testing.T) {
	// The octant: three right angles, excess π/2 = 4π/8.
	oct := mustParse(t, "include polygon 0,0 90,0 0,90")
	if m := oct.Measure(); !m.Exact || !near(m.Area, 4*math.Pi/8*SqDegPerSr, 1e-9) {
		t.Errorf("octant area %+v, want %v", m, 4*math.Pi/8*SqDegPerSr)
	}
	tri := [3][2]float64{{10, -20}, {70, 5}, {25, 40}}
	reg := mustParse(t, "include polygon 10,-20 70,5 25,40")
	want := sphTriangleArea(tri) * SqDegPerSr
	if got := reg.Area(); !near(got, want, 1e-9*want) {
		t.Errorf("triangle area %v, Girard %v", got, want)
	}
	// Clockwise: the complement.
	cw := mustParse(t, "include polygon 25,40 70,5 10,-20")
	if got := cw.Area(); !near(got, 4*math.Pi*SqDegPerSr-want, 1e-9*want) {
		t.Errorf("clockwise triangle area %v, want %v", got, 4*math.Pi*SqDegPerSr-want)
	}
	// The non-convex arrow is star-shaped from its reflex vertex D: a fan
	// of three triangles from D.
	arrow := mustParse(t, "include polygon 20,-10 40,-10 40,10 30,0 20,10")
	d := [2]float64{30, 0}
	fan := sphTriangleArea([3][2]float64{d, {20, 10}, {20, -10}}) +
		sphTriangleArea([3][2]float64{d, {20, -10}, {40, -10}}) +
		sphTriangleArea([3][2]float64{d, {40, -10}, {40, 10}})
	if got := arrow.Area(); !near(got, fan*SqDegPerSr, 1e-9*got) {
		t.Errorf("arrow area %v, fan of Girard triangles %v", got, fan*SqDegPerSr)
	}
}

// Monte Carlo: the fraction of uniform points that Contains accepts, times
// 4π, must match the exact area within 5 binomial standard deviations.
// This checks the crossing test against Gauss–Bonnet independently.
func TestContainsMonteCarlo(t *testing.T) {
	for _, text := range []string{
		"include polygon 20,-10 40,-10 40,10 30,0 20,10",
		"include polygon 40,10 30,0 40,-10 20,-10 20,10", // clockwise: complement
		"include polygon 0,-60 120,-60 240,-60 200,20 180,-30 160,20 100,70 60,20",
		"include box ra=300,100 dec=-30,45",
		"include cap centre=200,-70 radius=100",
	} {
		reg := mustParse(t, text)
		rng := rand.New(rand.NewPCG(1, 2))
		const n = 200000
		in := 0
		for i := 0; i < n; i++ {
			ra := 360 * rng.Float64()
			dec := math.Asin(2*rng.Float64()-1) * 180 / math.Pi
			if reg.Contains(ra, dec) {
				in++
			}
		}
		f := reg.Area() / (4 * math.Pi * SqDegPerSr)
		sigma := math.Sqrt(f * (1 - f) / n)
		if got := float64(in) / n; math.Abs(got-f) > 5*sigma {
			t.Errorf("%s: fraction %v, area fraction %v ± %v", text, got, f, sigma)
		}
	}
}

func TestContainsPoints(t *testing.T) {
	reg := mustParse(t, `
include polygon 20,-10 40,-10 40,10 30,0 20,10 completeness=0.8
include box ra=350,10 dec=-5,5 completeness=0.6
exclude box ra=355,5 dec=-1,1
include cap centre=0,90 radius=10
include box ra=100,120 dec=-5,5 completeness=0.3
include box ra=110,130 dec=-5,5 completeness=0.7
`)
	for _, c := range []struct {
		ra, dec, comp float64
	}{
		{30, 5, 0}, {30, -5, 0.8}, {25, 5, 0.8}, {35, 5, 0.8}, // notch of the arrow
		{355, 0, 0}, {355, 3, 0.6}, {5, 3, 0.6}, {0, 4, 0.6}, {360, 4, 0.6}, {-5, 4, 0.6}, {11, 0, 0}, {349, 0, 0},
		{359.999, 2, 0.6}, {720.5, 2, 0.6},
		{123, 85, 1}, {0, 90, 1}, {55, 79.5, 0},
		{105, 0, 0.3}, {115, 0, 0.7}, {125, 0, 0.7}, // maximum completeness where boxes overlap
		{0, 91, 0}, {math.NaN(), 0, 0}, {math.Inf(1), 0, 0},
	} {
		if got := reg.Completeness(c.ra, c.dec); got != c.comp {
			t.Errorf("Completeness(%v, %v) = %v, want %v", c.ra, c.dec, got, c.comp)
		}
		if got := reg.Contains(c.ra, c.dec); got != (c.comp > 0) {
			t.Errorf("Contains(%v, %v) = %v", c.ra, c.dec, got)
		}
	}
}

// Boundary rule: shapes are closed (with BoundaryTolerance), so a point on
// an include edge is in, and on a hole's edge is out.
func TestBoundary(t *testing.T) {
	reg := mustParse(t, `
include box ra=10,20 dec=-10,10
exclude box ra=14,16 dec=-2,2
include cap centre=0,90 radius=10
include polygon 40,0 60,0 50,20
`)
	cases := []struct {
		ra, dec float64
		in      bool
	}{
		{10, 0, true}, {20, 5, true}, {15, 10, true}, {15, -10, true}, {10, 10, true}, // include edges and corner
		{10 - 1e-7, 0, false}, {15, 10 + 1e-7, false},
		{14, 0, false}, {16, 1, false}, {15, 2, false}, {15, -2, false}, // hole edges
		{14 - 1e-7, 0, true}, {15, 2 + 1e-7, true},
		{77, 80, true}, {77, 80 - 1e-7, false}, // cap edge (cap at the pole: Dec ≥ 80)
		{50, 0, true}, {50, -1e-7, false}, {45, 0, true}, // polygon edge on the equator
		{40, 0, true}, {50, 20, true}, // polygon vertices
	}
	for _, c := range cases {
		if got := reg.Contains(c.ra, c.dec); got != c.in {
			t.Errorf("Contains(%v, %v) = %v, want %v", c.ra, c.dec, got, c.in)
		}
	}
}

// Numerical areas: combinations whose exact areas are known by subtraction
// or by the union of boxes; the error must be within the stated bound.
func TestMeasureCombinations(t *testing.T) {
	cap := func(r float64) float64 { return 2 * math.Pi * (1 - math.Cos(r*math.Pi/180)) * SqDegPerSr }
	box := func(w, d1, d2 float64) float64 {
		return w * math.Pi / 180 * (math.Sin(d2*math.Pi/180) - math.Sin(d1*math.Pi/180)) * SqDegPerSr
	}
	arrow := mustParse(t, "include polygon 20,-10 40,-10 40,10 30,0 20,10").Area()
	for _, c := range []struct {
		text      string
		area, eff float64
	}{
		{"include cap centre=100,30 radius=10 completeness=0.5\nexclude cap centre=101,31 radius=2",
			cap(10) - cap(2), 0.5 * (cap(10) - cap(2))},
		{"include box ra=0,20 dec=0,10 completeness=0.5\ninclude box ra=10,30 dec=0,10 completeness=0.8",
			box(30, 0, 10), 0.5*box(10, 0, 10) + 0.8*box(20, 0, 10)},
		{"include polygon 20,-10 40,-10 40,10 30,0 20,10 completeness=0.5\ninclude cap centre=30,-6 radius=2",
			arrow, 0.5*arrow + 0.5*cap(2)},
		{"include box ra=350,10 dec=-5,5\nexclude box ra=355,5 dec=-90,90", box(10, -5, 5), box(10, -5, 5)},
		{"exclude cap centre=0,0 radius=5", 0, 0},
	} {
		reg := mustParse(t, c.text)
		m := reg.Measure()
		if m.Exact && c.area > 0 {
			t.Errorf("%q: claimed exact", c.text)
		}
		if math.Abs(m.Area-c.area) > m.MaxError+1e-9*c.area || math.Abs(m.EffectiveArea-c.eff) > m.MaxError+1e-9*c.area {
			t.Errorf("%q: got %+v, want area %v, effective %v", c.text, m, c.area, c.eff)
		}
		// DefaultDepth's doc: about 2.5e-3° × the edge length (here < 100°).
		if m.MaxError > 0.25 {
			t.Errorf("%q: error bound %v deg² is larger than stated", c.text, m.MaxError)
		}
		t.Logf("%q: area %.6f (exact %.6f), error bound %.4f", strings.ReplaceAll(c.text, "\n", "; "), m.Area, c.area, m.MaxError)
	}
}

func TestBoundingCap(t *testing.T) {
	reg := mustParse(t, `
include cap centre=300,-40 radius=25
include box ra=350,10 dec=-5,5
include box ra=100,300 dec=20,60
include polygon 20,-10 40,-10 40,10 30,0 20,10
include polygon 40,10 30,0 40,-10 20,-10 20,10
`)
	rng := rand.New(rand.NewPCG(3, 4))
	for i, s := range reg.Shapes() {
		one, _ := New(s)
		cra, cdec, crad := reg.BoundingCap(i)
		c := unitVec(cra, cdec)
		for k := 0; k < 20000; k++ {
			ra := 360 * rng.Float64()
			dec := math.Asin(2*rng.Float64()-1) * 180 / math.Pi
			if one.Contains(ra, dec) && angle(unitVec(ra, dec), c) > crad*math.Pi/180 {
				t.Fatalf("shape %d contains (%v, %v) outside its bounding cap", i, ra, dec)
			}
		}
	}
}

func TestCompletenessManyThreads(t *testing.T) {
	reg, err := ReadFile("../../testdata/region/example.reg")
	if err != nil {
		t.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(5, 6))
	n := 100000
	ra, dec := make([]float64, n), make([]float64, n)
	for i := range ra {
		ra[i] = 360 * rng.Float64()
		dec[i] = -20 + 30*rng.Float64()
	}
	got1, got2 := make([]float64, n), make([]float64, n)
	old := runtime.GOMAXPROCS(1)
	reg.CompletenessMany(got1, ra, dec)
	m1 := reg.MeasureDepth(9)
	runtime.GOMAXPROCS(4)
	reg.CompletenessMany(got2, ra, dec)
	m4 := reg.MeasureDepth(9)
	runtime.GOMAXPROCS(old)
	if m1 != m4 {
		t.Errorf("MeasureDepth: %+v with 1 thread, %+v with 4", m1, m4)
	}
	for i := range got1 {
		if got1[i] != got2[i] || got1[i] != reg.Completeness(ra[i], dec[i]) {
			t.Fatalf("point %d: %v (1 thread) %v (4 threads) %v (scalar)", i, got1[i], got2[i], reg.Completeness(ra[i], dec[i]))
		}
	}
}

func TestParseExample(t *testing.T) {
	reg, err := ReadFile("../../testdata/region/example.reg")
	if err != nil {
		t.Fatal(err)
	}
	sh := reg.Shapes()
	if len(sh) != 4 || sh[0].Kind != Cap || sh[0].Completeness != 0.9 || !sh[1].Exclude || sh[2].Kind != Box ||
		sh[2].RAMin != 350 || sh[3].Kind != Polygon || len(sh[3].Vertices) != 10 || sh[3].Line != 8 {
		t.Fatalf("parsed %+v", sh)
	}
	if reg.Completeness(150, 2.2) != 0.9 || reg.Contains(150.4, 2.0) || reg.Completeness(30, -5) != 0.8 {
		t.Error("example region gives wrong completeness")
	}
	if _, err := ReadFile("../../testdata/region/no-such-file.reg"); err == nil {
		t.Error("missing file: no error")
	}
}

func TestParseErrors(t *testing.T) {
	for _, c := range []struct {
		text string
		line int64
		col  int
		msg  string
	}{
		{"includ cap centre=1,2 radius=3", 1, 1, "expected include or exclude"},
		{"# ok\n\ninclude", 3, 8, "expected a shape"},
		{"include circle centre=1,2", 1, 9, "expected a shape"},
		{"include cap centre=1,2 radius=abc", 1, 31, "radius: expected a number"},
		{"include cap centre=1,2 radius=200", 1, 31, "radius must be in"},
		{"include cap centre=1 radius=2", 1, 20, "missing comma"},
		{"include cap centre=1,95 radius=2", 1, 20, "Dec must be in"},
		{"include cap centre=1,2", 1, 23, "needs the field radius"},
		{"include cap centre=1,2 radius=1 radius=2", 1, 33, "given twice"},
		{"include cap centre=1,2 radius=1 size=2", 1, 33, "unknown field"},
		{"include cap 1,2", 1, 13, "expected name=value"},
		{"exclude cap centre=1,2 radius=1 completeness=0.5", 1, 33, "only allowed on include"},
		{"include box ra=10,20 dec=5,5", 1, 1, "Dec min < max"},
		{"include box ra=10,20 dec=5,nan", 1, 26, "not a finite number"},
		{"include box ra=10,400 dec=5,6", 1, 16, "RA must be in"},
		{"include polygon 0,0 10,0", 1, 1, "at least 3 vertices"},
		{"include polygon 0,0 10,0 10,10 0,10 completeness=1.5", 1, 50, "completeness must be in"},
		{"include polygon 0,0 10,10 10,0 0,10", 1, 1, "cross"},
		{"include polygon 0,0 10,0 10,0 5,5", 1, 1, "equal or antipodal"},
		{"include polygon 0,0 10,0 10,x", 1, 26, "expected a vertex"},
		{"include polygon 0,0 10,0 10,95", 1, 26, "vertex 3: Dec must be in"},
	} {
		_, err := Parse("bad.reg", strings.NewReader(c.text))
		var ie *survey.InputError
		if !errors.As(err, &ie) {
			t.Errorf("%q: error %v is not an InputError", c.text, err)
			continue
		}
		want := "column " + itoa(c.col) + ": "
		if ie.File != "bad.reg" || ie.Line != c.line || !strings.HasPrefix(ie.Msg, want) || !strings.Contains(ie.Msg, c.msg) {
			t.Errorf("%q: got %v (line %d), want line %d, %q…%q", c.text, err, ie.Line, c.line, want, c.msg)
		}
	}
	long := "# " + strings.Repeat("x", maxLine+10)
	_, err := Parse("long.reg", strings.NewReader("include cap centre=1,2 radius=3\n"+long))
	var ie *survey.InputError
	if !errors.As(err, &ie) || ie.Line != 2 {
		t.Errorf("overlong line: %v", err)
	}
}

func itoa(i int) string { return strconv.Itoa(i) }

func TestNewErrors(t *testing.T) {
	for _, s := range []Shape{
		{Kind: Cap, RA: 0, Dec: 0, Radius: 0},
		{Kind: Cap, RA: math.NaN(), Dec: 0, Radius: 1},
		{Kind: Box, RAMin: 10, RAMax: 10, DecMin: 0, DecMax: 1},
		{Kind: Polygon, Vertices: []float64{0, 0, 1, 1, 2}},
		{Kind: Cap, Radius: 1, Exclude: true, Completeness: 0.5},
		{Kind: 9},
	} {
		if _, err := New(s); err == nil {
			t.Errorf("New(%+v): no error", s)
		}
	}
}

func FuzzParseRegion(f *testing.F) {
	f.Add("include cap centre=150,2.2 radius=1.5 completeness=0.9\nexclude cap centre=150.4,2.0 radius=0.1")
	f.Add("include box ra=350,10 dec=-5,5 # wraps")
	f.Add("include polygon 20,-10 40,-10 40,10 30,0 20,10 completeness=0.8")
	f.Add("include polygon 0,0 10,10 10,0 0,10")
	f.Add("exclude box ra=0,360 dec=-90,90")
	f.Fuzz(func(t *testing.T, text string) {
		reg, err := Parse("fuzz.reg", strings.NewReader(text))
		if err != nil {
			var ie *survey.InputError
			if !errors.As(err, &ie) {
				t.Fatalf("error %v is not an InputError", err)
			}
			return
		}
		for _, p := range [][2]float64{{0, 0}, {150, 2}, {359.9, -89}, {30, 5}} {
			c := reg.Completeness(p[0], p[1])
			if !(c >= 0 && c <= 1) {
				t.Fatalf("completeness %v", c)
			}
		}
		if len(reg.Shapes()) <= 3 {
			m := reg.MeasureDepth(3)
			if !(m.Area >= 0 && m.Area <= 41253) || m.EffectiveArea > m.Area+1e-9 {
				t.Fatalf("measure %+v", m)
			}
		}
	})
}

func BenchmarkCompletenessMany1M(b *testing.B) {
	reg, err := ReadFile("../../testdata/region/example.reg")
	if err != nil {
		b.Fatal(err)
	}
	rng := rand.New(rand.NewPCG(7, 8))
	n := 1 << 20
	ra, dec, dst := make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range ra {
		ra[i] = 360 * rng.Float64()
		dec[i] = math.Asin(2*rng.Float64()-1) * 180 / math.Pi
	}
	b.ResetTimer()
	for i := 0; i < b.N; i++ {
		reg.CompletenessMany(dst, ra, dec)
	}
}

func BenchmarkMeasure(b *testing.B) {
	for i := 0; i < b.N; i++ {
		reg, err := ReadFile("../../testdata/region/example.reg")
		if err != nil {
			b.Fatal(err)
		}
		m := reg.Measure()
		if i == 0 {
			b.ReportMetric(m.MaxError, "errbound_deg2")
		}
	}
}

// Points whose test arc from the first reference point runs exactly
// through a polygon vertex (the degenerate case of the crossing count)
// must get the same answer as points 1e-7 rad to either side.
func TestPolygonGrazingVertex(t *testing.T) {
	reg := mustParse(t, "include polygon 20,-10 40,-10 40,10 30,0 20,10 completeness=0.8")
	s := &reg.shapes[0]
	r := s.c.ref[0]
	for i, v := range s.c.v {
		n := normalize(cross(r, v))
		for _, extra := range []float64{0.5, 3, 10} {
			p := rotate(r, n, angle(r, v)+extra*deg)
			want := s.contains(add(p, scale(n, 1e-7)), 0, 0)
			if other := s.contains(add(p, scale(n, -1e-7)), 0, 0); other != want {
				t.Fatalf("vertex %d, %v°: the two sides disagree", i, extra)
			}
			if _, degenerate := s.parity(r, p); !degenerate {
				t.Errorf("vertex %d, %v°: arc not flagged as grazing", i, extra)
			}
			if got := s.contains(p, 0, 0); got != want {
				t.Errorf("vertex %d, %v° beyond: contains = %v, neighbours %v", i, extra, got, want)
			}
		}
	}
}
