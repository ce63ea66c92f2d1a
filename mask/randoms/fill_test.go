package randoms

import (
	"math"
	"runtime"
	"slices"
	"testing"

	"github.com/filigree-survey/filigree/mask/edge"
	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/mask/region"
)

// fillFootprint is a 20° cap at (180°, 30°) with a 4° hole at (185°, 32°).
func fillFootprint(t testing.TB) footprint.Footprint {
	t.Helper()
	r, err := region.New(
		region.Shape{Kind: region.Cap, RA: 180, Dec: 30, Radius: 20},
		region.Shape{Kind: region.Cap, Exclude: true, RA: 185, Dec: 32, Radius: 4})
	if err != nil {
		t.Fatal(err)
	}
	return footprint.FromRegion(r)
}

func sepDeg(a, b [3]float64) float64 {
	c := [3]float64{a[1]*b[2] - a[2]*b[1], a[2]*b[0] - a[0]*b[2], a[0]*b[1] - a[1]*b[0]}
	return math.Atan2(math.Sqrt(c[0]*c[0]+c[1]*c[1]+c[2]*c[2]), a[0]*b[0]+a[1]*b[1]+a[2]*b[2]) / deg
}

// TestFillDensity counts fill particles in test volumes that the rules
// fill completely (inside the hole, a ring just outside the footprint
// within the buffer, the radial buffers) and compares with the Poisson
// mean density × volume, the volume of a cone of half-angle a between r1
// and r2 being 2π(1 − cos a)(r2³ − r1³)/3 (elementary geometry); counts
// must be within 4 standard deviations (√mean). A ring beyond the buffer
// must be empty, and no particle may lie inside the surveyed volume.
func TestFillDensity(t *testing.T) {
	fp := fillFootprint(t)
	const n, rMin, rMax, w = 0.05, 100.0, 300.0, 20.0
	f, err := FillParticles(fp, FillOptions{Density: n, RMin: rMin, RMax: rMax, Buffer: w, Nside: 256}, 1)
	if err != nil {
		t.Fatal(err)
	}
	if f.Mass != 1/n {
		t.Errorf("mass %v, want %v", f.Mass, 1/n)
	}
	centre, hole := edge.UnitVector(180, 30), edge.UnitVector(185, 32)
	cone := func(a1, a2, r1, r2 float64) float64 {
		return 2 * math.Pi * (math.Cos(a1*deg) - math.Cos(a2*deg)) * (r2*r2*r2 - r1*r1*r1) / 3
	}
	type box struct {
		name           string
		around         [3]float64
		a1, a2, r1, r2 float64
		want           Kind
		empty          bool
	}
	boxes := []box{
		{"hole", hole, 0, 4, 150, 250, Hole, false},
		{"angular buffer", centre, 20, 22, 200, 300, AngularBuffer, false},
		{"far radial buffer", centre, 0, 15, 300, 320, RadialBuffer, false},
		{"near radial buffer", centre, 0, 15, 80, 100, RadialBuffer, false},
		{"beyond the buffer", centre, 26.5, 30, 250, 300, 0, true},
	}
	counts := make([]float64, len(boxes))
	for i := range f.X {
		r := math.Sqrt(f.X[i]*f.X[i] + f.Y[i]*f.Y[i] + f.Z[i]*f.Z[i])
		u := [3]float64{f.X[i] / r, f.Y[i] / r, f.Z[i] / r}
		ra, dec := math.Atan2(u[1], u[0])/deg, math.Asin(u[2])/deg
		if r >= rMin && r <= rMax && fp.Completeness(ra, dec) > 0 {
			t.Fatalf("particle %d at (%v, %v, r = %v) lies in the surveyed volume", i, ra, dec, r)
		}
		for j, b := range boxes {
			s := sepDeg(b.around, u)
			if s >= b.a1 && s < b.a2 && r >= b.r1 && r < b.r2 {
				counts[j]++
				if !b.empty && f.Kind[i] != b.want {
					t.Fatalf("%s: particle %d has kind %v", b.name, i, f.Kind[i])
				}
			}
		}
	}
	for j, b := range boxes {
		mean := n * cone(b.a1, b.a2, b.r1, b.r2)
		if b.empty {
			mean = 0
		}
		t.Logf("%s: %v particles, expected %.1f ± %.1f", b.name, counts[j], mean, math.Sqrt(mean))
		if math.Abs(counts[j]-mean) > 4*math.Sqrt(mean) {
			t.Errorf("%s: %v particles, expected %v ± %v", b.name, counts[j], mean, math.Sqrt(mean))
		}
	}
}

// TestFillReproducible checks that a seed gives the same particles with
// one and two goroutines.
func TestFillReproducible(t *testing.T) {
	fp := fillFootprint(t)
	var out [2]*Fill
	for k, procs := range []int{1, 2} {
		old := runtime.GOMAXPROCS(procs)
		f, err := FillParticles(fp, FillOptions{Density: 0.01, RMin: 100, RMax: 300, Nside: 64}, 3)
		runtime.GOMAXPROCS(old)
		if err != nil {
			t.Fatal(err)
		}
		out[k] = f
	}
	if len(out[0].X) == 0 || !slices.Equal(out[0].X, out[1].X) || !slices.Equal(out[0].Z, out[1].Z) || !slices.Equal(out[0].Kind, out[1].Kind) {
		t.Errorf("fill differs between 1 and 2 goroutines (%d and %d particles)", len(out[0].X), len(out[1].X))
	}
}

// TestFillErrors checks that bad options are refused.
func TestFillErrors(t *testing.T) {
	fp := fillFootprint(t)
	for _, o := range []FillOptions{
		{Density: 0, RMin: 1, RMax: 2},
		{Density: 1, RMin: 2, RMax: 1},
		{Density: 1, RMin: 1, RMax: 2, Buffer: -1},
		{Density: 1, RMin: 1, RMax: 2, Nside: 3},
	} {
		if _, err := FillParticles(fp, o, 1); err == nil {
			t.Errorf("%+v: no error", o)
		}
	}
}

// BenchmarkFill fills a 30° cap with a 5° hole between 50 and 600 Mpc/h at
// 10⁻³ (h/Mpc)³ (about 2·10⁴ particles), grid at DefaultNside included.
func BenchmarkFill(b *testing.B) {
	r, _ := region.New(
		region.Shape{Kind: region.Cap, RA: 180, Dec: 30, Radius: 30},
		region.Shape{Kind: region.Cap, Exclude: true, RA: 185, Dec: 32, Radius: 5})
	fp := footprint.FromRegion(r)
	var n int
	for b.Loop() {
		f, err := FillParticles(fp, FillOptions{Density: 1e-3, RMin: 50, RMax: 600}, 1)
		if err != nil {
			b.Fatal(err)
		}
		n = len(f.X)
	}
	b.ReportMetric(float64(n), "particles")
}
