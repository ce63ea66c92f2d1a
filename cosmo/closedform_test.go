package cosmo

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

var closedFormZ = []float64{1e-6, 1e-3, 0.01, 0.1, 0.3, 0.5, 1, 1.5, 2, 3, 5, 10, 30, 100, 1100, 1e4}

// TestEinsteinDeSitter checks the flat matter-only model against its closed
// forms: D_C = (2c/H0)(1 − 1/√(1+z)) (Hogg 1999, eq. 15 with
// E = (1+z)^{3/2}; quoted in Hogg §5) and the lookback time
// t_L = (2/3) t_H (1 − (1+z)^{-3/2}) (Hogg 1999, eq. 30 integrated).
func TestEinsteinDeSitter(t *testing.T) {
	p, err := Preset("eds")
	if err != nil {
		t.Fatal(err)
	}
	m, err := New(p)
	if err != nil {
		t.Fatal(err)
	}
	dh := SpeedOfLight / 70
	for _, z := range closedFormZ {
		want := 2 * dh * -math.Expm1(-0.5*math.Log1p(z))
		if d := relDiff(m.ComovingDistance(z), want); d > 1e-10 {
			t.Errorf("EdS D_C(%v) = %.15g, Hogg 1999 %.15g (rel %.2g)", z, m.ComovingDistance(z), want, d)
		}
		wantT := 2.0 / 3 * m.HubbleTime() * -math.Expm1(-1.5*math.Log1p(z))
		if d := relDiff(m.LookbackTime(z), wantT); d > 1e-10 {
			t.Errorf("EdS t_L(%v) = %.15g, closed form %.15g (rel %.2g)", z, m.LookbackTime(z), wantT, d)
		}
		if e := math.Pow(1+z, 1.5); relDiff(m.E(z), e) > 1e-14 {
			t.Errorf("EdS E(%v) = %.17g, want (1+z)^1.5 = %.17g", z, m.E(z), e)
		}
	}
}

// TestMattig checks the open matter-only model (Ω_Λ = 0, Ωk = 1 − Ωm)
// against Mattig's (1958) closed form as given by Hogg 1999 §5 (after
// eq. 16; Weinberg 1972):
//
//	D_M = D_H 2[2 − Ωm(1−z) − (2−Ωm)√(1+Ωm z)] / (Ωm² (1+z)),
//
// and D_L = (1+z) D_M.
func TestMattig(t *testing.T) {
	for _, om := range []float64{0.05, 0.3, 0.7, 0.99} {
		m, err := New(Params{H0: 65, OmegaM: om, OmegaK: 1 - om, W0: -1})
		if err != nil {
			t.Fatal(err)
		}
		if m.ol != 0 {
			t.Fatalf("Ω_Λ = %g, want 0", m.ol)
		}
		dh := SpeedOfLight / 65
		for _, z := range closedFormZ {
			if z < 0.01 {
				continue // the closed form cancels catastrophically at small z
			}
			dm := dh * 2 * (2 - om*(1-z) - (2-om)*math.Sqrt(1+om*z)) / (om * om * (1 + z))
			if d := relDiff(m.TransverseComovingDistance(z), dm); d > 1e-10 {
				t.Errorf("Ωm=%v D_M(%v) = %.15g, Mattig %.15g (rel %.2g)", om, z, m.TransverseComovingDistance(z), dm, d)
			}
			dl := dh * 2 * (2 - om*(1-z) - (2-om)*math.Sqrt(1+om*z)) / (om * om)
			if d := relDiff(m.LuminosityDistance(z), dl); d > 1e-10 {
				t.Errorf("Ωm=%v D_L(%v) = %.15g, Mattig %.15g (rel %.2g)", om, z, m.LuminosityDistance(z), dl, d)
			}
		}
	}
}

