package edge

import (
	"math"
	"math/rand/v2"
	"runtime"
	"testing"

	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/mask/region"
)

const deg = math.Pi / 180

func mustRegion(t testing.TB, shapes ...region.Shape) footprint.Footprint {
	t.Helper()
	r, err := region.New(shapes...)
	if err != nil {
		t.Fatal(err)
	}
	return footprint.FromRegion(r)
}

func angleBetween(a, b [3]float64) float64 {
	c := [3]float64{a[1]*b[2] - a[2]*b[1], a[2]*b[0] - a[0]*b[2], a[0]*b[1] - a[1]*b[0]}
	return math.Atan2(math.Sqrt(c[0]*c[0]+c[1]*c[1]+c[2]*c[2]), a[0]*b[0]+a[1]*b[1]+a[2]*b[2])
}

// randomInCap returns a direction uniform in the cap of radius rad (radians)
// around (ra0, dec0) degrees, as RA, Dec in degrees.
func randomInCap(rng *rand.Rand, ra0, dec0, rad float64) (ra, dec float64) {
	c := UnitVector(ra0, dec0)
	e1 := [3]float64{-c[1], c[0], 0}
	n := math.Hypot(e1[0], e1[1])
	e1 = [3]float64{e1[0] / n, e1[1] / n, 0}
	e2 := [3]float64{c[1]*e1[2] - c[2]*e1[1], c[2]*e1[0] - c[0]*e1[2], c[0]*e1[1] - c[1]*e1[0]}
	ct := 1 - rng.Float64()*(1-math.Cos(rad))
	st := math.Sqrt(1 - ct*ct)
	sp, cp := math.Sincos(2 * math.Pi * rng.Float64())
	var v [3]float64
	for k := range 3 {
		v[k] = ct*c[k] + st*(cp*e1[k]+sp*e2[k])
	}
	dec = math.Asin(v[2]) / deg
	ra = math.Atan2(v[1], v[0]) / deg
	if ra < 0 {
		ra += 360
	}
	return ra, dec
}

// TestCapDistance compares the angular distance to the edge of a cap with
// the exact value, the cap radius minus the angular separation from its
// centre (spherical geometry: the nearest point of a circle lies on the
// great circle through the centre), within the stated bound.
func TestCapDistance(t *testing.T) {
	const ra0, dec0, radius = 150.0, 30.0, 20.0
	fp := mustRegion(t, region.Shape{Kind: region.Cap, RA: ra0, Dec: dec0, Radius: radius})
	const rMin, rMax = 100.0, 900.0
	v, err := NewVolume(fp, rMin, rMax, 128)
	if err != nil {
		t.Fatal(err)
	}
	bound := v.Boundary.AngularError()
	rng := rand.New(rand.NewPCG(1, 2))
	const n = 20000
	ra, dec, r, dst := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	c := UnitVector(ra0, dec0)
	worst := 0.0
	for i := range n {
		ra[i], dec[i] = randomInCap(rng, ra0, dec0, radius*deg*0.999)
		r[i] = rMin + (rMax-rMin)*rng.Float64()
		sep := angleBetween(c, UnitVector(ra[i], dec[i]))
		exact := radius*deg - sep
		got := v.Boundary.Angle(UnitVector(ra[i], dec[i]))
		worst = max(worst, math.Abs(got-exact))
		if math.Abs(got-exact) > bound {
			t.Fatalf("point %d: angle to edge %v rad, exact %v, bound %v", i, got, exact, bound)
		}
	}
	t.Logf("cap, Nside 128: worst angular error %.3g rad, bound %.3g rad", worst, bound)
	v.Distances(dst, ra, dec, r)
	for i := range n {
		sep := angleBetween(c, UnitVector(ra[i], dec[i]))
		exact := min(ConeDistance(r[i], radius*deg-sep), r[i]-rMin, rMax-r[i])
		if math.Abs(dst[i]-exact) > v.ErrorBound(r[i])*(1+1e-12) {
			t.Fatalf("point %d: edge distance %v Mpc/h, exact %v, bound %v", i, dst[i], exact, v.ErrorBound(r[i]))
		}
	}
	// Outside the footprint or the radial range: 0.
	v.Distances(dst[:2], []float64{ra0 + 180, ra0}, []float64{-dec0, dec0}, []float64{500, rMax + 1})
	if dst[0] != 0 || dst[1] != 0 {
		t.Errorf("outside the volume: got %v, want 0, 0", dst[:2])
	}
}

// boxBoundary samples the boundary of an RA/Dec box (meridians at raMin,
// raMax, parallels at decMin, decMax) and of a cap hole every step
// radians, as unit vectors.
func boxBoundary(raMin, raMax, decMin, decMax, hRA, hDec, hRad, step float64) [][3]float64 {
	var b [][3]float64
	nd := int(math.Ceil((decMax - decMin) * deg / step))
	for i := 0; i <= nd; i++ {
		d := decMin + (decMax-decMin)*float64(i)/float64(nd)
		b = append(b, UnitVector(raMin, d), UnitVector(raMax, d))
	}
	for _, d := range []float64{decMin, decMax} {
		nr := int(math.Ceil((raMax - raMin) * deg * math.Cos(d*deg) / step))
		for i := 0; i <= nr; i++ {
			b = append(b, UnitVector(raMin+(raMax-raMin)*float64(i)/float64(nr), d))
		}
	}
	// Cap hole: rotate a circle of radius hRad about the hole's centre.
	c := UnitVector(hRA, hDec)
	e1 := UnitVector(hRA+90, 0)
	e2 := [3]float64{c[1]*e1[2] - c[2]*e1[1], c[2]*e1[0] - c[0]*e1[2], c[0]*e1[1] - c[1]*e1[0]}
	nc := int(math.Ceil(2 * math.Pi * math.Sin(hRad*deg) / step))
	for i := range nc {
		s, co := math.Sincos(2 * math.Pi * float64(i) / float64(nc))
		var v [3]float64
		for k := range 3 {
			v[k] = math.Cos(hRad*deg)*c[k] + math.Sin(hRad*deg)*(co*e1[k]+s*e2[k])
		}
		b = append(b, v)
	}
	return b
}

