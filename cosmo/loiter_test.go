package cosmo

import (
	"math"
	"strings"
	"testing"

	"gonum.org/v1/gonum/integrate/quad"
)

// bounceOmegaL returns the Ω_Λ above which a matter + Λ model (Ωk = 1 − Ωm −
// Ω_Λ, no radiation) has no big bang: E² = Ωm x³ + Ωk x² + Ω_Λ (x = 1+z) has
// its minimum at x = −2Ωk/(3Ωm), where it equals Ω_Λ + 4Ωk³/(27Ωm²); the
// root of that in Ω_Λ is found by bisection.
func bounceOmegaL(om float64) float64 {
	lo, hi := 1-om, 10.0
	for i := 0; i < 200; i++ {
		ol := 0.5 * (lo + hi)
		ok := 1 - om - ol
		if ol+4*ok*ok*ok/(27*om*om) > 0 {
			lo = ol
		} else {
			hi = ol
		}
	}
	return lo
}

// TestBounceLimit checks New's refusal of models without a big bang at the
// analytic boundary, and its closed form as given by Carroll, Press & Turner
// (1992, ARA&A 30, 499): Ω_Λ = 4Ωm {cosh[(1/3) arccosh((1−Ωm)/Ωm)]}³ for
// Ωm < 1/2 (from memory), plus the loitering margin of New.
func TestBounceLimit(t *testing.T) {
	for _, om := range []float64{0.05, 0.3, 0.45} {
		crit := bounceOmegaL(om)
		cpt := 4 * om * math.Pow(math.Cosh(math.Acosh((1-om)/om)/3), 3)
		if math.Abs(crit/cpt-1) > 1e-12 {
			t.Errorf("Ωm=%v: bounce at Ω_Λ = %.15g, Carroll et al. %.15g", om, crit, cpt)
		}
		p := Params{H0: 70, OmegaM: om, FixOmegaL: true, W0: -1}
		p.OmegaL = crit * (1 + 1e-9)
		if _, err := New(p); err == nil || !strings.Contains(err.Error(), "no big bang") {
			t.Errorf("Ωm=%v Ω_Λ just above the bounce limit: error %v", om, err)
		}
		p.OmegaL = crit * (1 - 1e-9)
		if _, err := New(p); err == nil || !strings.Contains(err.Error(), "loiters") {
			t.Errorf("Ωm=%v Ω_Λ just below the bounce limit: error %v", om, err)
		}
		p.OmegaL = crit * (1 - 1e-3)
		if _, err := New(p); err != nil {
			t.Errorf("Ωm=%v Ω_Λ 0.1%% below the bounce limit: %v", om, err)
		}
	}
}

// TestLoitering checks a model 0.1% below the bounce limit, where (1+z)/E
// has a sharp spike at the loitering redshift: the direct integral against
// a brute-force composite Gauss–Legendre sum (gonum, 2·10^5 panels), and the
// table against the direct integral within its stated bounds.
func TestLoitering(t *testing.T) {
	m, err := New(Params{H0: 70, OmegaM: 0.3, OmegaL: bounceOmegaL(0.3) * (1 - 1e-3), FixOmegaL: true, W0: -1})
	if err != nil {
		t.Fatal(err)
	}
	y := math.Log1p(5)
	const panels = 200000
	var ref float64
	for i := 0; i < panels; i++ {
		ref += quad.Fixed(m.chiPrime, y*float64(i)/panels, y*float64(i+1)/panels, 5, nil, 0)
	}
	if got := m.ComovingDistance(5) / m.HubbleDistance(); relDiff(got, ref) > 1e-10 {
		t.Errorf("loitering D_C(5)/D_H = %.15g, brute force %.15g", got, ref)
	}
	z := randomRedshifts(2000, 13)
	d := make([]float64, len(z))
	if err := m.ComovingDistancesMpch(d, z); err != nil {
		t.Fatal(err)
	}
	for i, zi := range z {
		want := m.ComovingDistance(zi) * m.LittleH()
		if math.Abs(d[i]-want) > 1e-13*mpchPerDH || relDiff(d[i], want) > 1e-11 {
			t.Fatalf("loitering model z=%v: table %.17g, direct %.17g", zi, d[i], want)
		}
	}
	t.Logf("loitering model: table step 2^%g, midpoint error %.2g D_H", math.Log2(m.table().h), m.table().midErr)
}
