package healpix

import (
	"math"
	"math/rand/v2"
	"slices"
	"sort"
	"testing"
)

func TestAreas(t *testing.T) {
	// Górski et al. 2005, Section 4: 12·Nside² pixels of equal area
	// 4π/(12·Nside²), covering the whole sphere.
	for o := 0; o <= MaxOrder; o++ {
		nside := 1 << o
		if got, want := NPix(nside), 12*int64(nside)*int64(nside); got != want {
			t.Errorf("NPix(%d) = %d, want %d", nside, got, want)
		}
		if got, want := PixelArea(nside), 4*math.Pi/(12*float64(nside)*float64(nside)); math.Abs(got-want) > 1e-15*want {
			t.Errorf("PixelArea(%d) = %v, want %v", nside, got, want)
		}
		sky := PixelArea(nside) * float64(NPix(nside)) * (180 / math.Pi) * (180 / math.Pi)
		// whole sky 4π sr = 41252.96 deg² (from memory: 41252.96125 deg²)
		if math.Abs(sky-41252.96) > 0.005 {
			t.Errorf("Nside %d: whole sky %v deg², want 41252.96", nside, sky)
		}
	}
}

func TestCheckNside(t *testing.T) {
	for _, n := range []int{1, 2, 4, 1024, 1 << 29} {
		if err := CheckNside(n); err != nil {
			t.Errorf("CheckNside(%d): %v", n, err)
		}
	}
	for _, n := range []int{0, -1, 3, 12, 1000, 1 << 30, -(1 << 29)} {
		if err := CheckNside(n); err == nil {
			t.Errorf("CheckNside(%d) accepted an invalid Nside", n)
		}
	}
}

func TestRADec(t *testing.T) {
	for _, c := range [][4]float64{
		// ra, dec in; ra, dec out
		{0, 90, 0, 90}, {370, 0, 10, 0}, {-90, -45, 270, -45}, {359.5, -90, 359.5, -90},
	} {
		th, ph := RADec2Ang(c[0], c[1])
		ra, dec := Ang2RADec(th, ph)
		if math.Abs(ra-c[2]) > 1e-12 || math.Abs(dec-c[3]) > 1e-12 {
			t.Errorf("RA %v Dec %v: theta %v phi %v back to RA %v Dec %v, want %v %v", c[0], c[1], th, ph, ra, dec, c[2], c[3])
		}
		if RADec2PixNest(64, c[0], c[1]) != Ang2PixNest(64, th, ph) || RADec2PixRing(64, c[0], c[1]) != Ang2PixRing(64, th, ph) {
			t.Errorf("RA %v Dec %v: RADec2Pix disagrees with Ang2Pix", c[0], c[1])
		}
	}
}

