package mock

import (
	"math"
	"testing"

	"github.com/filigree-survey/filigree/cosmo"
	"github.com/filigree-survey/filigree/reconstruct/grid"
)

// twoCaps is a footprint of two spherical caps with different completeness.
type twoCaps struct{}

func (twoCaps) Completeness(ra, dec float64) float64 {
	if angDist(ra, dec, 30, 0) <= 20 {
		return 1
	}
	if angDist(ra, dec, 120, 30) <= 15 {
		return 0.5
	}
	return 0
}

func angDist(ra1, dec1, ra2, dec2 float64) float64 {
	u, v := unitVector(ra1, dec1), unitVector(ra2, dec2)
	return math.Acos(math.Max(-1, math.Min(1, u[0]*v[0]+u[1]*v[1]+u[2]*v[2]))) * 180 / math.Pi
}

// TestSurveyCounts checks the survey's selection: in a nearly unclustered
// realisation (σ8 = 0.01, so clustering adds far less than Poisson noise)
// the counts in each redshift bin and cap are Poisson around n̄(z) × V ×
// completeness, with V = Ω/3 (r₂³ − r₁³) the exact cone volume of the bin
// and Ω = 2π(1 − cos θ) the solid angle of a cap of radius θ. (The parents
// sit near a lattice, so the counts are binomial thinnings of a nearly
// fixed number, with variance N(1 − p) below Poisson's; n̄ is kept at a
// fifth of the particle density so that p ≤ 0.2 and Poisson is close.)
func TestSurveyCounts(t *testing.T) {
	p, _ := cosmo.Preset("planck2018")
	p.Sigma8 = 0.01
	m, _ := cosmo.New(p)
	lp, err := m.LinearPower(cosmo.PowerOptions{})
	if err != nil {
		t.Fatal(err)
	}
	r, err := Generate(Config{Model: m, Power: lp, N: 64, L: 400, Seed: 5, Order: 2})
	if err != nil {
		t.Fatal(err)
	}
	nbar := func(z float64) float64 {
		if z < 0.05 {
			return 0.0008
		}
		return 0.0004
	}
	s, err := r.Survey(SurveyOptions{Footprint: twoCaps{}, NBar: nbar, ZMax: 0.1, Bias: 1, AutoObserver: true, Centre: [2]float64{75, 15}})
	if err != nil {
		t.Fatal(err)
	}
	edges := []float64{0.01, 0.02, 0.03, 0.04, 0.05, 0.06, 0.07, 0.08, 0.09, 0.1}
	omega := [2]float64{2 * math.Pi * (1 - math.Cos(20*math.Pi/180)), 2 * math.Pi * (1 - math.Cos(15*math.Pi/180))}
	comp := [2]float64{1, 0.5}
	counts := make([][2]float64, len(edges)-1)
	for i, z := range s.Z {
		b := -1
		for j := 0; j+1 < len(edges); j++ {
			if z >= edges[j] && z < edges[j+1] {
				b = j
			}
		}
		if b < 0 {
			continue
		}
		c := 0
		if angDist(s.RA[i], s.Dec[i], 30, 0) > 20 {
			c = 1
		}
		counts[b][c]++
	}
	var chi2 float64
	h := m.LittleH()
	for j := range counts {
		r1, r2 := m.ComovingDistance(edges[j])*h, m.ComovingDistance(edges[j+1])*h
		for c := 0; c < 2; c++ {
			want := nbar(0.5*(edges[j]+edges[j+1])) * omega[c] / 3 * (r2*r2*r2 - r1*r1*r1) * comp[c]
			dev := (counts[j][c] - want) / math.Sqrt(want)
			chi2 += dev * dev
			if math.Abs(dev) > 4 {
				t.Errorf("z %.2f–%.2f cap %d: %v galaxies, expected %.1f (%.1fσ)", edges[j], edges[j+1], c, counts[j][c], want, dev)
			}
		}
	}
	nb := float64(2 * len(counts))
	t.Logf("%d galaxies, χ² = %.1f for %v bins", s.Len(), chi2, nb)
	if chi2 > nb+5*math.Sqrt(2*nb) {
		t.Errorf("χ² = %.1f for %v bins", chi2, nb)
	}
	// Observed redshifts obey (1+z) = (1+z_c)(1+v/c), and the true
	// position's distance gives z_c.
	for i := 0; i < s.Len(); i += 97 {
		want := (1+s.ZCosmo[i])*(1+s.VLos[i]/cosmo.SpeedOfLight) - 1
		if math.Abs(s.Z[i]-want) > 1e-12 {
			t.Fatalf("galaxy %d: z = %v, (1+z_c)(1+v/c)−1 = %v", i, s.Z[i], want)
		}
		x := s.TruePos[3*i : 3*i+3]
		d := math.Sqrt(x[0]*x[0] + x[1]*x[1] + x[2]*x[2])
		if got := m.ComovingDistance(s.ZCosmo[i]) * h; math.Abs(got-d) > 1e-3 {
			t.Fatalf("galaxy %d: D_C(z_c) = %v Mpc/h, true distance %v", i, got, d)
		}
	}
}

