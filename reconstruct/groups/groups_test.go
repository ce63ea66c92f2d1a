package groups

import (
	"math"
	"math/rand/v2"
	"testing"
)

// place returns RA, Dec of a direction at angle theta (radians) from
// (0, 0) along the equator.
func place(theta float64) (ra, dec float64) {
	ra = theta * 180 / math.Pi
	if ra < 0 {
		ra += 360
	}
	return ra, 0
}

// TestKnownSeparations links points whose pairwise separations are chosen
// on either side of the linking lengths (s = 10 Mpc/h for all, so l⊥ =
// 1.4 and l∥ = 7.5 Mpc/h): A (r = 100) and B (r = 106, same direction,
// Δr = 6) link; C (r = 114, Δr = 8 from B) does not; D (r = 100, r̄θ = 1.3
// from A) links; E (r = 100, r̄θ = 1.5 on the other side of A, 2.8 from D)
// does not. Expected groups: {A, B, D}, {C}, {E}.
func TestKnownSeparations(t *testing.T) {
	raA, decA := place(0)
	raD, decD := place(1.3 / 100)
	raE, decE := place(-1.5 / 100)
	ra := []float64{raA, raA, raA, raD, raE}
	dec := []float64{decA, decA, decA, decD, decE}
	r := []float64{100, 106, 114, 100, 100}
	sep := []float64{10, 10, 10, 10, 10}
	g, err := Find(ra, dec, r, sep, Options{})
	if err != nil {
		t.Fatal(err)
	}
	want := []int32{0, 0, 1, 0, 2}
	for i := range want {
		if g.ID[i] != want[i] {
			t.Fatalf("group ids %v, want %v", g.ID, want)
		}
	}
	if g.NumGroups() != 3 || g.Size[0] != 3 {
		t.Errorf("sizes %v", g.Size)
	}
}

// TestMatchesBruteForce compares Find with the definition applied to every
// pair (O(n²) union-find) on clustered random points with varying
// separations, and checks independence of the thread count.
func TestMatchesBruteForce(t *testing.T) {
	rng := rand.New(rand.NewPCG(3, 4))
	n := 1500
	ra, dec, r, sep := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range ra {
		c := float64(rng.IntN(40))
		ra[i] = 150 + c*0.5 + rng.NormFloat64()*0.3
		dec[i] = 10 + math.Mod(c*7, 20) + rng.NormFloat64()*0.3
		r[i] = 100 + c*5 + rng.NormFloat64()*6
		sep[i] = 3 + r[i]/100
	}
	g, err := Find(ra, dec, r, sep, Options{})
	if err != nil {
		t.Fatal(err)
	}
	parent := make([]int, n)
	for i := range parent {
		parent[i] = i
	}
	var find func(int) int
	find = func(x int) int {
		for parent[x] != x {
			x = parent[x]
		}
		return x
	}
	for i := 0; i < n; i++ {
		ui := unit(ra[i], dec[i])
		for j := i + 1; j < n; j++ {
			uj := unit(ra[j], dec[j])
			theta := math.Acos(math.Max(-1, math.Min(1, ui[0]*uj[0]+ui[1]*uj[1]+ui[2]*uj[2])))
			s := 0.5 * (sep[i] + sep[j])
			if math.Abs(r[i]-r[j]) <= DefaultBPar*s && 0.5*(r[i]+r[j])*theta <= DefaultBPerp*s {
				a, b := find(i), find(j)
				parent[max(a, b)] = min(a, b)
			}
		}
	}
	multi := 0
	for i := 0; i < n; i++ {
		for j := i + 1; j < n; j++ {
			same := find(i) == find(j)
			if same != (g.ID[i] == g.ID[j]) {
				t.Fatalf("galaxies %d and %d: brute force same group %v, Find %v", i, j, same, g.ID[i] == g.ID[j])
			}
		}
	}
	for _, s := range g.Size {
		if s > 1 {
			multi++
		}
	}
	if multi < 20 {
		t.Errorf("only %d groups with ≥ 2 members: the test does not exercise linking", multi)
	}
}