func TestInvalidInput(t *testing.T) {
	for _, a := range [][2]float64{{-1e-12, 0}, {math.Pi + 1e-12, 0}, {math.NaN(), 0}, {1, math.NaN()}, {1, math.Inf(1)}} {
		if p := Ang2PixNest(64, a[0], a[1]); p != -1 {
			t.Errorf("Ang2PixNest(64, %v, %v) = %d, want -1", a[0], a[1], p)
		}
		if p := Ang2PixRing(64, a[0], a[1]); p != -1 {
			t.Errorf("Ang2PixRing(64, %v, %v) = %d, want -1", a[0], a[1], p)
		}
	}
	if p := RADec2PixNest(64, 10, 90.5); p != -1 {
		t.Errorf("RADec2PixNest at Dec 90.5 = %d, want -1", p)
	}
	for _, v := range [][3]float64{{0, 0, 0}, {math.NaN(), 0, 1}, {math.Inf(1), 0, 0}} {
		if p := Vec2PixNest(64, v); p != -1 {
			t.Errorf("Vec2PixNest(%v) = %d, want -1", v, p)
		}
		if p := Vec2PixRing(64, v); p != -1 {
			t.Errorf("Vec2PixRing(%v) = %d, want -1", v, p)
		}
	}
	for _, p := range []int64{-1, NPix(64)} {
		if Ring2Nest(64, p) != -1 || Nest2Ring(64, p) != -1 {
			t.Errorf("pixel %d out of range not rejected", p)
		}
		if th, ph := Pix2AngNest(64, p); !math.IsNaN(th) || !math.IsNaN(ph) {
			t.Errorf("Pix2AngNest(64, %d) = %v, %v, want NaN", p, th, ph)
		}
		if nb := Neighbours(64, p, true); nb != [8]int64{-1, -1, -1, -1, -1, -1, -1, -1} {
			t.Errorf("Neighbours(64, %d) = %v, want all -1", p, nb)
		}
	}
	func() {
		defer func() {
			if recover() == nil {
				t.Error("Ang2PixNest with Nside 3 did not panic")
			}
		}()
		Ang2PixNest(3, 1, 1)
	}()
	if _, err := QueryDisc(3, [3]float64{1, 0, 0}, 0.1, false, false); err == nil {
		t.Error("QueryDisc accepted Nside 3")
	}
	if _, err := QueryDisc(64, [3]float64{0, 0, 0}, 0.1, false, false); err == nil {
		t.Error("QueryDisc accepted a zero centre")
	}
	if _, err := QueryDisc(64, [3]float64{1, 0, 0}, math.NaN(), false, false); err == nil {
		t.Error("QueryDisc accepted a NaN radius")
	}
	bad := [][][3]float64{
		{{1, 0, 0}, {0, 1, 0}},                                  // too few
		{{1, 0, 0}, {0, 1, 0}, {0, 0, 0}},                       // zero vertex
		{{1, 0, 0}, {0, 1, 0}, {-1, 1e-12, 0}},                  // degenerate
		{{1, 0, 0}, {0, 1, 0}, {0.3, 0.3, 1}, {0.1, 0.1, -0.1}}, // not convex
	}
	for _, vs := range bad {
		if _, err := QueryPolygon(64, vs, false, false); err == nil {
			t.Errorf("QueryPolygon accepted %v", vs)
		}
	}
	if r, err := QueryDisc(64, [3]float64{1, 0, 0}, -0.1, true, false); err != nil || len(r) != 0 {
		t.Errorf("negative radius: %v, %v; want nothing", r, err)
	}
	if r, err := QueryDisc(64, [3]float64{1, 0, 0}, math.Pi, false, true); err != nil || len(r) != 1 || r[0] != (Range{0, NPix(64)}) {
		t.Errorf("radius π: %v, %v; want the whole sphere", r, err)
	}
}

// randomPixel returns a pixel at nside, biased towards the poles, the face
// boundaries and the ends of the range, where mistakes are likeliest.
func randomPixel(rng *rand.Rand, nside int) int64 {
	n := NPix(nside)
	switch rng.IntN(4) {
	case 0:
		return rng.Int64N(min(n, 8*int64(nside)))
	case 1:
		return n - 1 - rng.Int64N(min(n, 8*int64(nside)))
	default:
		return rng.Int64N(n)
	}
}

func checkRoundTrip(t *testing.T, nside int, p int64) {
	if r := Nest2Ring(nside, p); Ring2Nest(nside, r) != p {
		t.Fatalf("Nside %d: Ring2Nest(Nest2Ring(%d)) = %d", nside, p, Ring2Nest(nside, r))
	}
	if q := Ring2Nest(nside, p); Nest2Ring(nside, q) != p {
		t.Fatalf("Nside %d: Nest2Ring(Ring2Nest(%d)) = %d", nside, p, Nest2Ring(nside, q))
	}
	if th, ph := Pix2AngNest(nside, p); Ang2PixNest(nside, th, ph) != p {
		t.Fatalf("Nside %d: Ang2PixNest(Pix2AngNest(%d)) = %d", nside, p, Ang2PixNest(nside, th, ph))
	}
	if th, ph := Pix2AngRing(nside, p); Ang2PixRing(nside, th, ph) != p {
		t.Fatalf("Nside %d: Ang2PixRing(Pix2AngRing(%d)) = %d", nside, p, Ang2PixRing(nside, th, ph))
	}
	if v := Pix2VecNest(nside, p); Vec2PixNest(nside, v) != p {
		t.Fatalf("Nside %d: Vec2PixNest(Pix2VecNest(%d)) = %d", nside, p, Vec2PixNest(nside, v))
	}
	if v := Pix2VecRing(nside, p); Vec2PixRing(nside, v) != p {
		t.Fatalf("Nside %d: Vec2PixRing(Pix2VecRing(%d)) = %d", nside, p, Vec2PixRing(nside, v))
	}
	if th, ph := Pix2AngNest(nside, p); Ang2PixRing(nside, th, ph) != Nest2Ring(nside, p) {
		t.Fatalf("Nside %d: NESTED %d centre falls in RING %d, not %d", nside, p, Ang2PixRing(nside, th, ph), Nest2Ring(nside, p))
	}
}

