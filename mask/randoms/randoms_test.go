package randoms

import (
	"math"
	"math/rand/v2"
	"runtime"
	"slices"
	"testing"

	"gonum.org/v1/gonum/stat/distuv"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/mask/edge"
	"github.com/filigree-survey/filigree/mask/footprint"
	"github.com/filigree-survey/filigree/mask/healpix"
	"github.com/filigree-survey/filigree/mask/region"
	"github.com/filigree-survey/filigree/mask/selection"
)

const deg = math.Pi / 180

func model(t testing.TB, ok float64) *cosmo.Model {
	t.Helper()
	m, err := cosmo.New(cosmo.LambdaCDM(70, 0.3, ok))
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// testNBar is an n(z) with a rise and a fall over 0.02 ≤ z ≤ 0.3.
func testNBar(t testing.TB, m *cosmo.Model) *selection.NBar {
	t.Helper()
	nb := 28
	nz := &selection.NZ{Edges: make([]float64, nb+1), Counts: make([]float64, nb)}
	for i := range nz.Edges {
		nz.Edges[i] = 0.02 + 0.01*float64(i)
	}
	for i := range nz.Counts {
		zc := 0.025 + 0.01*float64(i)
		nz.Counts[i] = zc * zc * math.Exp(-zc/0.05)
	}
	n, err := selection.NewNBar(nz, m, 1)
	if err != nil {
		t.Fatal(err)
	}
	return n
}

func fullSky(t testing.TB) footprint.Footprint {
	t.Helper()
	m, err := footprint.NewMap("full", 1, slices.Repeat([]float32{1}, 12))
	if err != nil {
		t.Fatal(err)
	}
	return m
}

// TestRadialKS compares the sampled redshifts with the n(z) model's CDF by
// the one-sample Kolmogorov–Smirnov test: bin i is reached with probability
// Count_i/ΣCount, and within the bin the CDF is the fraction of the bin's
// comoving volume, V_C(z_i, z)/V_C(z_i, z_{i+1}) from
// cosmo.Model.ComovingVolume (Hogg 1999, eq. 29), which the sampler does
// not use. Flat and open (Ωk = 0.3) models; 10^5 randoms; the p-value must
// exceed 0.001 (a correct sampler fails 1 time in 1000 per seed; the
// seeds are fixed).
func TestRadialKS(t *testing.T) {
	for _, ok := range []float64{0, 0.3, -0.2} {
		m := model(t, ok)
		nb := testNBar(t, m)
		s, err := NewSampler(fullSky(t), nb, m, 8)
		if err != nil {
			t.Fatal(err)
		}
		_, _, z, err := s.Sample(100000, 42)
		if err != nil {
			t.Fatal(err)
		}
		cum := make([]float64, len(nb.Count)+1)
		for i, c := range nb.Count {
			cum[i+1] = cum[i] + c
		}
		tot := cum[len(cum)-1]
		cdf := func(x float64) float64 {
			i := nb.Bin(x)
			if i < 0 {
				if x < nb.Edges[0] {
					return 0
				}
				return 1
			}
			f := m.ComovingVolume(nb.Edges[i], x, 1) / m.ComovingVolume(nb.Edges[i], nb.Edges[i+1], 1)
			return min(1, (cum[i]+nb.Count[i]*f)/tot)
		}
		d, p, err := selection.KSOneSample(z, cdf)
		if err != nil {
			t.Fatal(err)
		}
		t.Logf("Ωk = %v: KS D = %.4g, p = %.3g", ok, d, p)
		if p < 1e-3 {
			t.Errorf("Ωk = %v: KS p-value %v (D = %v) on 10^5 randoms", ok, p, d)
		}
	}
}

// TestPixelCounts checks counts per pixel of a completeness map against
// the multinomial expectation N c_p/Σc by Pearson's chi-square with k − 1
// degrees of freedom (survival from gonum distuv.ChiSquared); the p-value
// must exceed 0.001. Pixels with completeness 0 must get no randoms.
func TestPixelCounts(t *testing.T) {
	const nside = 8
	npix := healpix.NPix(nside)
	vals := make([]float32, npix)
	rng := rand.New(rand.NewPCG(11, 12))
	for p := range vals {
		if rng.Float64() < 0.3 {
			continue // hole
		}
		vals[p] = float32(0.05 + 0.95*rng.Float64())
	}
	fp, err := footprint.NewMap("test", nside, vals)
	if err != nil {
		t.Fatal(err)
	}
	for _, gridNside := range []int{4, 8, 32} {
		s, err := NewSampler(fp, nil, nil, gridNside)
		if err != nil {
			t.Fatal(err)
		}
		const n = 400000
		ra, dec, _, err := s.Sample(n, 7)
		if err != nil {
			t.Fatal(err)
		}
		counts := make([]float64, npix)
		for i := range ra {
			counts[healpix.RADec2PixNest(nside, ra[i], dec[i])]++
		}
		sum := 0.0
		for _, v := range vals {
			sum += float64(v)
		}
		chi2, k := 0.0, 0
		for p, v := range vals {
			if v == 0 {
				if counts[p] != 0 {
					t.Fatalf("grid Nside %d: %v randoms in empty pixel %d", gridNside, counts[p], p)
				}
				continue
			}
			e := n * float64(v) / sum
			chi2 += (counts[p] - e) * (counts[p] - e) / e
			k++
		}
		p := distuv.ChiSquared{K: float64(k - 1)}.Survival(chi2)
		t.Logf("grid Nside %d (exact %v): χ² = %.1f for %d dof, p = %.3g; violations %d",
			gridNside, s.Grid().Exact, chi2, k-1, p, s.Stats().EnvelopeViolations)
		if p < 1e-3 {
			t.Errorf("grid Nside %d: χ² = %v for %d dof, p = %v", gridNside, chi2, k-1, p)
		}
		if s.Stats().EnvelopeViolations != 0 {
			t.Errorf("grid Nside %d: %d envelope violations on an exact grid", gridNside, s.Stats().EnvelopeViolations)
		}
	}
}

// TestCapFraction draws over the whole sky and counts the fraction inside a
// cap of radius θ, which must be 2π(1 − cos θ)/(4π) within 4 binomial
// standard deviations; then draws in the cap itself, where every point
// must be inside and 1 − cos(separation) must be uniform on [0, 1 − cos θ]
// (uniform on the sphere; KS p-value above 0.001).
func TestCapFraction(t *testing.T) {
	const ra0, dec0, theta = 200.0, -35.0, 25.0
	c := edge.UnitVector(ra0, dec0)
	sep := func(ra, dec float64) float64 {
		v := edge.UnitVector(ra, dec)
		x := [3]float64{c[1]*v[2] - c[2]*v[1], c[2]*v[0] - c[0]*v[2], c[0]*v[1] - c[1]*v[0]}
		return math.Atan2(math.Sqrt(x[0]*x[0]+x[1]*x[1]+x[2]*x[2]), c[0]*v[0]+c[1]*v[1]+c[2]*v[2])
	}
	const n = 200000
	ra, dec, _, err := Sample(n, fullSky(t), nil, nil, 5)
	if err != nil {
		t.Fatal(err)
	}
	in := 0
	for i := range ra {
		if sep(ra[i], dec[i]) < theta*deg {
			in++
		}
	}
	want := (1 - math.Cos(theta*deg)) / 2
	sd := math.Sqrt(want * (1 - want) / n)
	t.Logf("fraction in cap %.5f, expected %.5f ± %.5f", float64(in)/n, want, sd)
	if math.Abs(float64(in)/n-want) > 4*sd {
		t.Errorf("fraction in cap %v, expected %v ± %v", float64(in)/n, want, sd)
	}

	r, err := region.New(region.Shape{Kind: region.Cap, RA: ra0, Dec: dec0, Radius: theta})
	if err != nil {
		t.Fatal(err)
	}
	ra, dec, _, err = Sample(n, footprint.FromRegion(r), nil, nil, 6)
	if err != nil {
		t.Fatal(err)
	}
	omc := make([]float64, n)
	top := 1 - math.Cos(theta*deg)
	for i := range ra {
		s := sep(ra[i], dec[i])
		if s > theta*deg*(1+1e-9) {
			t.Fatalf("random %d at %v° from the centre of a %v° cap", i, s/deg, theta)
		}
		omc[i] = 1 - math.Cos(s)
	}
	_, p, err := selection.KSOneSample(omc, func(x float64) float64 { return min(1, x/top) })
	if err != nil {
		t.Fatal(err)
	}
	if p < 1e-3 {
		t.Errorf("1 − cos(separation) in the cap not uniform: KS p = %v", p)
	}
}

// TestReproducible checks that a seed gives the same randoms with one and
// two goroutines, and another seed different ones.
func TestReproducible(t *testing.T) {
	m := model(t, 0)
	r, _ := region.New(region.Shape{Kind: region.Box, RAMin: 100, RAMax: 200, DecMin: 0, DecMax: 40},
		region.Shape{Kind: region.Cap, Exclude: true, RA: 150, Dec: 20, Radius: 5})
	fp := footprint.FromRegion(r)
	var out [3][3][]float64
	for k, procs := range []int{1, 2, 2} {
		old := runtime.GOMAXPROCS(procs)
		seed := uint64(99)
		if k == 2 {
			seed = 100
		}
		s, err := NewSampler(fp, testNBar(t, m), m, 64)
		if err != nil {
			t.Fatal(err)
		}
		ra, dec, z, err := s.Sample(3*chunk+17, seed)
		runtime.GOMAXPROCS(old)
		if err != nil {
			t.Fatal(err)
		}
		out[k] = [3][]float64{ra, dec, z}
	}
	for j := range 3 {
		if !slices.Equal(out[0][j], out[1][j]) {
			t.Errorf("column %d differs between 1 and 2 goroutines", j)
		}
		if slices.Equal(out[0][j], out[2][j]) {
			t.Errorf("column %d is the same for seeds 99 and 100", j)
		}
	}
}

// BenchmarkSample10M draws 10^7 randoms (angular and radial) in a
// 100° × 40° box with a hole, envelope grid included.
func BenchmarkSample10M(b *testing.B) {
	m := model(b, 0)
	r, _ := region.New(region.Shape{Kind: region.Box, RAMin: 100, RAMax: 200, DecMin: 0, DecMax: 40},
		region.Shape{Kind: region.Cap, Exclude: true, RA: 150, Dec: 20, Radius: 5})
	fp := footprint.FromRegion(r)
	nb := testNBar(b, m)
	for b.Loop() {
		if _, _, _, err := Sample(10000000, fp, nb, m, 1); err != nil {
			b.Fatal(err)
		}
	}
}

// TestUniformInPixel checks that the points drawn in a pixel lie in it
// (healpix.Vec2PixNest, itself checked against healpy 1.16.1), at several
// Nside including pixels of every base face and both polar caps.
func TestUniformInPixel(t *testing.T) {
	rng := rand.New(rand.NewPCG(1, 1))
	for _, nside := range []int{1, 2, 16, 1024} {
		npix := healpix.NPix(nside)
		for range 20000 {
			p := rng.Int64N(npix)
			phi, z := uniformInPixel(rng, nside, p)
			s := math.Sqrt((1 - z) * (1 + z))
			v := [3]float64{s * math.Cos(phi), s * math.Sin(phi), z}
			if q := healpix.Vec2PixNest(nside, v); q != p {
				t.Fatalf("Nside %d: point drawn in pixel %d lies in %d (phi %v, z %v)", nside, p, q, phi, z)
			}
		}
	}
}

// TestShapeCompleteness draws over a region of two disjoint boxes with
// completeness 0.3 and 0.9 (a sampled, non-exact grid, so the dilated
// envelope is used) and compares the fraction in the first box with
// 0.3 A₁/(0.3 A₁ + 0.9 A₂), the area of an RA/Dec box being
// ΔRA (sin Dec_max − sin Dec_min) sr (elementary spherical geometry),
// within 4 binomial standard deviations.
func TestShapeCompleteness(t *testing.T) {
	r, err := region.New(
		region.Shape{Kind: region.Box, RAMin: 10, RAMax: 50, DecMin: -10, DecMax: 20, Completeness: 0.3},
		region.Shape{Kind: region.Box, RAMin: 60, RAMax: 80, DecMin: 30, DecMax: 60, Completeness: 0.9})
	if err != nil {
		t.Fatal(err)
	}
	s, err := NewSampler(footprint.FromRegion(r), nil, nil, 64)
	if err != nil {
		t.Fatal(err)
	}
	if s.Grid().Exact {
		t.Fatal("grid of exact shapes reported exact")
	}
	const n = 300000
	ra, dec, _, err := s.Sample(n, 8)
	if err != nil {
		t.Fatal(err)
	}
	area := func(ra1, ra2, d1, d2 float64) float64 {
		return (ra2 - ra1) * deg * (math.Sin(d2*deg) - math.Sin(d1*deg))
	}
	a1, a2 := area(10, 50, -10, 20), area(60, 80, 30, 60)
	want := 0.3 * a1 / (0.3*a1 + 0.9*a2)
	in1 := 0
	for i := range ra {
		switch {
		case ra[i] >= 10 && ra[i] <= 50 && dec[i] >= -10 && dec[i] <= 20:
			in1++
		case ra[i] >= 60 && ra[i] <= 80 && dec[i] >= 30 && dec[i] <= 60:
		default:
			t.Fatalf("random %d at (%v, %v) outside both boxes", i, ra[i], dec[i])
		}
	}
	sd := math.Sqrt(want * (1 - want) / n)
	t.Logf("fraction in box 1: %.5f, expected %.5f ± %.5f; violations %d", float64(in1)/n, want, sd, s.Stats().EnvelopeViolations)
	if math.Abs(float64(in1)/n-want) > 4*sd {
		t.Errorf("fraction in box 1: %v, expected %v ± %v", float64(in1)/n, want, sd)
	}
	if v := s.Stats().EnvelopeViolations; v != 0 {
		t.Errorf("%d envelope violations", v)
	}
}