// TestBoxWithHoleDistance compares the angular distance to the boundary of
// an RA/Dec box with a cap-shaped hole against brute force over a fine
// sampling of the boundary curves (spacing 0.002°, so the brute force is
// itself within 0.001° of the truth).
func TestBoxWithHoleDistance(t *testing.T) {
	const raMin, raMax, decMin, decMax = 120.0, 160.0, -5.0, 25.0
	const hRA, hDec, hRad = 135.0, 10.0, 3.0
	fp := mustRegion(t,
		region.Shape{Kind: region.Box, RAMin: raMin, RAMax: raMax, DecMin: decMin, DecMax: decMax},
		region.Shape{Kind: region.Cap, Exclude: true, RA: hRA, Dec: hDec, Radius: hRad})
	v, err := NewVolume(fp, 10, 500, 256)
	if err != nil {
		t.Fatal(err)
	}
	step := 0.002 * deg
	b := boxBoundary(raMin, raMax, decMin, decMax, hRA, hDec, hRad, step)
	bound := v.Boundary.AngularError() + step/2
	rng := rand.New(rand.NewPCG(3, 4))
	worst := 0.0
	for i := 0; i < 400; {
		ra := raMin + (raMax-raMin)*rng.Float64()
		dec := decMin + (decMax-decMin)*rng.Float64()
		if fp.Completeness(ra, dec) == 0 {
			continue
		}
		i++
		u := UnitVector(ra, dec)
		brute := math.Inf(1)
		for _, q := range b {
			brute = min(brute, angleBetween(u, q))
		}
		got := v.Boundary.Angle(u)
		worst = max(worst, math.Abs(got-brute))
		if math.Abs(got-brute) > bound {
			t.Fatalf("(%v, %v): angle %v rad, brute force %v, bound %v", ra, dec, got, brute, bound)
		}
	}
	t.Logf("box with hole, Nside 256: worst angular error %.3g rad, bound %.3g rad", worst, bound)
}

// TestKDTree checks the nearest-neighbour search against brute force.
func TestKDTree(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	for _, n := range []int{1, 2, 3, 10, 1000} {
		pts := make([]float64, 3*n)
		for i := range pts {
			pts[i] = rng.NormFloat64()
		}
		orig := append([]float64(nil), pts...)
		tr := newKDTree(pts)
		for range 200 {
			q := [3]float64{rng.NormFloat64(), rng.NormFloat64(), rng.NormFloat64()}
			want := math.Inf(1)
			for i := 0; i < n; i++ {
				dx, dy, dz := orig[3*i]-q[0], orig[3*i+1]-q[1], orig[3*i+2]-q[2]
				want = min(want, dx*dx+dy*dy+dz*dz)
			}
			if got := tr.nearest(q); got != want {
				t.Fatalf("n=%d: nearest %v, brute force %v", n, got, want)
			}
		}
	}
}

// TestThreadIndependence checks that Distances gives the same result with
// one and two goroutines.
func TestThreadIndependence(t *testing.T) {
	fp := mustRegion(t, region.Shape{Kind: region.Cap, RA: 10, Dec: -20, Radius: 15})
	ra, dec, r := galaxies(100000, 10, -20, 15)
	var out [2][]float64
	for k, procs := range []int{1, 2} {
		old := runtime.GOMAXPROCS(procs)
		v, err := NewVolume(fp, 50, 600, 128)
		if err != nil {
			t.Fatal(err)
		}
		out[k] = make([]float64, len(ra))
		v.Distances(out[k], ra, dec, r)
		runtime.GOMAXPROCS(old)
	}
	for i := range out[0] {
		if out[0][i] != out[1][i] {
			t.Fatalf("galaxy %d: %v with 1 thread, %v with 2", i, out[0][i], out[1][i])
		}
	}
}

func galaxies(n int, ra0, dec0, rad float64) (ra, dec, r []float64) {
	rng := rand.New(rand.NewPCG(7, 8))
	ra, dec, r = make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range n {
		ra[i], dec[i] = randomInCap(rng, ra0, dec0, rad*deg)
		r[i] = 50 + 550*rng.Float64()
	}
	return ra, dec, r
}

// BenchmarkDistances1M measures Distances for 10^6 galaxies in a 30° cap,
// grid at DefaultNside included.
func BenchmarkDistances1M(b *testing.B) {
	fp := mustRegion(b, region.Shape{Kind: region.Cap, RA: 180, Dec: 30, Radius: 30})
	ra, dec, r := galaxies(1000000, 180, 30, 30)
	dst := make([]float64, len(ra))
	for b.Loop() {
		v, err := NewVolume(fp, 50, 600, 0)
		if err != nil {
			b.Fatal(err)
		}
		v.Distances(dst, ra, dec, r)
	}
}