func TestRoundTrip(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 2))
	for o := 0; o <= MaxOrder; o++ {
		nside := 1 << o
		if o <= 3 {
			for p := int64(0); p < NPix(nside); p++ {
				checkRoundTrip(t, nside, p)
			}
			continue
		}
		for i := 0; i < 3000; i++ {
			checkRoundTrip(t, nside, randomPixel(rng, nside))
		}
	}
}

func FuzzRoundTrip(f *testing.F) {
	f.Add(uint8(0), uint64(0))
	f.Add(uint8(29), uint64(1<<62))
	f.Add(uint8(10), uint64(12345678))
	f.Fuzz(func(t *testing.T, o uint8, p uint64) {
		nside := 1 << (o % (MaxOrder + 1))
		checkRoundTrip(t, nside, int64(p%uint64(NPix(nside))))
	})
}

func TestNeighboursSymmetric(t *testing.T) {
	// Adjacency is symmetric, every neighbour is distinct and no farther
	// than two pixel radii, and only the pixels at the 8 face corners where
	// three faces meet lack a neighbour (Górski et al. 2005, Fig. 4).
	rng := rand.New(rand.NewPCG(3, 4))
	for o := 0; o <= MaxOrder; o++ {
		nside := 1 << o
		for i := 0; i < 500; i++ {
			p := randomPixel(rng, nside)
			for _, nest := range []bool{false, true} {
				nb := Neighbours(nside, p, nest)
				cp := pixVec(nside, p, nest)
				missing := 0
				for _, q := range nb {
					if q < 0 {
						missing++
						continue
					}
					if q == p {
						t.Fatalf("Nside %d nest=%v: pixel %d is its own neighbour", nside, nest, p)
					}
					back := Neighbours(nside, q, nest)
					if !slices.Contains(back[:], p) && nside > 1 {
						t.Fatalf("Nside %d nest=%v: %d neighbours %d but not back (%v)", nside, nest, p, q, Neighbours(nside, q, nest))
					}
					if a := angle(cp, pixVec(nside, q, nest)); a > 2*MaxPixRad(nside)*(1+1e-12) {
						t.Fatalf("Nside %d nest=%v: neighbour %d of %d is %g rad away", nside, nest, q, p, a)
					}
				}
				if missing > 1 && nside > 1 {
					t.Fatalf("Nside %d nest=%v: pixel %d lacks %d neighbours", nside, nest, p, missing)
				}
			}
		}
	}
}

func pixVec(nside int, p int64, nest bool) [3]float64 {
	if nest {
		return Pix2VecNest(nside, p)
	}
	return Pix2VecRing(nside, p)
}

func randomDirection(rng *rand.Rand) (theta, phi float64) {
	if rng.IntN(4) == 0 { // near a pole
		d := math.Pow(10, -10+7*rng.Float64())
		if rng.IntN(2) == 0 {
			return d, 2 * math.Pi * rng.Float64()
		}
		return math.Pi - d, 2 * math.Pi * rng.Float64()
	}
	return math.Acos(1 - 2*rng.Float64()), 2 * math.Pi * rng.Float64()
}

func TestMaxPixRadBound(t *testing.T) {
	// Every direction lies within MaxPixRad of the centre of its pixel.
	rng := rand.New(rand.NewPCG(5, 6))
	for o := 0; o <= MaxOrder; o++ {
		nside := 1 << o
		bound := MaxPixRad(nside)
		worst := 0.0
		for i := 0; i < 20000; i++ {
			th, ph := randomDirection(rng)
			v := [3]float64{math.Sin(th) * math.Cos(ph), math.Sin(th) * math.Sin(ph), math.Cos(th)}
			a := angle(v, Pix2VecNest(nside, Ang2PixNest(nside, th, ph)))
			worst = max(worst, a)
			if a > bound*(1+1e-9) {
				t.Fatalf("Nside %d: direction (%v, %v) is %g rad from its pixel centre, bound %g", nside, th, ph, a, bound)
			}
		}
		// the bound should not be grossly loose
		if worst < 0.5*bound {
			t.Errorf("Nside %d: largest distance %g is under half the bound %g", nside, worst, bound)
		}
	}
}