func unit(ra, dec float64) [3]float64 {
	a, d := ra*math.Pi/180, dec*math.Pi/180
	return [3]float64{math.Cos(d) * math.Cos(a), math.Cos(d) * math.Sin(a), math.Sin(d)}
}

// TestMeasure checks the group measurements: the gapper estimator recovers
// the dispersion of Gaussian velocities (Beers et al. 1990 show it is
// unbiased for Gaussians; with N = 4000 its error is about 1.1%), the
// harmonic radius of an equilateral triangle of side a is a (three pairs
// of 1/a: N(N−1)/(2·3/a) = a), and a group stretched along the line of
// sight is compressed to its transverse spread.
func TestMeasure(t *testing.T) {
	rng := rand.New(rand.NewPCG(5, 6))
	n := 4000
	ra, dec, z, r := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	m := make([]int32, n)
	for i := range ra {
		ra[i], dec[i] = 180+rng.NormFloat64()*0.1, 5+rng.NormFloat64()*0.1
		z[i] = 0.05 + rng.NormFloat64()*500*1.05/299792.458 // σ_v = 500 km/s at 1+z̄ = 1.05
		r[i] = 150 + rng.NormFloat64()*5
		m[i] = int32(i)
	}
	gr := measure(m, ra, dec, z, r)
	if d := math.Abs(gr.SigmaLOS/500 - 1); d > 0.04 {
		t.Errorf("gapper σ = %.1f km/s for 500", gr.SigmaLOS)
	}
	// Equilateral triangle of side a at distance 100: transverse offsets.
	a := 1.0
	th := a / 100
	tri := measure([]int32{0, 1, 2}, []float64{0, th * 180 / math.Pi, th / 2 * 180 / math.Pi}, []float64{0, 0, th * math.Sqrt(3) / 2 * 180 / math.Pi}, []float64{0.03, 0.03, 0.03}, []float64{100, 100, 100})
	if math.Abs(tri.RHarm/a-1) > 1e-3 {
		t.Errorf("harmonic radius of a triangle of side 1: %v", tri.RHarm)
	}
	g := partition(n, func(int) int32 { return 0 })
	meas := []Group{gr}
	out, err := Compress(g, meas, r, 5)
	if err != nil {
		t.Fatal(err)
	}
	after := measure(m, ra, dec, z, out)
	if math.Abs(after.RLOS/gr.RProj-1) > 1e-9 {
		t.Errorf("compressed spread %v, transverse %v", after.RLOS, gr.RProj)
	}
}

// BenchmarkFoF1M: 10⁶ galaxies over 1000 deg² to 450 Mpc/h with clustered
// positions (target: at most 5 s).
func BenchmarkFoF1M(b *testing.B) {
	rng := rand.New(rand.NewPCG(7, 8))
	n := 1000000
	ra, dec, r, sep := make([]float64, n), make([]float64, n), make([]float64, n), make([]float64, n)
	for i := range ra {
		if i%3 == 0 && i > 0 { // a third of the galaxies in tight clumps
			j := rng.IntN(i)
			ra[i], dec[i], r[i] = ra[j]+rng.NormFloat64()*0.02, dec[j]+rng.NormFloat64()*0.02, r[j]+rng.NormFloat64()*3
		} else {
			ra[i], dec[i] = 150+rng.Float64()*45, rng.Float64()*22
			r[i] = 450 * math.Cbrt(rng.Float64())
		}
		sep[i] = 2 + r[i]/100
	}
	for b.Loop() {
		g, err := Find(ra, dec, r, sep, Options{})
		if err != nil {
			b.Fatal(err)
		}
		b.ReportMetric(float64(g.NumGroups()), "groups")
	}
}