// TestKaiserBoxParticles checks redshift-space distortions in box mode:
// with plane-parallel distortions along z, linear theory gives
// δ_s(k) = (1 + f μ²) δ_r(k) (Kaiser 1987, MNRAS 227, 1), so the ratio of
// the redshift- to real-space monopole on large scales is 1 + 2β/3 + β²/5
// with β = f/b (b = 1 for particles). The measured ratio (modes with k <
// 0.05 h/Mpc) must agree with Kaiser's, evaluated over the same modes'
// μ, within three standard errors of the per-mode ratios plus 2% for
// second-order effects. (On a grid the few large-scale modes do not sample
// μ uniformly, so the angle average 1 + 2β/3 + β²/5 is only reached in the
// limit of many modes; the test averages (1 + fμ²)² over the actual modes.)
func TestKaiserBoxParticles(t *testing.T) {
	m, lp := planck(t)
	const n = 96
	r, err := Generate(Config{Model: m, Power: lp, N: n, L: 1200, Seed: 9, Order: 2})
	if err != nil {
		t.Fatal(err)
	}
	zs := 0.5
	cat, err := r.Box(BoxOptions{Redshift: zs, RSDAxis: 2})
	if err != nil {
		t.Fatal(err)
	}
	g := r.Geometry
	fft, _ := grid.NewFFT(n)
	spec := func(pos []float64) []complex128 {
		rho := make([]float64, g.Len())
		grid.AssignCIC(rho, g, pos, nil)
		for i := range rho {
			rho[i]-- // one particle per cell on average
		}
		dk := make([]complex128, g.HalfLen())
		fft.Forward(dk, rho)
		return dk
	}
	dr, ds := spec(cat.RealPos), spec(cat.Pos)
	f := m.GrowthRate(zs)
	var sumR, sumS, sumK, sumRatio, sumRatio2, cnt float64
	for i := 0; i < n; i++ {
		for j := 0; j < n; j++ {
			for k := 0; k <= n/2; k++ {
				kx, ky, kz := g.Wavenumber(i), g.Wavenumber(j), g.Wavenumber(k)
				kk := math.Sqrt(kx*kx + ky*ky + kz*kz)
				if kk == 0 || kk > 0.05 {
					continue
				}
				idx := g.KIndex(i, j, k)
				pr := real(dr[idx])*real(dr[idx]) + imag(dr[idx])*imag(dr[idx])
				ps := real(ds[idx])*real(ds[idx]) + imag(ds[idx])*imag(ds[idx])
				mu2 := kz * kz / (kk * kk)
				kai := (1 + f*mu2) * (1 + f*mu2)
				sumR += pr
				sumS += ps
				sumK += kai * pr
				rat := ps / pr
				sumRatio += rat / kai
				sumRatio2 += (rat / kai) * (rat / kai)
				cnt++
			}
		}
	}
	meanR := sumRatio / cnt
	se := math.Sqrt((sumRatio2/cnt - meanR*meanR) / cnt)
	t.Logf("f = %.4f; %v modes; P_s/P_r = %.4f, Kaiser over these modes %.4f, 1+2f/3+f²/5 = %.4f; per-mode ratio / Kaiser = %.4f ± %.4f",
		f, cnt, sumS/sumR, sumK/sumR, 1+2*f/3+f*f/5, meanR, se)
	if math.Abs(meanR-1) > 3*se+0.02 {
		t.Errorf("per-mode redshift/real power over Kaiser's (1+fμ²)² = %.4f ± %.4f", meanR, se)
	}
	if d := math.Abs(sumS/sumK - 1); d > 3*se+0.02 {
		t.Errorf("monopole ratio %.4f vs Kaiser over the same modes %.4f", sumS/sumR, sumK/sumR)
	}
}

// TestGalaxyBias measures the linear bias of box galaxies as the ratio of
// the galaxy–matter cross power to the matter power on large scales (k <
// 0.06 h/Mpc), b = P_gm/P_mm (the usual estimator, free of shot noise), and
// checks it against the request: the local-Lagrangian selection of
// select.go gives b = 1 + b_L with b_L = β/σ_b, lowered a little where the
// probability is capped at 1, so the measured bias must be within 5% of
// the request (and is logged).
func TestGalaxyBias(t *testing.T) {
	m, lp := planck(t)
	const n = 96
	// The selection responds to the linear field smoothed at BiasSmooth, so
	// b_L is reached on scales k ≪ 1/BiasSmooth: keep it small here.
	r, err := Generate(Config{Model: m, Power: lp, N: n, L: 1200, Seed: 13, Order: 2, BiasSmooth: 3})
	if err != nil {
		t.Fatal(err)
	}
	g := r.Geometry
	fft, _ := grid.NewFFT(n)
	spec := func(pos []float64) []complex128 {
		rho := make([]float64, g.Len())
		grid.AssignCIC(rho, g, pos, nil)
		mean := float64(len(pos)/3) / float64(g.Len())
		for i := range rho {
			rho[i] = rho[i]/mean - 1
		}
		dk := make([]complex128, g.HalfLen())
		fft.Forward(dk, rho)
		return dk
	}
	zs := 0.3
	parts, _ := r.Box(BoxOptions{Redshift: zs, RSDAxis: -1})
	dm := spec(parts.RealPos)
	for _, b := range []float64{1.3, 1.5} {
		gal, err := r.Box(BoxOptions{Redshift: zs, Galaxies: true, Bias: b, Density: 0.1 * float64(g.Len()) / g.Volume(), RSDAxis: -1})
		if err != nil {
			t.Fatal(err)
		}
		dg := spec(gal.RealPos)
		edges := []float64{0.005, 0.06}
		cross := grid.CrossSpectrum(dg, dm, g, edges)
		auto := grid.PowerSpectrum(dm, g, edges)
		got := cross[0].P / auto[0].P
		t.Logf("requested b = %.2f at z = %.1f: measured %.3f (%d galaxies, β_sel = %.3f)", b, zs, got, gal.Len(), gal.Beta)
		if math.Abs(got/b-1) > 0.05 {
			t.Errorf("requested bias %.2f, measured %.3f", b, got)
		}
	}
}