// contains reports whether pixel p is in the sorted ranges r.
func contains(r []Range, p int64) bool {
	i := sort.Search(len(r), func(i int) bool { return r[i].End > p })
	return i < len(r) && r[i].Start <= p
}

func total(r []Range) int64 {
	var n int64
	for _, x := range r {
		n += x.End - x.Start
	}
	return n
}

// rotate returns a point at angle a from unit vector c in the direction
// set by the azimuth az around c.
func rotate(c [3]float64, a, az float64) [3]float64 {
	u := norm(cross(c, [3]float64{0.3, 0.5, 0.8}))
	w := cross(c, u)
	s, co := math.Sin(a), math.Cos(a)
	return norm([3]float64{
		co*c[0] + s*(math.Cos(az)*u[0]+math.Sin(az)*w[0]),
		co*c[1] + s*(math.Cos(az)*u[1]+math.Sin(az)*w[1]),
		co*c[2] + s*(math.Cos(az)*u[2]+math.Sin(az)*w[2]),
	})
}

func TestQueryInclusiveCoversOverlap(t *testing.T) {
	// Points on the boundary of a disc or polygon belong to it, so the
	// pixels containing them overlap it and must be in the inclusive
	// result; the centre-inside result must be contained in it; and the
	// RING and NESTED answers must be the same set.
	rng := rand.New(rand.NewPCG(7, 8))
	for trial := 0; trial < 60; trial++ {
		nside := 1 << (2 + rng.IntN(8))
		th, ph := randomDirection(rng)
		c := [3]float64{math.Sin(th) * math.Cos(ph), math.Sin(th) * math.Sin(ph), math.Cos(th)}
		var incN, incR, excN []Range
		var edge [][3]float64
		var err error
		if trial%2 == 0 {
			r := math.Pow(10, -3+3*rng.Float64())
			incN, err = QueryDisc(nside, c, r, true, true)
			if err == nil {
				incR, err = QueryDisc(nside, c, r, true, false)
			}
			if err == nil {
				excN, err = QueryDisc(nside, c, r, false, true)
			}
			for i := 0; i < 4000; i++ {
				edge = append(edge, rotate(c, r, 2*math.Pi*rng.Float64()))
			}
		} else {
			// a convex polygon: points on a small circle at increasing azimuth
			r := math.Pow(10, -2.5+2*rng.Float64())
			nv := 3 + rng.IntN(5)
			var vs [][3]float64
			for i := 0; i < nv; i++ {
				vs = append(vs, rotate(c, r, 2*math.Pi*(float64(i)+0.8*rng.Float64())/float64(nv)))
			}
			incN, err = QueryPolygon(nside, vs, true, true)
			if err == nil {
				incR, err = QueryPolygon(nside, vs, true, false)
			}
			if err == nil {
				excN, err = QueryPolygon(nside, vs, false, true)
			}
			for i := 0; i < 4000; i++ {
				a, b := vs[i%nv], vs[(i+1)%nv]
				f := rng.Float64()
				edge = append(edge, norm(add(scale(a, 1-f), scale(b, f))))
			}
		}
		if err != nil {
			t.Fatalf("trial %d: %v", trial, err)
		}
		for _, v := range edge {
			if p := Vec2PixNest(nside, v); !contains(incN, p) {
				t.Fatalf("trial %d Nside %d: boundary point %v in pixel %d, not in the inclusive result", trial, nside, v, p)
			}
		}
		for _, p := range Pixels(excN) {
			if !contains(incN, p) {
				t.Fatalf("trial %d Nside %d: pixel %d with centre inside is missing from the inclusive result", trial, nside, p)
			}
		}
		if total(incR) != total(incN) {
			t.Fatalf("trial %d Nside %d: RING result has %d pixels, NESTED %d", trial, nside, total(incR), total(incN))
		}
		for _, p := range Pixels(incN) {
			if !contains(incR, Nest2Ring(nside, p)) {
				t.Fatalf("trial %d Nside %d: NESTED %d missing from the RING result", trial, nside, p)
			}
		}
	}
}

func scale(a [3]float64, f float64) [3]float64 { return [3]float64{f * a[0], f * a[1], f * a[2]} }