// TestEmptyUniverse checks the Ωm = 0, Ωk = 1 (Milne 1935) model, where
// E = 1+z: D_C = D_H ln(1+z), D_M = D_H sinh(ln(1+z)) = D_H z(1 + z/2)/(1+z),
// so D_L = D_H z(1 + z/2) (Hogg 1999 eqs. 15–16, 21); and, from eq. 29
// rewritten in D_C, V = 4π D_H³ (sinh 2χ − 2χ)/4 over the sky; lookback time
// t_H z/(1+z); and no growth.
func TestEmptyUniverse(t *testing.T) {
	m, err := New(Params{H0: 70, OmegaK: 1, W0: -1})
	if err != nil {
		t.Fatal(err)
	}
	dh := m.HubbleDistance()
	for _, z := range closedFormZ {
		chi := math.Log1p(z)
		if d := relDiff(m.ComovingDistance(z), dh*chi); d > 1e-12 {
			t.Errorf("Milne D_C(%v) rel error %.2g", z, d)
		}
		if d := relDiff(m.LuminosityDistance(z), dh*z*(1+z/2)); d > 1e-12 {
			t.Errorf("Milne D_L(%v) rel error %.2g", z, d)
		}
		v := 4 * math.Pi * dh * dh * dh * (math.Sinh(2*chi) - 2*chi) / 4
		if chi < 0.1 { // series of sinh 2χ − 2χ, to avoid cancellation in the check
			x := 2 * chi
			v = 4 * math.Pi * dh * dh * dh * (x*x*x/6 + math.Pow(x, 5)/120 + math.Pow(x, 7)/5040 + math.Pow(x, 9)/362880) / 4
		}
		if d := relDiff(m.ComovingVolume(0, z, 4*math.Pi), v); d > 1e-12 {
			t.Errorf("Milne V(%v) = %.15g, want %.15g (rel %.2g)", z, m.ComovingVolume(0, z, 4*math.Pi), v, d)
		}
		if d := relDiff(m.LookbackTime(z), m.HubbleTime()*z/(1+z)); d > 1e-12 {
			t.Errorf("Milne t_L(%v) rel error %.2g", z, d)
		}
		if m.Growth(z) != 1 || m.GrowthRate(z) != 0 {
			t.Errorf("Milne growth(%v) = %v, f = %v; want 1, 0", z, m.Growth(z), m.GrowthRate(z))
		}
	}
}

// TestComovingVolumeQuadrature checks ComovingVolume(z1, z2, Ω) against
// Ω ∫ dV_C/dz/dΩ dz (Hogg 1999 eq. 28 integrated, the definition behind
// eq. 29) by gonum's fixed Gauss–Legendre quadrature, for thick and thin
// shells in flat, open and closed models, including tiny redshifts where
// eq. 29 in D_M form cancels.
func TestComovingVolumeQuadrature(t *testing.T) {
	for _, p := range []Params{
		LambdaCDM(70, 0.3, 0),
		LambdaCDM(70, 0.3, 0.1),
		LambdaCDM(70, 0.3, -0.1),
		{H0: 70, OmegaM: 0.3, OmegaK: 0.7, W0: -1},
		{H0: 68, OmegaM: 0.31, OmegaL: 0.72, FixOmegaL: true, W0: -1.1, Wa: -0.3, TCMB: 2.7255},
	} {
		m, err := New(p)
		if err != nil {
			t.Fatal(err)
		}
		for _, zz := range [][2]float64{{0, 1e-3}, {0, 0.02}, {0, 1}, {0.5, 0.5001}, {1, 1.2}, {0.1, 3}, {2, 2 + 1e-7}} {
			const omega = 0.3 // sr
			want := omega * quad.Fixed(m.DifferentialComovingVolume, zz[0], zz[1], 60, nil, 0)
			got := m.ComovingVolume(zz[0], zz[1], omega)
			if d := relDiff(got, want); d > 1e-11 {
				t.Errorf("%v: V(%v, %v) = %.15g, quadrature %.15g (rel %.2g)", m, zz[0], zz[1], got, want, d)
			}
			if back := m.ComovingVolume(zz[1], zz[0], omega); back != -got {
				t.Errorf("V(z2, z1) = %v, want −V(z1, z2) = %v", back, -got)
			}
		}
	}
}

// TestCurvatureLimit checks that the curved formulas (sinh/sin forms, the
// volume series) join the flat ones continuously as Ωk → 0.
func TestCurvatureLimit(t *testing.T) {
	flat, _ := New(LambdaCDM(70, 0.3, 0))
	for _, ok := range []float64{1e-12, -1e-12} {
		m, _ := New(LambdaCDM(70, 0.3, ok))
		for _, z := range []float64{0.01, 1, 5} {
			for _, pair := range [][2]float64{
				{m.TransverseComovingDistance(z), flat.TransverseComovingDistance(z)},
				{m.ComovingVolume(0, z, 1), flat.ComovingVolume(0, z, 1)},
				{m.DifferentialComovingVolume(z), flat.DifferentialComovingVolume(z)},
			} {
				if d := relDiff(pair[0], pair[1]); d > 1e-10 {
					t.Errorf("Ωk=%g z=%v: %.15g vs flat %.15g", ok, z, pair[0], pair[1])
				}
			}
		}
	}
}
