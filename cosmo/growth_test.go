package cosmo

import (
	"math"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

// TestGrowthEdS checks D = a = 1/(1+z) and f = 1 for Einstein–de Sitter
// (the exact growing mode of δ̈ + 2Hδ̇ = 4πGρδ when H ∝ a^{-3/2}).
func TestGrowthEdS(t *testing.T) {
	p, _ := Preset("eds")
	m, err := New(p)
	if err != nil {
		t.Fatal(err)
	}
	for _, z := range closedFormZ {
		if d := relDiff(m.Growth(z), 1/(1+z)); d > 1e-10 {
			t.Errorf("EdS D(%v) = %.15g, want 1/(1+z) = %.15g", z, m.Growth(z), 1/(1+z))
		}
		if d := math.Abs(m.GrowthRate(z) - 1); d > 1e-10 {
			t.Errorf("EdS f(%v) = %.15g, want 1", z, m.GrowthRate(z))
		}
	}
}

// TestGrowthIndexLinder checks f(z) against Ωm(z)^0.55 within 1% for flat
// ΛCDM at 0 ≤ z ≤ 3 (Linder 2005, Phys. Rev. D 72, 043529, eq. 2 with
// γ = 0.55), for Ωm today between 0.25 and 0.4 (at Ωm = 0.2 the rule is
// off by 1.3% at z = 0, so the 1% claim is for realistic Ωm only).
func TestGrowthIndexLinder(t *testing.T) {
	for _, om := range []float64{0.25, 0.3, 0.3111, 0.35, 0.4} {
		m, err := New(LambdaCDM(70, om, 0))
		if err != nil {
			t.Fatal(err)
		}
		for z := 0.0; z <= 3; z += 0.05 {
			want := math.Pow(m.OmegaM(z), 0.55)
			if d := math.Abs(m.GrowthRate(z)/want - 1); d > 0.01 {
				t.Errorf("Ωm=%v z=%.2f: f = %.5f, Ωm(z)^0.55 = %.5f (%.2g%%)", om, z, m.GrowthRate(z), want, 100*d)
			}
		}
	}
}

// heath returns the growth factor and rate of a ΛCDM model (w = −1, no
// radiation, any curvature) from Heath's (1977, MNRAS 179, 351) integral
// D(a) ∝ E(a) ∫₀^a da'/(a'E(a'))³, normalised to D(1) = 1, by gonum's fixed
// Gauss–Legendre quadrature in s = √a (where the integrand 2s⁴/(Ωm + Ωk s² +
// Ω_Λ s⁶)^{3/2} is smooth). f = dlnE/dlna + 1/(a² E³ I(a)).
func heath(om, ok, ol, a float64) (d, f float64) {
	integral := func(a float64) float64 {
		return quad.Fixed(func(s float64) float64 {
			return 2 * math.Pow(s, 4) / math.Pow(om+ok*s*s+ol*math.Pow(s, 6), 1.5)
		}, 0, math.Sqrt(a), 200, nil, 0)
	}
	e := func(a float64) float64 { return math.Sqrt(om/(a*a*a) + ok/(a*a) + ol) }
	i, i1 := integral(a), integral(1)
	d = e(a) * i / (e(1) * i1)
	e2 := om/(a*a*a) + ok/(a*a) + ol
	dlnE := 0.5 * (-3*om/(a*a*a) - 2*ok/(a*a)) / e2
	f = dlnE + 1/(a*a*math.Pow(e(a), 3)*i)
	return d, f
}

// TestGrowthHeath checks the ODE solution against Heath's integral for flat,
// open and closed ΛCDM to 1e-6.
func TestGrowthHeath(t *testing.T) {
	for _, p := range []Params{
		LambdaCDM(70, 0.3, 0),
		LambdaCDM(67.66, 0.3111, 0),
		LambdaCDM(70, 0.3, 0.1),
		LambdaCDM(70, 0.3, -0.1),
		{H0: 70, OmegaM: 0.3, OmegaK: 0.7, W0: -1},
	} {
		m, err := New(p)
		if err != nil {
			t.Fatal(err)
		}
		var worst float64
		for _, z := range []float64{0, 0.01, 0.1, 0.5, 1, 2, 3, 5, 10, 100, 1000} {
			d, f := heath(m.om, m.ok, m.ol, 1/(1+z))
			dd := relDiff(m.Growth(z), d)
			df := relDiff(m.GrowthRate(z), f)
			worst = math.Max(worst, math.Max(dd, df))
			if dd > 1e-6 || df > 1e-6 {
				t.Errorf("%v z=%v: D = %.10g (Heath %.10g), f = %.10g (Heath %.10g)", m, z, m.Growth(z), d, m.GrowthRate(z), f)
			}
		}
		t.Logf("Ωm=%v Ωk=%v: largest relative difference from Heath 1977: %.2g", m.om, m.ok, worst)
	}
}

// TestGrowthMeszaros checks the growth factor with radiation in a flat
// matter + radiation model (Ω_Λ = 0) against Mészáros' (1974, A&A 37, 225)
// exact growing mode D ∝ 1 + (3/2) a/a_eq, a_eq = Ωr/Ωm.
func TestGrowthMeszaros(t *testing.T) {
	probe, err := New(Params{H0: 70, OmegaM: 0.3, W0: -1, TCMB: 2.7255})
	if err != nil {
		t.Fatal(err)
	}
	or := probe.OmegaR()
	m, err := New(Params{H0: 70, OmegaM: 1 - or, OmegaL: 0, FixOmegaL: true, W0: -1, TCMB: 2.7255})
	if err != nil {
		t.Fatal(err)
	}
	aEq := or / (1 - or)
	for _, z := range []float64{0, 0.5, 3, 30, 300, 1000, 3000, 9999} {
		a := 1 / (1 + z)
		want := (1 + 1.5*a/aEq) / (1 + 1.5/aEq)
		wantF := 1.5 * a / aEq / (1 + 1.5*a/aEq)
		if d := relDiff(m.Growth(z), want); d > 1e-9 {
			t.Errorf("z=%v: D = %.12g, Mészáros %.12g (rel %.2g)", z, m.Growth(z), want, d)
		}
		if d := relDiff(m.GrowthRate(z), wantF); d > 1e-9 {
			t.Errorf("z=%v: f = %.12g, Mészáros %.12g (rel %.2g)", z, m.GrowthRate(z), wantF, d)
		}
	}
}

// TestGrowthDomain checks the documented NaN outside [0, MaxRedshift] and
// D(0) = 1.
func TestGrowthDomain(t *testing.T) {
	p, _ := Preset(DefaultPreset)
	m, _ := New(p)
	if m.Growth(0) != 1 {
		t.Errorf("D(0) = %v, want 1", m.Growth(0))
	}
	for _, z := range []float64{-0.1, math.NaN(), MaxRedshift * 1.01, math.Inf(1)} {
		if !math.IsNaN(m.Growth(z)) || !math.IsNaN(m.GrowthRate(z)) {
			t.Errorf("Growth(%v) = %v, GrowthRate = %v; want NaN", z, m.Growth(z), m.GrowthRate(z))
		}
	}
}