func TestQueryDiscFinest(t *testing.T) {
	// At Nside 2^29 a disc of 0.003° radius holds ~2.4e9 pixels; the
	// result must come back as ranges, the RING and NESTED counts must
	// agree, and the count times the pixel area must match the disc area
	// 2π(1-cos r) to within the boundary's share of pixels.
	nside := MaxNside
	c := [3]float64{0.2, -0.7, 0.3}
	r := 0.003 * math.Pi / 180
	nr, err := QueryDisc(nside, c, r, false, true)
	if err != nil {
		t.Fatal(err)
	}
	rr, err := QueryDisc(nside, c, r, false, false)
	if err != nil {
		t.Fatal(err)
	}
	checkSortedDisjoint(t, "NESTED", nr)
	checkSortedDisjoint(t, "RING", rr)
	if total(nr) != total(rr) {
		t.Fatalf("NESTED %d pixels, RING %d", total(nr), total(rr))
	}
	area := 2 * math.Pi * (1 - math.Cos(r))
	got := float64(total(nr)) * PixelArea(nside)
	perimeterPixels := 2 * math.Pi * r / math.Sqrt(PixelArea(nside))
	if math.Abs(got-area) > 2*perimeterPixels*PixelArea(nside) {
		t.Errorf("disc area %g sr from %d pixels, want %g", got, total(nr), area)
	}
	// spot-check that RING and NESTED ranges hold the same pixels
	rng := rand.New(rand.NewPCG(9, 10))
	for i := 0; i < 2000; i++ {
		k := rng.IntN(len(nr))
		p := nr[k].Start + rng.Int64N(nr[k].End-nr[k].Start)
		if !contains(rr, Nest2Ring(nside, p)) {
			t.Fatalf("NESTED pixel %d (RING %d) missing from the RING ranges", p, Nest2Ring(nside, p))
		}
		if v := Pix2VecNest(nside, p); dot(v, norm(c)) < math.Cos(r) {
			t.Fatalf("NESTED pixel %d has its centre outside the disc", p)
		}
	}
	t.Logf("Nside 2^29, r = 0.003°: %d pixels in %d NESTED and %d RING ranges", total(nr), len(nr), len(rr))
}

const bench10M = 10_000_000

var benchDirs struct{ theta, phi []float64 }

func benchDirections() ([]float64, []float64) {
	if benchDirs.theta == nil {
		rng := rand.New(rand.NewPCG(11, 12))
		benchDirs.theta = make([]float64, bench10M)
		benchDirs.phi = make([]float64, bench10M)
		for i := range benchDirs.theta {
			benchDirs.theta[i] = math.Acos(1 - 2*rng.Float64())
			benchDirs.phi[i] = 2 * math.Pi * rng.Float64()
		}
	}
	return benchDirs.theta, benchDirs.phi
}

// BenchmarkAng2PixNest10M classifies 10^7 random directions at Nside 2^20
// on one goroutine; ns/point is reported.
func BenchmarkAng2PixNest10M(b *testing.B) {
	theta, phi := benchDirections()
	dst := make([]int64, bench10M)
	b.ResetTimer()
	for range b.N {
		for i := range dst {
			dst[i] = Ang2PixNest(1<<20, theta[i], phi[i])
		}
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/bench10M, "ns/point")
}

// BenchmarkAng2PixNestMany10M does the same with Ang2PixNestMany on
// GOMAXPROCS goroutines.
func BenchmarkAng2PixNestMany10M(b *testing.B) {
	theta, phi := benchDirections()
	dst := make([]int64, bench10M)
	b.ResetTimer()
	for range b.N {
		Ang2PixNestMany(dst, 1<<20, theta, phi)
	}
	b.ReportMetric(float64(b.Elapsed().Nanoseconds())/float64(b.N)/bench10M, "ns/point")
}

func BenchmarkQueryDisc1Deg(b *testing.B) {
	c := [3]float64{0.2, -0.7, 0.3}
	for _, nest := range []bool{true, false} {
		name := "ring"
		if nest {
			name = "nest"
		}
		b.Run(name, func(b *testing.B) {
			for range b.N {
				if _, err := QueryDisc(1<<20, c, math.Pi/180, true, nest); err != nil {
					b.Fatal(err)
				}
			}
		})
	}
}
