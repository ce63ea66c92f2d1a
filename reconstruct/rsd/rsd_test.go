package rsd

import (
	"math"
	"testing"

	"github.com/filigree-survey/filigree/reconstruct/grid"
	"github.com/filigree-survey/filigree/reconstruct/mock"
	"github.com/filigree-survey/filigree/reconstruct/zeldovich"

	"github.com/filigree-survey/filigree/cosmo"
)

// TestKaiserRemovedInBox is the check of the linear correction:
// a box-mode 2LPT mock of particles is put in redshift space along z
// (plane-parallel), where its large-scale monopole is boosted by
// 1 + 2f/3 + f²/5 (Kaiser 1987) and its quadrupole is 4f/3 + 4f²/7 times
// the real-space power. After the correction with Zel'dovich displacements
// estimated from the redshift-space particles themselves (Eisenstein et al.
// 2007; b = 1, Gaussian smoothing 7 Mpc/h), the ratio of the monopole to
// the real-space power must be within the measured error of 1, and the
// quadrupole consistent with zero, on scales k < 0.05 h/Mpc. Errors: the
// standard error of the per-mode ratios over the modes used (the same
// realisation is compared, so cosmic variance largely cancels).
func TestKaiserRemovedInBox(t *testing.T) {
	p, _ := cosmo.Preset("planck2018")
	m, _ := cosmo.New(p)
	lp, err := m.LinearPower(cosmo.PowerOptions{})
	if err != nil {
		t.Fatal(err)
	}
	const n = 64
	r, err := mock.Generate(mock.Config{Model: m, Power: lp, N: n, L: 1000, Seed: 21, Order: 2})
	if err != nil {
		t.Fatal(err)
	}
	z := 0.5
	cat, err := r.Box(mock.BoxOptions{Redshift: z, RSDAxis: 2})
	if err != nil {
		t.Fatal(err)
	}
	g := r.Geometry
	fft, _ := grid.NewFFT(n)
	densityK := func(pos []float64) []complex128 {
		rho := make([]float64, g.Len())
		grid.AssignCIC(rho, g, pos, nil)
		for i := range rho {
			rho[i]--
		}
		dk := make([]complex128, g.HalfLen())
		fft.Forward(dk, rho)
		return dk
	}
	f := m.GrowthRate(z)
	// The displacement is estimated on a grid twice as fine as the
	// particles' (so the CIC window barely touches k < 0.05 h/Mpc) and
	// smoothed at 7 Mpc/h, where exp(−k²R²/2) ≥ 0.94 on the scales tested.
	gd := grid.Geometry{N: 2 * n, L: g.L}
	perCell := float64(len(cat.Pos)/3) / float64(gd.Len())
	displace := func(x []float64) ([]float64, error) {
		rho := make([]float64, gd.Len())
		grid.AssignCIC(rho, gd, x, nil)
		for i := range rho {
			rho[i] = rho[i]/perCell - 1
		}
		fld, err := zeldovich.Displacement(rho, gd, 7, 1)
		if err != nil {
			return nil, err
		}
		d := make([]float64, len(x))
		fld.At(d, x)
		return d, nil
	}
	zhat := func(int) [3]float64 { return [3]float64{0, 0, 1} }
	res, err := Correct(cat.Pos, zhat, []float64{f}, displace, Options{Tol: 0.05, Damping: 0.6})
	if err != nil {
		t.Fatal(err)
	}
	for i := range res.X { // back into the periodic box
		res.X[i] = math.Mod(math.Mod(res.X[i], g.L)+g.L, g.L)
	}
	dr, ds, dc := densityK(cat.RealPos), densityK(cat.Pos), densityK(res.X)
	mono := func(d []complex128) (ratio, se, quad, qse float64) {
		var sum, sum2, q, q2, cnt float64
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
					pd := real(d[idx])*real(d[idx]) + imag(d[idx])*imag(d[idx])
					mu2 := kz * kz / (kk * kk)
					l2 := 2.5 * (3*mu2 - 1) // (2ℓ+1) P2(μ) for the quadrupole estimator
					x := pd / pr
					sum += x
					sum2 += x * x
					q += x * l2
					q2 += x * l2 * x * l2
					cnt++
				}
			}
		}
		ratio = sum / cnt
		quad = q / cnt
		return ratio, math.Sqrt((sum2/cnt - ratio*ratio) / cnt), quad, math.Sqrt((q2/cnt - quad*quad) / cnt)
	}
	rs, ses, qs, qses := mono(ds)
	rc, sec, qc, qsec := mono(dc)
	t.Logf("f = %.3f, %d iterations (shifts %.3g … %.3g Mpc/h), converged %v", f, len(res.Shifts), res.Shifts[0], res.Shifts[len(res.Shifts)-1], res.Converged)
	t.Logf("before: monopole/real %.3f ± %.3f (Kaiser 1+2f/3+f²/5 = %.3f), quadrupole/real %.3f ± %.3f (4f/3+4f²/7 = %.3f)", rs, ses, 1+2*f/3+f*f/5, qs, qses, 4*f/3+4*f*f/7)
	t.Logf("after:  monopole/real %.3f ± %.3f, quadrupole/real %.3f ± %.3f", rc, sec, qc, qsec)
	if math.Abs(rc-1) > 3*sec+0.03 {
		t.Errorf("corrected monopole/real = %.3f ± %.3f, want 1", rc, sec)
	}
	if math.Abs(qc) > 3*qsec+0.05 {
		t.Errorf("corrected quadrupole/real = %.3f ± %.3f, want 0", qc, qsec)
	}
	if !(rs > 1.2) {
		t.Errorf("the uncorrected monopole ratio %.3f shows no Kaiser boost: the test is not testing", rs)
	}
}

// TestCorrectExact checks the iteration on a field whose displacement is
// known: with Ψ(x) = A sin(k x_z) ẑ and s = x + f Ψ(x)·ẑ ẑ, the iteration
// must return x to the tolerance (it contracts with factor f A k < 1).
func TestCorrectExact(t *testing.T) {
	A, k, f := 2.0, 2*math.Pi/100, 0.6
	n := 500
	x := make([]float64, 3*n)
	s := make([]float64, 3*n)
	for i := 0; i < n; i++ {
		x[3*i+2] = float64(i) * 0.37
		s[3*i+2] = x[3*i+2] + f*A*math.Sin(k*x[3*i+2])
	}
	psi := func(p []float64) ([]float64, error) {
		d := make([]float64, len(p))
		for i := 0; i < n; i++ {
			d[3*i+2] = A * math.Sin(k*p[3*i+2])
		}
		return d, nil
	}
	res, err := Correct(s, func(int) [3]float64 { return [3]float64{0, 0, 1} }, []float64{f}, psi, Options{Tol: 1e-10, MaxIter: 200})
	if err != nil {
		t.Fatal(err)
	}
	for i := 0; i < n; i++ {
		if d := math.Abs(res.X[3*i+2] - x[3*i+2]); d > 1e-8 {
			t.Fatalf("galaxy %d: recovered %v, true %v", i, res.X[3*i+2], x[3*i+2])
		}
	}
	if !res.Converged {
		t.Error("not converged")
	}
}
